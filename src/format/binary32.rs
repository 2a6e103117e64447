//! IEEE 754-2019 binary32: 8 exponent bits, 23 stored significand bits.

use super::{Format, Layout};

/// IEEE 754 binary32 (`float` in C, `f32` in Rust).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Binary32;

impl Format for Binary32 {
    fn name(&self) -> &'static str {
        "f32"
    }
    fn long_name(&self) -> &'static str {
        "IEEE 754 binary32"
    }
    fn layout(&self) -> Layout {
        Layout::new(8, 23)
    }
}
