//! IEEE 754-2019 binary16: 5 exponent bits, 10 stored significand bits.

use super::{Format, Layout};

/// IEEE 754 binary16 (`_Float16` in C, `half::f16` in Rust).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Binary16;

impl Format for Binary16 {
    fn name(&self) -> &'static str {
        "f16"
    }
    fn long_name(&self) -> &'static str {
        "IEEE 754 binary16"
    }
    fn layout(&self) -> Layout {
        Layout::new(5, 10)
    }
}
