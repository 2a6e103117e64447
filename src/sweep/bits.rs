//! Field masks of a format, derived from its public special values.

use crate::format::Format;

/// Masks of a format's sign, exponent and significand fields.
#[derive(Clone, Copy, Debug)]
pub struct FormatBits {
    /// The sign bit.
    pub sign: u32,
    /// The exponent field (all ones: infinity's pattern).
    pub exponent: u32,
    /// The trailing significand field.
    pub significand: u32,
    /// The quiet bit of a NaN (top significand bit).
    pub quiet: u32,
}

impl FormatBits {
    /// The masks of `format`.
    pub fn of(format: &dyn Format) -> Self {
        let significand = (1u32 << (format.precision() - 1)) - 1;
        let sign = 1u32 << (format.width() - 1);
        // From the widths, not from +∞'s pattern: E4M3 has no infinity.
        let exponent = (sign - 1) & !significand;
        FormatBits {
            sign,
            exponent,
            significand,
            quiet: 1 << (format.precision() - 2),
        }
    }
}
