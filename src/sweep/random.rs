//! Random sweep: seeded, stratified by blocks of 2^16 patterns, uniform over bit patterns or
//! over values, generated block by block in bit order while it is measured, never listed.

use super::{InputRange, Inputs};
use crate::format::Format;
use rug::Integer;

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

/// Patterns per stratum (a power of two): each block of 2^16 consecutive patterns draws its own
/// share of the sample from its own generator, so any block can be generated alone, in bit
/// order, whatever the sharding.
const BLOCK_LOG2: u32 = 16;

/// The strata of a random sweep: exactly the sample's definition, in a few words.
///
/// The range's patterns (NaNs left out) are cut into strata: aligned blocks of 2^16 patterns,
/// and, by values, also at every binade, so a stratum's patterns are equally spaced. Each
/// stratum has a weight (by bits, its number of patterns; by values, its length on the real
/// line) and gets the share `⌊N·W≤/W⌋ − ⌊N·W</W⌋` of the N points (W< and W≤ the weights of the
/// strata before it and up to it, W the total, in exact integers), at most its number of
/// patterns. Its share is drawn uniformly without replacement by SplitMix64 seeded with the
/// seed and the stratum's first pattern. By bits the sample holds exactly N distinct points;
/// by values a stratum whose share exceeds its patterns takes them all, and the sample holds
/// fewer.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Strata {
    seed: u64,
    points: u64,
    /// The range's patterns without NaNs, as runs.
    domain: Vec<(u32, u32)>,
    /// log2 of the largest stratum.
    cut: u32,
    by_values: bool,
    shift: u32,
    fields: u32,
    total: Integer,
}

impl Strata {
    /// The strata of `points` samples inside `range` (refused above the range's patterns).
    pub fn new(
        format: &dyn Format,
        range: &InputRange,
        points: u64,
        seed: u64,
        mode: SampleMode,
    ) -> Result<Self, String> {
        let (lo, hi) = range.ordinals(format);
        let finite_ends = format.to_f64(format.from_ordinal(lo)).is_finite()
            && format.to_f64(format.from_ordinal(hi)).is_finite();
        let by_values = mode == SampleMode::Values && finite_ends;
        let mut plain = range.clone();
        plain.with_nans = false;
        let shift = format.precision() - 1;
        let mut strata = Strata {
            seed,
            points,
            domain: Inputs::of_range(format, &plain).runs().to_vec(),
            cut: if by_values {
                BLOCK_LOG2.min(shift)
            } else {
                BLOCK_LOG2
            },
            by_values,
            shift,
            fields: super::FormatBits::of(format).exponent >> shift,
            total: Integer::new(),
        };
        let patterns = plain.pattern_count(format);
        if points > patterns {
            return Err(format!(
                "a random sample of {points} points is more than the {patterns} patterns of the range (NaNs are never drawn); an exhaustive sweep measures them all"
            ));
        }
        strata.total = strata
            .cells()
            .fold(Integer::new(), |w, (lo, hi)| w + strata.weight(lo, hi));
        Ok(strata)
    }

    /// The strata in bit order, as inclusive runs.
    fn cells(&self) -> impl Iterator<Item = (u32, u32)> + '_ {
        let size = 1u64 << self.cut;
        self.domain.iter().flat_map(move |&(a, b)| {
            let mut next = Some(a as u64);
            std::iter::from_fn(move || {
                let start = next?;
                let end = (start | (size - 1)).min(b as u64);
                next = (end < b as u64).then_some(end + 1);
                Some((start as u32, end as u32))
            })
        })
    }

    /// A stratum's weight: its patterns, by values each counted by its spacing (in units of
    /// the subnormals' spacing).
    fn weight(&self, lo: u32, hi: u32) -> Integer {
        let count = Integer::from(hi - lo) + 1u32;
        if !self.by_values {
            return count;
        }
        let field = (lo >> self.shift) & self.fields;
        count << (field.max(1) - 1)
    }

    /// Each stratum with its share of the points, in bit order.
    fn shares(&self) -> impl Iterator<Item = (u32, u32, u64)> + '_ {
        let mut before = Integer::new();
        let mut given = 0u64;
        self.cells().map(move |(lo, hi)| {
            before += self.weight(lo, hi);
            let upto = if self.total == 0 {
                0
            } else {
                (Integer::from(&before * self.points) / &self.total)
                    .to_u64()
                    .unwrap_or(u64::MAX)
            };
            let share = (upto - given).min(u64::from(hi - lo) + 1);
            given = upto;
            (lo, hi, share)
        })
    }

    /// Number of points (N by bits; by values, fewer when a stratum was full).
    pub fn count(&self) -> u64 {
        self.shares().map(|(_, _, n)| n).sum()
    }

    /// The sample as runs of consecutive patterns, in increasing bit order.
    pub fn runs(&self) -> impl Iterator<Item = (u32, u32)> + Send + '_ {
        StrataRuns {
            shares: Box::new(self.shares().filter(|s| s.2 > 0)),
            pending: Vec::new(),
            words: Vec::new(),
            seed: self.seed,
        }
    }
}

/// The runs of [`Strata::runs`], one stratum drawn at a time.
struct StrataRuns<'a> {
    shares: Box<dyn Iterator<Item = (u32, u32, u64)> + Send + 'a>,
    /// The current stratum's runs, last first.
    pending: Vec<(u32, u32)>,
    /// The current stratum's chosen patterns, a bit each.
    words: Vec<u64>,
    seed: u64,
}

impl Iterator for StrataRuns<'_> {
    type Item = (u32, u32);
    fn next(&mut self) -> Option<(u32, u32)> {
        loop {
            if let Some(run) = self.pending.pop() {
                return Some(run);
            }
            let (lo, hi, share) = self.shares.next()?;
            let count = u64::from(hi - lo) + 1;
            if share == count {
                return Some((lo, hi));
            }
            // Draw the smaller of the share and its complement, without replacement.
            let invert = 2 * share > count;
            let want = if invert { count - share } else { share };
            let mut rng = Rng::new(self.seed ^ u64::from(lo).wrapping_mul(0x9e37_79b9_7f4a_7c15));
            self.words.clear();
            self.words.resize(count.div_ceil(64) as usize, 0);
            let mut got = 0;
            while got < want {
                let i = rng.below(count) as usize;
                let bit = 1u64 << (i % 64);
                if self.words[i / 64] & bit == 0 {
                    self.words[i / 64] |= bit;
                    got += 1;
                }
            }
            let mut runs: Vec<(u32, u32)> = Vec::new();
            for (w, &word) in self.words.iter().enumerate() {
                let mut chosen = if invert { !word } else { word };
                let valid = count - 64 * w as u64;
                if valid < 64 {
                    chosen &= (1u64 << valid) - 1;
                }
                while chosen != 0 {
                    let i = chosen.trailing_zeros();
                    chosen &= chosen - 1;
                    let bits = lo + (64 * w as u32 + i);
                    match runs.last_mut() {
                        Some(r) if r.1 + 1 == bits => r.1 = bits,
                        _ => runs.push((bits, bits)),
                    }
                }
            }
            runs.reverse();
            self.pending = runs;
        }
    }
}
