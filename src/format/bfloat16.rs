//! bfloat16: the upper half of binary32, 8 exponent bits and 7 stored significand bits, with
//! IEEE-style subnormals, infinities and NaNs.

use super::{Format, Layout};

/// The bfloat16 ("brain float") format.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Bfloat16;

impl Format for Bfloat16 {
    fn name(&self) -> &'static str {
        "bf16"
    }
    fn long_name(&self) -> &'static str {
        "bfloat16"
    }
    fn layout(&self) -> Layout {
        Layout::new(8, 7)
    }
}
