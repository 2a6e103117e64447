//! Dense sweep: K evenly spaced significands in every binade (the subnormals count as one).

use super::{FormatBits, InputRange};
use crate::format::Format;

/// K evenly spaced trailing significands (first and last included) of every binade of both
/// signs, clipped to the range, plus the range's own ends and any infinity it holds.
pub fn dense(format: &dyn Format, range: &InputRange, per_binade: u32) -> Vec<u32> {
    let masks = FormatBits::of(format);
    let fields = masks.exponent >> (format.precision() - 1);
    let span = masks.significand as u64;
    let k = (per_binade.max(2) as u64).min(span + 1);
    let mut out = Vec::new();
    for sign in [0, masks.sign] {
        for field in 0..fields {
            let base = sign | (field << (format.precision() - 1));
            for j in 0..k {
                // Rounded to nearest so both ends of the binade are always included.
                let significand = (j * span + (k - 1) / 2) / (k - 1);
                out.push(base | significand as u32);
            }
        }
        out.push(sign | masks.exponent);
    }
    let (lo, hi) = range.ordinals(format);
    out.push(format.from_ordinal(lo));
    out.push(format.from_ordinal(hi));
    out.retain(|&b| range.contains(format, b));
    out
}
