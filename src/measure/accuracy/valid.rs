//! Checks of an [`AccuracyAcc`] read from a shard's state: bounds, counts and the
//! consistency of the totals with the rows, bins, regions and plot samples they were
//! joined from.

use super::{binade_key, grid, region_of, Acc, AccuracyAcc, RawWorst, Samples, BINS, REGIONS};
use crate::format::{Format, Layout};
use crate::measure::valid::{
    bits_value, count, ensure, error, finite_pattern, pattern, within, Invalid,
};

impl Acc {
    /// Counts within bounds, the worst input among the inputs, the sum of as many errors.
    fn validate(&self, l: Layout) -> Result<(), Invalid> {
        count(self.points, "points")?;
        error(self.max, "max")?;
        ensure(self.correct <= self.points, "correct", || {
            format!("{} of {} points", self.correct, self.points)
        })?;
        within("sum", self.sum.validate())?;
        ensure(self.sum.count() == self.points, "sum.count", || {
            format!(
                "{} errors summed for {} points",
                self.sum.count(),
                self.points
            )
        })?;
        if self.points == 0 {
            ensure(self.worst.is_none() && self.max == 0.0, "worst", || {
                "an empty row has a worst point".into()
            })?;
            return Ok(());
        }
        finite_pattern(l, self.first, "first")?;
        finite_pattern(l, self.last, "last")?;
        ensure(self.first <= self.last, "last", || {
            format!("{:#x} below the first input {:#x}", self.last, self.first)
        })?;
        let worst = self.worst.ok_or_else(|| "worst: missing".to_string())?;
        ensure((self.first..=self.last).contains(&worst), "worst", || {
            format!("{worst:#x} outside the row's inputs")
        })?;
        ensure(
            self.points <= u64::from(self.last - self.first) + 1,
            "points",
            || {
                format!(
                    "{} points between {:#x} and {:#x}",
                    self.points, self.first, self.last
                )
            },
        )?;
        // The mean of errors is at most the largest (exactly, so also once rounded).
        ensure(self.sum.mean() <= self.max, "sum", || {
            format!(
                "mean {} above the largest error {}",
                self.sum.mean(),
                self.max
            )
        })
    }
}

impl RawWorst {
    fn validate(&self, l: Layout) -> Result<(), Invalid> {
        finite_pattern(l, self.input, "input")?;
        pattern(l, self.output, "output")?;
        pattern(l, self.reference, "reference")?;
        ensure(!self.exact.is_nan(), "exact", || "NaN".into())?;
        error(self.ulp, "ulp")
    }
}

impl AccuracyAcc {
    /// Whether the accumulator is one a check of `format` could have written.
    pub fn validate(&self, format: &dyn Format) -> Result<(), Invalid> {
        let l = format.layout();
        ensure(self.format.name() == format.name(), "format", || {
            format!("{} in a {} check", self.format.name(), format.name())
        })?;
        ensure(self.layout == l, "layout", || {
            format!("{:?} is not the layout of {}", self.layout, format.name())
        })?;
        // Shards of mixed-format checks are refused, so no state carries an input side.
        ensure(self.input.is_none(), "input", || {
            "a second (input) format: mixed-format states are not merged".into()
        })?;
        if let Some(a) = self.abs_floor {
            ensure(a.is_finite() && a > 0.0, "abs_floor", || format!("{a}"))?;
        }
        if let Some(a) = self.list_over {
            error(a, "list_over")?;
        }
        ensure(self.stretch.is_none(), "stretch", || {
            "a state is written with its rows settled".into()
        })?;
        within("total", self.total.validate(l))?;
        let points = self.total.points;
        ensure(self.histogram.len() == BINS.len() + 1, "histogram", || {
            format!("{} bins, not {}", self.histogram.len(), BINS.len() + 1)
        })?;
        let binned = self.histogram.iter().try_fold(0u64, |s, &n| {
            count(n, "histogram")?;
            Ok::<u64, Invalid>(s + n)
        })?;
        ensure(binned == points, "histogram", || {
            format!("{binned} points in the bins, {points} in total")
        })?;
        ensure(
            self.faithful >= self.total.correct && self.faithful <= points,
            "faithful",
            || format!("{} of {points} points", self.faithful),
        )?;
        // Rows: in bit order, each inside its binade, summing to the total.
        let mut sum = 0u64;
        let mut max = 0.0f64;
        let mut previous: Option<u32> = None;
        for (i, (key, acc)) in self.binades.iter().enumerate() {
            let field = format!("binades[{i}]");
            within(&field, acc.validate(l))?;
            ensure(acc.points > 0, &field, || "an empty row".into())?;
            if let Some(e) = key.exponent {
                ensure((l.emin()..=l.emax()).contains(&e), &field, || {
                    format!("binade 2^{e} is not one of {}", format.name())
                })?;
            }
            let holds = |bits: u32| binade_key(l, bits) == *key;
            ensure(holds(acc.first) && holds(acc.last), &field, || {
                format!("inputs outside binade {}", key.label())
            })?;
            ensure(previous.map_or(true, |p| p < acc.first), &field, || {
                "rows out of bit order".into()
            })?;
            previous = Some(acc.last);
            sum += acc.points;
            max = max.max(acc.max);
        }
        ensure(sum == points && max == self.total.max, "binades", || {
            format!(
                "rows of {sum} points (largest error {max}) for a total of {points} ({})",
                self.total.max
            )
        })?;
        ensure(self.regions.len() == REGIONS.len(), "regions", || {
            format!("{} regions, not {}", self.regions.len(), REGIONS.len())
        })?;
        let mut sum = 0u64;
        for (k, (acc, floored)) in self.regions.iter().enumerate() {
            let field = format!("regions[{k}]");
            within(&field, acc.validate(l))?;
            error(*floored, &field)?;
            if acc.points > 0 {
                ensure(
                    region_of(l.to_f64(acc.first)) == k && region_of(l.to_f64(acc.last)) == k,
                    &field,
                    || format!("inputs outside region {}", REGIONS[k]),
                )?;
            }
            sum += acc.points;
        }
        ensure(sum == points, "regions", || {
            format!("regions of {sum} points for a total of {points}")
        })?;
        match (&self.worst, self.total.worst) {
            (None, None) => {}
            (Some(w), Some(input)) => {
                within("worst", w.validate(l))?;
                ensure(w.input == input && w.ulp == self.total.max, "worst", || {
                    "not the total's worst point".into()
                })?;
            }
            _ => return Err("worst: disagrees with the total".into()),
        }
        match (self.abs_floor, &self.floor_max.1) {
            (_, None) => {}
            (Some(_), Some(w)) => {
                within("floor_max", w.validate(l))?;
                error(self.floor_max.0, "floor_max")?;
            }
            (None, Some(_)) => return Err("floor_max: a floored error without a floor".into()),
        }
        count(self.ftz, "ftz")?;
        count(self.excluded, "excluded")?;
        ensure(self.over_limit.len() as u64 <= points, "over_limit", || {
            format!("{} listed points of {points}", self.over_limit.len())
        })?;
        for (i, w) in self.over_limit.iter().enumerate() {
            let field = format!("over_limit[{i}]");
            for v in [&w.input, &w.output, &w.reference] {
                bits_value(format, v, &field)?;
            }
            error(w.ulp, &field)?;
        }
        count(self.listed, "listed")?;
        if let Some(last) = self.last_input {
            pattern(l, last, "last_input")?;
        }
        within("samples", self.samples.validate(l, points, self.total.max))
    }

    /// Points seen with a finite input and an output: counted, flushed to zero or excluded
    /// as non-finite.
    pub fn counted(&self) -> u64 {
        self.total.points + self.ftz + self.excluded
    }

    /// Whether `later`, the accumulator of the next part, can be joined to this one: the
    /// same settings, and inputs above ours.
    pub fn joinable(&self, later: &AccuracyAcc) -> Result<(), Invalid> {
        ensure(
            self.abs_floor == later.abs_floor && self.list_over == later.list_over,
            "abs_floor",
            || "parts with different settings".into(),
        )?;
        let same = match (&self.samples, &later.samples) {
            (Samples::All(_), Samples::All(_)) => true,
            (Samples::Grid { lo, hi, .. }, Samples::Grid { lo: a, hi: b, .. }) => {
                (lo, hi) == (a, b)
            }
            _ => false,
        };
        ensure(same, "samples", || "parts with different plot grids".into())?;
        if self.total.points > 0 && later.total.points > 0 {
            ensure(self.total.last < later.total.first, "total.first", || {
                format!(
                    "inputs from {:#x} do not follow the previous part's (up to {:#x})",
                    later.total.first, self.total.last
                )
            })?;
        }
        Ok(())
    }
}

impl Samples {
    /// Plot samples: one per point (a list) or per touched bucket (a grid), never a dense
    /// span (written as a list).
    fn validate(&self, l: Layout, points: u64, max: f64) -> Result<(), Invalid> {
        let (lo_all, hi_all) = (
            l.ordinal(l.max_finite(true)),
            l.ordinal(l.max_finite(false)),
        );
        match self {
            Samples::All(list) => {
                // One per point, or one per ordinal when a small span kept its samples densely
                // (−0 and +0 share an ordinal): never more than the points.
                ensure(list.len() as u64 <= points, "All", || {
                    format!("{} samples of {points} points", list.len())
                })?;
                for (i, (ordinal, e, at)) in list.iter().enumerate() {
                    let field = format!("All[{i}]");
                    finite_pattern(l, at.input, &field)?;
                    pattern(l, at.output, &field)?;
                    pattern(l, at.reference, &field)?;
                    error(*e, &field)?;
                    ensure(*ordinal == l.ordinal(at.input) && *e <= max, &field, || {
                        "not a sample of its point".into()
                    })?;
                }
                Ok(())
            }
            Samples::Dense { .. } => Err("Dense: a state lists its samples".into()),
            Samples::Grid { lo, hi, touched } => {
                ensure(lo_all <= *lo && lo <= hi && *hi <= hi_all, "Grid", || {
                    format!("ordinals {lo}..={hi} outside the format's")
                })?;
                let buckets = grid(*lo, *hi).len();
                let mut sum = 0u64;
                for (i, (index, n, e, at)) in touched.iter().enumerate() {
                    let field = format!("Grid.touched[{i}]");
                    ensure(*index < buckets, &field, || {
                        format!("bucket {index} of {buckets}")
                    })?;
                    count(*n, &field)?;
                    error(*e, &field)?;
                    finite_pattern(l, at.input, &field)?;
                    pattern(l, at.output, &field)?;
                    pattern(l, at.reference, &field)?;
                    ensure(*e <= max, &field, || format!("error {e} above the largest"))?;
                    sum += n;
                }
                ensure(sum == points, "Grid", || {
                    format!("buckets of {sum} points for a total of {points}")
                })
            }
        }
    }
}
