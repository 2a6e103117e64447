//! Dense sweep: K evenly spaced significands in every binade (the subnormals count as one),
//! generated in bit order while they are measured, never listed.

use super::{FormatBits, InputRange, Inputs};
use crate::format::Format;

/// The lattice of a dense sweep: K evenly spaced trailing significands (first and last
/// included) of every binade of both signs, and each sign's all-ones exponent pattern, clipped
/// to a range. A few words whatever K is; its inputs come out lazily in increasing bit order.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Lattice {
    sign: u32,
    shift: u32,
    fields: u32,
    span: u64,
    k: u64,
    /// The range's patterns, as runs.
    clip: Vec<(u32, u32)>,
}

impl Lattice {
    /// The lattice of `per_binade` significands per binade (at most the binade's size: larger
    /// values take every significand) inside `range`.
    pub fn new(format: &dyn Format, range: &InputRange, per_binade: u32) -> Self {
        let masks = FormatBits::of(format);
        let span = masks.significand as u64;
        Lattice {
            sign: masks.sign,
            shift: format.precision() - 1,
            fields: masks.exponent >> (format.precision() - 1),
            span,
            k: (per_binade.max(2) as u64).min(span + 1),
            clip: Inputs::of_range(format, range).runs().to_vec(),
        }
    }

    fn inside(&self, bits: u32) -> bool {
        self.clip.iter().any(|&(a, b)| a <= bits && bits <= b)
    }

    /// The lattice's inputs in increasing bit order (binades outside the range are skipped
    /// whole).
    pub fn points(&self) -> impl Iterator<Item = u32> + Send + '_ {
        let top_field = self.fields << self.shift;
        [0, self.sign]
            .into_iter()
            .flat_map(move |s| {
                (0..self.fields)
                    .flat_map(move |field| {
                        let base = s | (field << self.shift);
                        let top = base | self.span as u32;
                        let hit = self.clip.iter().any(|&(a, b)| a <= top && base <= b);
                        let k = if hit { self.k } else { 0 };
                        // Rounded to nearest so both ends of the binade are always included.
                        (0..k).map(move |j| {
                            base | ((j * self.span + (self.k - 1) / 2) / (self.k - 1)) as u32
                        })
                    })
                    .chain(std::iter::once(s | top_field))
            })
            .filter(move |&b| self.inside(b))
    }
}

/// The range's own ends, which a dense sweep measures beside its lattice.
pub fn range_ends(format: &dyn Format, range: &InputRange) -> Vec<u32> {
    let (lo, hi) = range.ordinals(format);
    let mut out = vec![format.from_ordinal(lo), format.from_ordinal(hi)];
    out.retain(|&b| range.contains(format, b));
    out
}

/// The dense sweep listed (unordered): the lattice and the range's ends. The definition the
/// lazy [`Lattice`] is tested against; checks never list a sweep.
#[cfg(test)]
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
