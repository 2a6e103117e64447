//! Random sweep: seeded, uniform over bit patterns or over values.

use super::InputRange;
use crate::format::{Class, Format};
use crate::reference::round_float;
use rug::Float;

/// How random inputs are drawn.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SampleMode {
    /// Uniform over the range's ordinals: every representable value equally likely.
    Bits,
    /// Uniform over the real interval, rounded to nearest (favours large magnitudes).
    Values,
}

/// SplitMix64 (Steele, Lea, Flood, "Fast splittable pseudorandom number generators", OOPSLA
/// 2014): tiny, seedable, and the same sequence on every platform.
#[derive(Clone, Debug)]
pub struct Rng(u64);

impl Rng {
    /// A generator from a seed.
    pub fn new(seed: u64) -> Self {
        Rng(seed)
    }
    /// Next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    /// Uniform integer in [0, n) (n > 0), by rejection so there is no modulo bias.
    pub fn below(&mut self, n: u64) -> u64 {
        let zone = u64::MAX - u64::MAX % n;
        loop {
            let r = self.next_u64();
            if r < zone {
                return r % n;
            }
        }
    }
    /// Uniform binary64 in [0, 1) with 53 random bits.
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }
}

/// `count` seeded samples inside the range.
pub fn random(
    format: &dyn Format,
    range: &InputRange,
    count: u64,
    seed: u64,
    mode: SampleMode,
) -> Vec<u32> {
    let mut rng = Rng::new(seed);
    let (lo, hi) = range.ordinals(format);
    let (lo_v, hi_v) = (
        format.to_f64(format.from_ordinal(lo)),
        format.to_f64(format.from_ordinal(hi)),
    );
    let by_values = mode == SampleMode::Values && lo_v.is_finite() && hi_v.is_finite();
    (0..count)
        .map(|_| {
            if by_values {
                // lo + u·(hi − lo) in 128-bit arithmetic, rounded once into the format.
                let t = Float::with_val(128, rng.unit());
                let x = Float::with_val(128, hi_v - lo_v) * t + lo_v;
                let bits = round_float(&x, format);
                if format.classify(bits) == Class::Infinite {
                    format.from_ordinal(hi)
                } else {
                    bits
                }
            } else {
                format.from_ordinal(lo + rng.below((hi - lo + 1) as u64) as i64)
            }
        })
        .filter(|&b| range.contains(format, b))
        .collect()
}
