//! Edge probes: the format's special values.

use super::FormatBits;
use crate::format::Format;

/// ±0, ±smallest and ±largest subnormal, ±smallest normal, ±1, ±max, ±∞, and quiet and
/// signalling NaNs of both signs with small and large payloads.
pub fn format_specials(format: &dyn Format) -> Vec<u32> {
    let m = FormatBits::of(format);
    let one = format.from_f64_exact(1.0).expect("1 is representable");
    let magnitudes = [
        0,
        1,
        m.significand,
        m.significand + 1,
        one,
        format.max_finite(false),
        m.exponent,
        m.exponent | m.quiet,
        m.exponent | m.quiet | 1,
        m.exponent | m.significand,
        m.exponent | 1,
        m.exponent | (m.quiet - 1),
    ];
    magnitudes.iter().flat_map(|&b| [b, b | m.sign]).collect()
}
