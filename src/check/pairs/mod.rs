//! `check` of a gated kernel y = act(a)·b over pairs (a, b): exhaustive over every pair for
//! the 16-bit formats (all b for each a of the sweep, a chunk of 2^16 pairs at a time), and
//! for binary32 a bounded sample (edge × edge values, K pairs in every cell of the sign ×
//! binade grid, N random pairs). The kernel is called through the two-array ABI
//! `void NAME(const T *a, const T *b, T *y, size_t n)`; references come from
//! [`PairEvaluator`], folded on the rayon pool into [`PairAcc`]s joined in a fixed order.

pub mod acc;
pub mod cells;
pub mod state;

pub use acc::{regions, PairAcc, Region, WorstPair};
pub use state::{PairShardState, PairSweepId, PAIR_STATE_VERSION};

use super::kernel::KernelUnderTest;
use crate::format::Format;
use crate::reference::{PairEvaluator, Prepared};
use rayon::prelude::*;

/// Which pairs are measured.
#[derive(Clone, Debug, PartialEq)]
pub enum PairSweep {
    /// Every b (2^16 patterns) for each a in the list (all 2^16 patterns for a full run).
    Exhaustive {
        /// The a patterns, in bit order.
        a: Vec<u32>,
    },
    /// A bounded sample.
    Sampled {
        /// Pairs per (cell of a, cell of b).
        per_cell: u32,
        /// Edge values of the format against each other.
        edge: bool,
        /// Random pairs of bit patterns.
        random: u64,
        /// Seed of the cells' and the random pairs' draws.
        seed: u64,
    },
}

impl PairSweep {
    /// Number of pairs it measures.
    pub fn count(&self, format: &dyn Format) -> u64 {
        match self {
            PairSweep::Exhaustive { a } => a.len() as u64 * format.pattern_count(),
            PairSweep::Sampled {
                per_cell,
                edge,
                random,
                ..
            } => {
                let axis = cells::axis(format) as u64;
                let e = if *edge { edges(format).len() as u64 } else { 0 };
                axis * axis * *per_cell as u64 + e * e + random
            }
        }
    }
    /// "exhaustive" or "sampled", as reports name the coverage.
    pub fn kind(&self) -> &'static str {
        match self {
            PairSweep::Exhaustive { .. } => "exhaustive",
            PairSweep::Sampled { .. } => "sampled",
        }
    }
}

/// A format's edge values: ±0, the smallest and largest subnormal, the smallest normal, 1, the
/// largest finite value, ±∞ (IEEE 754-2019 §3.4 encodings) and the quiet NaN.
pub fn edges(format: &dyn Format) -> Vec<u32> {
    let frac = format.precision() - 1;
    let sign = 1u32 << (format.width() - 1);
    let one = format.from_f64_exact(1.0).expect("1 is representable");
    let mut v = Vec::new();
    for s in [0, sign] {
        for m in [
            0,
            1,
            (1 << frac) - 1,
            1 << frac,
            one,
            format.max_finite(false),
            format.infinity(false),
        ] {
            v.push(s | m);
        }
    }
    v.push(format.quiet_nan());
    v
}

/// splitmix64 (Steele, Lea, Flood 2014): a reproducible stream for the sampled pairs.
fn mix(seed: u64, i: u64) -> u64 {
    let mut z = seed
        .wrapping_add(i.wrapping_mul(0x9e37_79b9_7f4a_7c15))
        .wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// Pairs per kernel call and per reference batch.
const CHUNK: usize = 1 << 16;

/// The pairs of a sweep, chunk by chunk (never all at once): `visit(as, bs)`.
fn for_each_chunk(format: &dyn Format, sweep: &PairSweep, mut visit: impl FnMut(&[u32], &[u32])) {
    match sweep {
        PairSweep::Exhaustive { a } => {
            let bs: Vec<u32> = (0..format.pattern_count() as u32).collect();
            for &x in a {
                for part in bs.chunks(CHUNK) {
                    visit(&vec![x; part.len()], part);
                }
            }
        }
        PairSweep::Sampled {
            per_cell,
            edge,
            random,
            seed,
        } => {
            let (mut av, mut bv) = (Vec::with_capacity(CHUNK), Vec::with_capacity(CHUNK));
            let mut push = |a: u32, b: u32, av: &mut Vec<u32>, bv: &mut Vec<u32>| {
                av.push(a);
                bv.push(b);
                if av.len() == CHUNK {
                    visit(av, bv);
                    av.clear();
                    bv.clear();
                }
            };
            if *edge {
                let e = edges(format);
                for &x in &e {
                    for &y in &e {
                        push(x, y, &mut av, &mut bv);
                    }
                }
            }
            let axis = cells::axis(format);
            let mut draw = 0u64;
            for i in 0..axis {
                for j in 0..axis {
                    for _ in 0..*per_cell {
                        let x = cells::pattern_in(format, i, mix(*seed, draw));
                        let y = cells::pattern_in(format, j, mix(*seed, draw + 1));
                        draw += 2;
                        push(x, y, &mut av, &mut bv);
                    }
                }
            }
            let mask = (format.pattern_count() - 1) as u32;
            for k in 0..*random {
                let r = mix(seed ^ 0x5eed, k);
                push(r as u32 & mask, (r >> 32) as u32 & mask, &mut av, &mut bv);
            }
            if !av.is_empty() {
                visit(&av, &bv);
            }
        }
    }
}

/// What a pair sweep found.
pub struct PairOutcome {
    /// Every figure.
    pub acc: PairAcc,
    /// The first pairs the kernel crashed or hung on (a, b, what), at most a few.
    pub crashes: Vec<(u32, u32, String)>,
    /// A reference that could not be computed (the Ziv loop gave up), if any.
    pub reference_error: Option<String>,
}

/// Most crash records kept (their count is exact in [`PairAcc::crashed`]).
const KEPT_CRASHES: usize = 8;

/// Runs the sweep: kernel calls chunk by chunk, references on the rayon pool.
pub fn run_pairs(
    kernel: &mut dyn KernelUnderTest,
    evaluator: &PairEvaluator,
    sweep: &PairSweep,
    mut progress: impl FnMut(u64),
) -> PairOutcome {
    let format = evaluator.format();
    let reuse_a = matches!(sweep, PairSweep::Exhaustive { .. });
    let mut total = PairAcc::new(format);
    let mut crashes = Vec::new();
    let mut reference_error = None;
    for_each_chunk(format, sweep, |av, bv| {
        let out = kernel.run(av, Some(bv));
        for c in out
            .crashes
            .iter()
            .take(KEPT_CRASHES.saturating_sub(crashes.len()))
        {
            crashes.push((av[c.index], bv[c.index], c.signal.clone()));
        }
        // An exhaustive chunk holds one a for all its b: act(a) is enclosed once per chunk
        // and shared by every task.
        let prepared: Option<Prepared> =
            (reuse_a && !av.is_empty()).then(|| evaluator.prepare(av[0]));
        let joined = (0..av.len())
            .collect::<Vec<_>>()
            .par_chunks(2048)
            .try_fold(
                || PairAcc::new(format),
                |mut acc, idx| {
                    for &i in idx {
                        let r = match &prepared {
                            Some(p) if p.a() == av[i] => evaluator.reference_prepared(p, bv[i]),
                            _ => evaluator.reference(av[i], bv[i]),
                        };
                        let r = r.map_err(|e| e.to_string())?;
                        acc.add(format, av[i], bv[i], out.outputs[i], &r);
                    }
                    Ok::<PairAcc, String>(acc)
                },
            )
            .try_reduce(
                || PairAcc::new(format),
                |mut x, y| {
                    x.join(&y);
                    Ok(x)
                },
            );
        match joined {
            Ok(acc) => total.join(&acc),
            Err(e) => {
                reference_error.get_or_insert(e);
            }
        }
        progress(av.len() as u64);
    });
    PairOutcome {
        acc: total,
        crashes,
        reference_error,
    }
}

#[cfg(test)]
mod tests;
