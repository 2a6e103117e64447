//! Which inputs a check evaluates: exhaustive, dense, edge and random sweeps over a range.
//!
//! A [`Plan`] separates the inputs whose errors are measured from the edge probes (format
//! special values), which feed the special-value rules and the non-finite runs but never the
//! accuracy figures.

mod bits;
mod dense;
mod edge;
mod inputs;
mod interesting;
mod random;
mod range;

pub use bits::FormatBits;
pub use dense::Lattice;
pub use edge::format_specials;
pub use inputs::{at_sorted, Inputs, RunIter};
pub use interesting::{
    derivative_peak, find_threshold, interesting_points, reference_thresholds, Interesting,
    Threshold, ThresholdKind,
};
pub use random::{Rng, SampleMode, Strata};
pub use range::InputRange;

use crate::format::Format;
use serde::Serialize;

/// The sweep kinds of `--sweep`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SweepKind {
    /// Every bit pattern inside the range.
    Exhaustive,
    /// K evenly spaced significands per binade, plus ±M ulps around interesting points.
    Dense,
    /// Format special values and ±M ulps around interesting points.
    Edge,
    /// Seeded random samples.
    Random,
    /// The inputs of a recorded set (`check --inputs`): planned by the set, not by the sweep.
    #[value(skip)]
    Recorded,
}

/// Everything that decides a sweep's inputs.
#[derive(Clone, Debug)]
pub struct SweepSpec {
    /// Kinds combined (dense + edge is the f32 default).
    pub kinds: Vec<SweepKind>,
    /// Inputs considered.
    pub range: InputRange,
    /// Significands per binade for dense sweeps.
    pub per_binade: u32,
    /// Samples of a random sweep.
    pub random_points: u64,
    /// Neighbours on each side of an interesting point.
    pub neighbours: u32,
    /// Seed of random sweeps and gradient factors.
    pub seed: u64,
    /// Random sampling over bit patterns or over values.
    pub mode: SampleMode,
}

/// Whether a verdict covers every input of the range or a sample.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Coverage {
    /// Every bit pattern of the range was evaluated.
    Exhaustive,
    /// A sample of the range was evaluated.
    Sampled,
}

/// The inputs of one check.
#[derive(Clone, Debug)]
pub struct Plan {
    /// Measured inputs, in increasing bit order, without duplicates.
    pub measured: Inputs,
    /// Edge probes (special values), not counted in accuracy.
    pub probes: Vec<u32>,
    /// Exhaustive or sampled.
    pub coverage: Coverage,
    /// The function's interesting points used by the sweep.
    pub interesting: Vec<Interesting>,
}

/// Largest exhaustive sweep: every pattern of the widest format (inputs are streamed in
/// chunks, so memory does not grow with the sweep).
pub const MAX_EXHAUSTIVE: u64 = 1 << 32;

/// Builds the inputs of a sweep; `interesting` comes from [`interesting_points`].
pub fn plan(
    format: &'static dyn Format,
    spec: &SweepSpec,
    interesting: Vec<Interesting>,
) -> Result<Plan, String> {
    let mut measured = Vec::new();
    let mut whole = Inputs::default();
    let (mut lattice, mut strata) = (None, None);
    let mut probes = Vec::new();
    let mut coverage = Coverage::Sampled;
    for kind in &spec.kinds {
        match kind {
            SweepKind::Exhaustive => {
                let count = spec.range.pattern_count(format);
                if count > MAX_EXHAUSTIVE {
                    return Err(format!(
                        "an exhaustive {} sweep of {count} patterns is too large; narrow it with --range (at most {MAX_EXHAUSTIVE} patterns)",
                        format.name()
                    ));
                }
                whole = Inputs::of_range(format, &spec.range);
                coverage = Coverage::Exhaustive;
            }
            SweepKind::Dense => {
                lattice = Some(Lattice::new(format, &spec.range, spec.per_binade));
                measured.extend(dense::range_ends(format, &spec.range));
                measured.extend(neighbourhoods(format, spec, &interesting));
            }
            SweepKind::Edge => {
                probes.extend(format_specials(format));
                measured.extend(neighbourhoods(format, spec, &interesting));
            }
            SweepKind::Random => {
                strata = Some(Strata::new(
                    format,
                    &spec.range,
                    spec.random_points,
                    spec.seed,
                    spec.mode,
                )?)
            }
            SweepKind::Recorded => {}
        }
    }
    // An exhaustive sweep holds every sample already.
    if coverage == Coverage::Exhaustive {
        (lattice, strata) = (None, None);
    }
    let measured = whole
        .union(&Inputs::from_list(measured))
        .with_samples(lattice, strata);
    probes.sort_unstable();
    probes.dedup();
    Ok(Plan {
        measured,
        probes,
        coverage,
        interesting,
    })
}

/// Every input within ±M representable steps of each interesting point, inside the range.
fn neighbourhoods(
    format: &'static dyn Format,
    spec: &SweepSpec,
    interesting: &[Interesting],
) -> Vec<u32> {
    let mut out = Vec::new();
    for point in interesting {
        let centre = format.ordinal(point.input);
        let m = spec.neighbours as i64;
        let (lo, hi) = spec.range.ordinals(format);
        for o in (centre - m).max(lo)..=(centre + m).min(hi) {
            out.push(format.from_ordinal(o));
            if o == 0 {
                // Both zeros are distinct inputs with the same ordinal.
                out.push(FormatBits::of(format).sign);
            }
        }
    }
    out.retain(|&b| spec.range.contains(format, b));
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::{Binary16, Binary32};

    #[test]
    fn range_is_inclusive_low_exclusive_high() {
        let f = &Binary16;
        let r = InputRange::parse(f, "1,2").unwrap();
        // binary16 has 2^10 values in [1, 2) (10-bit trailing significand, IEEE 754-2019 §3.6).
        assert_eq!(r.pattern_count(f), 1024);
        assert!(r.contains(f, 0x3c00) && !r.contains(f, 0x4000) && r.contains(f, 0x3fff));
        // Zero inside the range counts both zeros.
        let r = InputRange::parse(f, "-1,1").unwrap();
        assert_eq!(r.pattern_count(f), 2 * 15 * 1024 + 1);
        assert!(InputRange::parse(f, "2,1").is_err());
        assert!(InputRange::parse(f, "0,70000").is_err());
        assert!(InputRange::parse(f, "0.0001,0.00010001").is_err());
        assert!(InputRange::parse(f, "x,1").is_err());
        // All f16 patterns: 65536, NaNs included.
        assert_eq!(InputRange::all(f).pattern_count(f), 65536);
        assert_eq!(InputRange::all(f).patterns(f).len(), 65536);
    }

    #[test]
    fn dense_sweep_covers_every_binade_with_k_points() {
        let f = &Binary32;
        let points = dense::dense(f, &InputRange::all(f), 4);
        // 2 signs × 255 exponent fields (254 normal binades + subnormals) × 4, + ±inf, and the
        // range's two ends (±inf again, deduplicated by the caller).
        assert_eq!(points.len(), 2 * 255 * 4 + 2 + 2);
        assert!(points.contains(&0x3f80_0000) && points.contains(&0x3fff_ffff));
    }

    /// The lazy lattice (joined with the range's ends) is exactly the listed dense sweep, for
    /// every format, ranges with and without zero, infinities and NaNs, and K up to past the
    /// binade's size.
    #[test]
    fn lazy_dense_equals_the_listed_sweep() {
        for f in crate::format::ALL.iter() {
            for text in [
                None,
                Some("1,2"),
                Some("-3,0.5"),
                Some("-inf,-0.25"),
                Some("0,inf"),
            ] {
                let Ok(range) = text.map_or(Ok(InputRange::all(*f)), |t| InputRange::parse(*f, t))
                else {
                    continue;
                };
                for k in [2, 3, 7, 256, 5000] {
                    let mut want = dense::dense(*f, &range, k);
                    want.sort_unstable();
                    want.dedup();
                    let got = Inputs::from_list(dense::range_ends(*f, &range))
                        .with_samples(Some(Lattice::new(*f, &range, k)), None);
                    assert_eq!(got.len(), want.len() as u64, "{} {text:?} {k}", f.name());
                    assert!(
                        got.iter().eq(want.iter().copied()),
                        "{} {text:?} {k}",
                        f.name()
                    );
                }
            }
        }
    }

    /// A lazy set answers as its listing does: length, slices, positions, membership,
    /// finite inputs, and the union with a list.
    #[test]
    fn lazy_sets_answer_as_their_listing() {
        let f = &Binary32;
        let range = InputRange::parse(f, "-8,8").unwrap();
        let strata = Strata::new(f, &range, 50_000, 7, SampleMode::Bits).unwrap();
        let extra = vec![0x3f80_0000, 0x3f80_0001, 0x7f80_0000, 0x0000_0000];
        let lazy = Inputs::from_list(extra.clone())
            .with_samples(Some(Lattice::new(f, &range, 300)), Some(strata));
        let listed: Vec<u32> = lazy.iter().collect();
        assert!(listed.windows(2).all(|w| w[0] < w[1]));
        let plain = Inputs::from_list(listed.clone());
        assert_eq!(lazy.len(), plain.len());
        let n = lazy.len();
        for (from, to) in [(0, n), (0, n / 3), (n / 3, 2 * n / 3), (n - 5, n), (n, n)] {
            let part = lazy.slice(from, to);
            assert_eq!(part.len(), to - from);
            assert!(part.iter().eq(plain.slice(from, to).iter()));
            let probes = Inputs::from_list(vec![1, 0x4000_0000, 0xc000_0000]);
            assert!(part
                .union(&probes)
                .iter()
                .eq(plain.slice(from, to).union(&probes).iter()));
        }
        for i in [0, 1, n / 2, n - 1, n] {
            assert_eq!(lazy.nth(i), plain.nth(i));
        }
        for b in [0x3f80_0000, 0x3f80_0002, listed[1234], listed[1234] + 1] {
            assert_eq!(lazy.contains(b), plain.contains(b));
        }
        assert_eq!(lazy.finite(f), plain.finite(f));
    }

    #[test]
    fn specials_hold_signalling_nans_with_payloads() {
        let f = &Binary16;
        let s = format_specials(f);
        assert_eq!(s.len(), 24);
        // IEEE 754-2019 §6.2.1: the quiet bit is the first trailing significand bit.
        assert!(s.contains(&0x7c01) && s.contains(&0xfc01) && s.contains(&0x7e01));
        assert!(s.contains(&0x0001) && s.contains(&0x03ff) && s.contains(&0x0400));
    }

    #[test]
    fn threshold_search_is_exact_and_confirms_neighbours() {
        let f = &Binary16;
        let (first, confirmed) = find_threshold(f, true, 8, |x| x >= 0x4a00);
        assert_eq!((first, confirmed), (Some(0x4a00), true));
        // A hole within 8 steps after the bisection's answer moves the threshold past it.
        let (first, _) = find_threshold(f, true, 8, |x| x >= 0x4a00 && x != 0x4a05);
        assert_eq!(first, Some(0x4a06));
        let (first, _) = find_threshold(f, false, 8, |x| x >= 0xc000);
        assert_eq!(first, Some(0xc000));
        assert_eq!(find_threshold(f, true, 8, |_| false).0, None);
    }

    /// A random sample is exactly N distinct patterns of the range, set by its seed, the
    /// same however it is cut (each 2^16 block drawn alone), and by values weighted by the
    /// length on the real line.
    #[test]
    fn random_sweep_is_seeded_distinct_and_stratified() {
        let f = &Binary32;
        let r = InputRange::parse(f, "-4,4").unwrap();
        let sample = |n, seed, mode| {
            Inputs::default().with_samples(None, Some(Strata::new(f, &r, n, seed, mode).unwrap()))
        };
        let a = sample(100_000, 3, SampleMode::Bits);
        assert_eq!(a.len(), 100_000);
        assert_eq!(a.iter().count(), 100_000);
        assert!(a.iter().all(|b| r.contains(f, b)));
        assert!(a.iter().eq(sample(100_000, 3, SampleMode::Bits).iter()));
        assert!(!a.iter().eq(sample(100_000, 4, SampleMode::Bits).iter()));
        // Uniform over patterns: [0, 4) holds 129·2^23 binary32 patterns and [1, 4) 2·2^23 of
        // them (IEEE 754 binary32: 2^23 per binade, 127 binades and the subnormals below 1),
        // the same on the negative side: |x| ≥ 1 takes 4/258 of the sample, ≈ 1550.
        let big = a.iter().filter(|&b| f.to_f64(b).abs() >= 1.0).count();
        assert!((1400..1700).contains(&big), "{big}");
        let v = sample(100_000, 3, SampleMode::Values);
        assert!(v.iter().all(|b| (-4.0..4.0).contains(&f.to_f64(b))));
        // Uniform over values: about half the samples have |x| ≥ 2.
        let big = v.iter().filter(|&b| f.to_f64(b).abs() >= 2.0).count();
        assert!((48_000..52_000).contains(&big), "{big}");
        // Every pattern of a small range when N is its size; more is refused.
        let small = InputRange::parse(f, "1,1.0001").unwrap();
        let all = small.pattern_count(f);
        let whole = Strata::new(f, &small, all, 1, SampleMode::Bits).unwrap();
        let whole = Inputs::default().with_samples(None, Some(whole));
        assert!(whole.iter().eq(Inputs::of_range(f, &small).iter()));
        assert!(Strata::new(f, &small, all + 1, 1, SampleMode::Bits).is_err());
    }
}
