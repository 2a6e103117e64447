//! A sweep's measured inputs as sorted runs of consecutive bit patterns, so an exhaustive sweep
//! of up to 2³² patterns costs a few words and is handed out chunk by chunk.

use super::InputRange;
use crate::format::Format;

/// Sorted, disjoint, non-adjacent inclusive runs `lo..=hi` of bit patterns.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Inputs {
    runs: Vec<(u32, u32)>,
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
            let nans = range.pattern_count(format) - Self::count(&runs);
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

    fn count(runs: &[(u32, u32)]) -> u64 {
        runs.iter().map(|&(a, b)| (b - a) as u64 + 1).sum()
    }

    /// Appends a run above every run so far, joining it to the last when they touch.
    fn push_run(&mut self, lo: u32, hi: u32) {
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

    /// Whether `bits` is one of the inputs.
    pub fn contains(&self, bits: u32) -> bool {
        let i = self.runs.partition_point(|&(_, hi)| hi < bits);
        self.runs.get(i).is_some_and(|&(lo, _)| lo <= bits)
    }

    /// The union with another set.
    pub fn union(&self, other: &Inputs) -> Inputs {
        let mut all: Vec<(u32, u32)> = self.runs.iter().chain(&other.runs).copied().collect();
        all.sort_unstable();
        let mut out = Inputs::default();
        for (a, b) in all {
            out.push_run(a, b);
        }
        out
    }

    /// Number of inputs.
    pub fn len(&self) -> u64 {
        Self::count(&self.runs)
    }

    /// Whether there is no input.
    pub fn is_empty(&self) -> bool {
        self.runs.is_empty()
    }

    /// The runs, in increasing bit order.
    pub fn runs(&self) -> &[(u32, u32)] {
        &self.runs
    }

    /// Every input in increasing bit order.
    pub fn iter(&self) -> impl Iterator<Item = u32> + '_ {
        self.runs.iter().flat_map(|&(a, b)| a..=b)
    }

    /// The inputs with index `from..to` (in bit order).
    pub fn slice(&self, from: u64, to: u64) -> Inputs {
        let mut out = Inputs::default();
        let mut start = 0u64;
        for &(a, b) in &self.runs {
            let n = (b - a) as u64 + 1;
            let (lo, hi) = (from.max(start), to.min(start + n));
            if lo < hi {
                out.push_run(a + (lo - start) as u32, a + (hi - 1 - start) as u32);
            }
            start += n;
        }
        out
    }

    /// The finite inputs (runs clipped below each sign's infinity).
    pub fn finite(&self, format: &dyn Format) -> Inputs {
        let sign = super::FormatBits::of(format).sign;
        let mut out = Inputs::default();
        for &(a, b) in &self.runs {
            for (lo, hi) in [
                (0, format.infinity(false) - 1),
                (sign, format.infinity(true) - 1),
            ] {
                let (x, y) = (a.max(lo), b.min(hi));
                if x <= y {
                    out.push_run(x, y);
                }
            }
        }
        out
    }

    /// The inputs at increasing indices (in bit order), in one pass over the runs.
    pub fn at_sorted(&self, indices: impl IntoIterator<Item = u64>) -> Vec<u32> {
        let mut out = Vec::new();
        let mut runs = self.runs.iter();
        let (mut start, mut run) = (0u64, runs.next());
        for i in indices {
            while let Some(&(a, b)) = run {
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

    /// The input with index `i` in bit order.
    pub fn nth(&self, mut i: u64) -> Option<u32> {
        for &(a, b) in &self.runs {
            let n = (b - a) as u64 + 1;
            if i < n {
                return Some(a + i as u32);
            }
            i -= n;
        }
        None
    }
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
