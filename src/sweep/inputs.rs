//! A sweep's measured inputs as sorted runs of consecutive bit patterns, iterated lazily: an
//! exhaustive sweep of up to 2³² patterns costs a few words, and a dense or random sample
//! costs its generator's few words ([`Lattice`], [`Strata`]), whatever its number of points.

use super::{InputRange, Lattice, Strata};
use crate::format::Format;

/// Sorted, distinct inputs: explicit runs `lo..=hi` (sorted, disjoint, non-adjacent) joined
/// with the lazily generated samples, if any.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Inputs {
    runs: Vec<(u32, u32)>,
    lazy: Option<Box<Lazy>>,
}

/// The generated part of a set and what was done to it.
#[derive(Clone, Debug, PartialEq, Eq)]
struct Lazy {
    lattice: Option<Lattice>,
    strata: Option<Strata>,
    /// Positions `from..to` (in bit order) kept of the explicit runs joined with the samples.
    window: Option<(u64, u64)>,
    /// Runs joined after the window.
    extra: Vec<(u32, u32)>,
    /// Number of inputs, counted once.
    len: u64,
}

/// A boxed iterator of runs in increasing bit order.
pub type RunIter<'a> = Box<dyn Iterator<Item = (u32, u32)> + Send + 'a>;

/// The union of sorted run iterators, joining runs that overlap or touch.
struct Union<'a> {
    sources: Vec<(Option<(u32, u32)>, RunIter<'a>)>,
}

impl<'a> Union<'a> {
    fn new(iters: Vec<RunIter<'a>>) -> Self {
        Union {
            sources: iters.into_iter().map(|mut it| (it.next(), it)).collect(),
        }
    }
}

impl Iterator for Union<'_> {
    type Item = (u32, u32);
    fn next(&mut self) -> Option<(u32, u32)> {
        let mut current: Option<(u32, u32)> = None;
        loop {
            let lowest = self
                .sources
                .iter()
                .enumerate()
                .filter_map(|(i, (head, _))| head.map(|h| (h.0, i)))
                .min();
            let Some((lo, i)) = lowest else {
                return current;
            };
            if let Some(c) = &mut current {
                if c.1.checked_add(1).is_some_and(|next| lo > next) {
                    return current;
                }
            }
            let (head, iter) = &mut self.sources[i];
            let run = head.take().expect("a head");
            *head = iter.next();
            match &mut current {
                None => current = Some(run),
                Some(c) => c.1 = c.1.max(run.1),
            }
        }
    }
}

/// The runs of positions `from..to` of a run iterator.
fn window<'a>(runs: RunIter<'a>, from: u64, to: u64) -> RunIter<'a> {
    let mut start = 0u64;
    Box::new(
        runs.map_while(move |(a, b)| {
            let n = (b - a) as u64 + 1;
            let here = start;
            start += n;
            (here < to).then_some((here, a, b))
        })
        .filter_map(move |(here, a, b)| {
            let n = (b - a) as u64 + 1;
            let (lo, hi) = (from.max(here), to.min(here + n));
            (lo < hi).then(|| (a + (lo - here) as u32, a + (hi - 1 - here) as u32))
        }),
    )
}

fn count(runs: impl Iterator<Item = (u32, u32)>) -> u64 {
    runs.map(|(a, b)| (b - a) as u64 + 1).sum()
}

impl Inputs {
    /// The inputs of a list (any order, duplicates allowed).
    pub fn from_list(mut list: Vec<u32>) -> Self {
        list.sort_unstable();
        list.dedup();
        let mut out = Inputs::default();
        for b in list {
            out.push_run(b, b);
        }
        out
    }

    /// Every pattern of a range (what [`InputRange::patterns`] lists), without listing them.
    pub fn of_range(format: &dyn Format, range: &InputRange) -> Self {
        let (lo, hi) = range.ordinals(format);
        let sign = super::FormatBits::of(format).sign;
        let mut runs = Vec::new();
        if hi >= 0 {
            runs.push((format.from_ordinal(lo.max(0)), format.from_ordinal(hi)));
        }
        if lo <= 0 {
            // Negative ordinals run backwards in bit order; −0 (ordinal 0) leads them.
            let top = if hi >= 0 {
                sign
            } else {
                format.from_ordinal(hi)
            };
            let bottom = if lo < 0 {
                format.from_ordinal(lo)
            } else {
                sign
            };
            runs.push((top, bottom));
        }
        if range.with_nans {
            let inf = format.infinity(false);
            let nans = range.pattern_count(format) - count(runs.iter().copied());
            let per_sign = (nans / 2) as u32;
            // E4M3's only NaNs sit at "infinity's" place and are in the ordinal runs already.
            if per_sign > 0 {
                runs.push((inf + 1, inf + per_sign));
                runs.push((sign | (inf + 1), sign | (inf + per_sign)));
            }
        }
        runs.sort_unstable();
        let mut out = Inputs::default();
        for (a, b) in runs {
            out.push_run(a, b);
        }
        out
    }

    /// These inputs joined with a dense lattice and a random sample, generated lazily.
    pub fn with_samples(self, lattice: Option<Lattice>, strata: Option<Strata>) -> Self {
        if lattice.is_none() && strata.is_none() {
            return self;
        }
        let mut out = Inputs {
            runs: self.runs,
            lazy: Some(Box::new(Lazy {
                lattice,
                strata,
                window: None,
                extra: Vec::new(),
                len: 0,
            })),
        };
        out.recount();
        out
    }

    fn recount(&mut self) {
        let n = count(self.run_iter());
        if let Some(lazy) = &mut self.lazy {
            lazy.len = n;
        }
    }

    /// Appends a run above every run so far, joining it to the last when they touch.
    fn push_run(&mut self, lo: u32, hi: u32) {
        debug_assert!(self.lazy.is_none());
        if let Some(last) = self.runs.last_mut() {
            debug_assert!(lo >= last.0);
            if last.1.checked_add(1).map_or(true, |next| lo <= next) {
                last.1 = last.1.max(hi);
                return;
            }
        }
        self.runs.push((lo, hi));
    }

    /// Appends a pattern at or above every input so far (a sorted stream; repeats join).
    pub fn push_sorted(&mut self, bits: u32) {
        self.push_run(bits, bits);
    }

    /// Number of runs of consecutive patterns (what the set costs in memory).
    pub fn run_count(&self) -> usize {
        self.runs.len()
    }

    /// Whether the inputs are generated while iterated (a dense or random sample).
    pub fn is_lazy(&self) -> bool {
        self.lazy.is_some()
    }

    /// Whether `bits` is one of the inputs (a pass over a lazy set).
    pub fn contains(&self, bits: u32) -> bool {
        if self.lazy.is_some() {
            return self
                .run_iter()
                .take_while(|&(lo, _)| lo <= bits)
                .any(|(_, hi)| bits <= hi);
        }
        let i = self.runs.partition_point(|&(_, hi)| hi < bits);
        self.runs.get(i).is_some_and(|&(lo, _)| lo <= bits)
    }

    /// The union with a set of explicit runs (`other` is never lazy).
    pub fn union(&self, other: &Inputs) -> Inputs {
        debug_assert!(other.lazy.is_none());
        let Some(lazy) = &self.lazy else {
            let mut all: Vec<(u32, u32)> = self.runs.iter().chain(&other.runs).copied().collect();
            all.sort_unstable();
            let mut out = Inputs::default();
            for (a, b) in all {
                out.push_run(a, b);
            }
            return out;
        };
        let explicit = |mine: &[(u32, u32)]| {
            Inputs::default()
                .union(&Inputs {
                    runs: mine.to_vec(),
                    lazy: None,
                })
                .union(other)
                .runs
        };
        let mut out = self.clone();
        let into = out.lazy.as_mut().expect("lazy");
        if lazy.window.is_some() {
            into.extra = explicit(&lazy.extra);
        } else {
            out.runs = explicit(&self.runs);
        }
        out.recount();
        out
    }

    /// Number of inputs.
    pub fn len(&self) -> u64 {
        match &self.lazy {
            Some(lazy) => lazy.len,
            None => count(self.runs.iter().copied()),
        }
    }

    /// Whether there is no input.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The explicit runs, in increasing bit order: every input of a set that is not lazy
    /// (see [`Self::run_iter`] for any set).
    pub fn runs(&self) -> &[(u32, u32)] {
        debug_assert!(self.lazy.is_none());
        &self.runs
    }

    /// Every input as runs of consecutive patterns, in increasing bit order, generated as it
    /// goes: memory does not grow with the number of inputs.
    pub fn run_iter(&self) -> RunIter<'_> {
        let explicit: RunIter<'_> = Box::new(self.runs.iter().copied());
        let Some(lazy) = &self.lazy else {
            return explicit;
        };
        let mut sources = vec![explicit];
        if let Some(l) = &lazy.lattice {
            sources.push(Box::new(l.points().map(|b| (b, b))));
        }
        if let Some(s) = &lazy.strata {
            sources.push(Box::new(s.runs()));
        }
        let mut all: RunIter<'_> = Box::new(Union::new(sources));
        if let Some((from, to)) = lazy.window {
            all = window(all, from, to);
        }
        if lazy.extra.is_empty() {
            all
        } else {
            Box::new(Union::new(vec![all, Box::new(lazy.extra.iter().copied())]))
        }
    }

    /// Every input in increasing bit order.
    pub fn iter(&self) -> impl Iterator<Item = u32> + '_ {
        self.run_iter().flat_map(|(a, b)| a..=b)
    }

    /// The inputs with index `from..to` (in bit order); lazy still when the set is.
    pub fn slice(&self, from: u64, to: u64) -> Inputs {
        if let Some(lazy) = &self.lazy {
            debug_assert!(lazy.extra.is_empty());
            let base = lazy.window.map_or(0, |w| w.0);
            let n = lazy.len;
            let (f, t) = (from.min(n), to.min(n).max(from.min(n)));
            let mut out = self.clone();
            let into = out.lazy.as_mut().expect("lazy");
            into.window = Some((base + f, base + t));
            into.len = t - f;
            return out;
        }
        let mut out = Inputs::default();
        for run in window(Box::new(self.runs.iter().copied()), from, to) {
            out.push_run(run.0, run.1);
        }
        out
    }

    /// The finite inputs as runs (clipped below each sign's infinity), in bit order.
    pub fn finite_runs<'a>(&'a self, format: &dyn Format) -> RunIter<'a> {
        let sign = super::FormatBits::of(format).sign;
        let bounds = [
            (0, format.infinity(false) - 1),
            (sign, format.infinity(true) - 1),
        ];
        Box::new(self.run_iter().flat_map(move |(a, b)| {
            bounds.into_iter().filter_map(move |(lo, hi)| {
                let (x, y) = (a.max(lo), b.min(hi));
                (x <= y).then_some((x, y))
            })
        }))
    }

    /// The finite inputs (runs clipped below each sign's infinity).
    pub fn finite(&self, format: &dyn Format) -> Inputs {
        let mut out = Inputs::default();
        for (a, b) in self.finite_runs(format) {
            out.push_run(a, b);
        }
        out
    }

    /// The inputs at increasing indices (in bit order), in one pass over the runs.
    pub fn at_sorted(&self, indices: impl IntoIterator<Item = u64>) -> Vec<u32> {
        at_sorted(self.run_iter(), indices)
    }

    /// The input with index `i` in bit order.
    pub fn nth(&self, i: u64) -> Option<u32> {
        at_sorted(self.run_iter(), [i]).first().copied()
    }
}

/// The inputs of a run iterator at increasing indices, in one pass.
pub fn at_sorted(
    runs: impl Iterator<Item = (u32, u32)>,
    indices: impl IntoIterator<Item = u64>,
) -> Vec<u32> {
    let mut out = Vec::new();
    let mut runs = runs;
    let (mut start, mut run) = (0u64, runs.next());
    for i in indices {
        while let Some((a, b)) = run {
            let n = (b - a) as u64 + 1;
            if i < start + n {
                out.push(a + (i - start) as u32);
                break;
            }
            start += n;
            run = runs.next();
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::{Binary16, Binary32};

    #[test]
    fn ranges_list_what_patterns_lists() {
        let f = &Binary16;
        for text in [
            None,
            Some("1,2"),
            Some("-1,1"),
            Some("-inf,-2"),
            Some("-3,inf"),
            Some("0,1"),
        ] {
            let range = match text {
                Some(t) => InputRange::parse(f, t).unwrap(),
                None => InputRange::all(f),
            };
            let mut expected = range.patterns(f);
            expected.sort_unstable();
            let inputs = Inputs::of_range(f, &range);
            assert_eq!(inputs.iter().collect::<Vec<_>>(), expected, "{text:?}");
            assert_eq!(inputs.len(), range.pattern_count(f));
            let finite: Vec<u32> = expected
                .iter()
                .copied()
                .filter(|&b| crate::measure::is_finite(f, b))
                .collect();
            assert_eq!(inputs.finite(f).iter().collect::<Vec<_>>(), finite);
            let n = inputs.len();
            let parts: Vec<u32> = (0..3)
                .flat_map(|k| {
                    inputs
                        .slice(n * k / 3, n * (k + 1) / 3)
                        .iter()
                        .collect::<Vec<_>>()
                })
                .collect();
            assert_eq!(parts, expected);
            assert_eq!(inputs.nth(n / 2), Some(expected[(n / 2) as usize]));
            let picks = [0, n / 7, n / 3, n / 3, n - 1];
            let want: Vec<u32> = picks.iter().map(|&i| expected[i as usize]).collect();
            assert_eq!(inputs.at_sorted(picks), want);
        }
        // All of binary32: 2^32 patterns in two runs (IEEE 754 binary32 has 32-bit encodings).
        let all = Inputs::of_range(&Binary32, &InputRange::all(&Binary32));
        assert_eq!(all.len(), 1u64 << 32);
        assert_eq!(all.runs(), &[(0, u32::MAX)]);
    }
}
