//! Checks of the non-finite runs of a shard's state: runs inside the format, in bit order,
//! of one sign and one mismatched kind, and totals that are the sums of their cells.

use super::{Classes, NonFiniteStream, Raw, RunBuilder, RunSummary, RunsPart};
use crate::format::{Format, Layout};
use crate::measure::valid::{count, ensure, pattern, within, Invalid};

/// Most runs a listing keeps (`--listed-runs` is far below).
const MAX_KEEP: usize = 1 << 16;

fn mismatch(c: Classes, field: &str) -> Result<(), Invalid> {
    ensure(c.0 != c.1, field, || {
        format!("kernel and reference of class {:?} are no mismatch", c.0)
    })
}

impl Raw {
    fn validate(&self, l: Layout, field: &str) -> Result<(), Invalid> {
        pattern(l, self.first, field)?;
        pattern(l, self.last, field)?;
        mismatch(self.classes, field)?;
        ensure(self.first <= self.last, field, || {
            format!(
                "run {:#x}..{:#x} ends before it starts",
                self.first, self.last
            )
        })?;
        ensure(
            l.is_sign_negative(self.first) == l.is_sign_negative(self.last),
            field,
            || "a run across the sign".into(),
        )?;
        ensure(self.known >= 1 && self.known <= self.count(), field, || {
            format!("{} of {} inputs evaluated", self.known, self.count())
        })
    }
}

impl RunSummary {
    fn validate(&self, l: Layout) -> Result<(), Invalid> {
        ensure(self.keep <= MAX_KEEP, "keep", || {
            format!("{} runs", self.keep)
        })?;
        count(self.totals.runs, "totals.runs")?;
        count(self.totals.inputs, "totals.inputs")?;
        let width = l.precision() - 1;
        let keys = 1u64 << (l.width() - width);
        let (mut runs, mut inputs) = (0u64, 0u64);
        let mut previous: Option<(u32, Classes)> = None;
        for (i, c) in self.cells.iter().enumerate() {
            let field = format!("cells[{i}]");
            ensure(u64::from(c.key) < keys, &field, || {
                format!("binade key {} of {keys}", c.key)
            })?;
            mismatch(c.classes, &field)?;
            pattern(l, c.first, &field)?;
            pattern(l, c.last, &field)?;
            ensure(
                l.sign_and_exponent(c.first) == c.key
                    && l.sign_and_exponent(c.last) == c.key
                    && c.first <= c.last,
                &field,
                || "inputs outside the cell's binade".into(),
            )?;
            ensure(
                c.inputs >= 1 && c.inputs <= u64::from(c.last - c.first) + 1 && c.runs <= c.inputs,
                &field,
                || format!("{} runs of {} inputs", c.runs, c.inputs),
            )?;
            ensure(
                previous.map_or(true, |p| p < (c.key, c.classes)),
                &field,
                || "cells out of order".into(),
            )?;
            previous = Some((c.key, c.classes));
            runs += c.runs;
            inputs += c.inputs;
        }
        ensure(
            runs == self.totals.runs && inputs == self.totals.inputs,
            "totals",
            || {
                format!(
                    "{} runs of {} inputs, the cells give {runs} of {inputs}",
                    self.totals.runs, self.totals.inputs
                )
            },
        )?;
        ensure(self.longest.len() <= 2 * self.keep, "longest", || {
            format!("{} runs kept of {}", self.longest.len(), self.keep)
        })?;
        for (i, r) in self.longest.iter().enumerate() {
            r.validate(l, &format!("longest[{i}]"))?;
        }
        if let Some(r) = &self.floor {
            r.validate(l, "floor")?;
        }
        ensure(
            self.longest.len() as u64 <= self.totals.runs,
            "longest",
            || "more runs listed than counted".into(),
        )
    }
}

impl RunBuilder {
    fn validate(&self, l: Layout) -> Result<(), Invalid> {
        ensure(
            self.sign == l.infinity(true) & !l.infinity(false),
            "sign",
            || format!("{:#x} is not the sign bit", self.sign),
        )?;
        within("summary", self.summary.validate(l))?;
        ensure(self.ends.len() <= 2, "ends", || {
            format!("{} runs at the ends", self.ends.len())
        })?;
        // Every run held, in bit order: the first end, the finished ones, the last end.
        let mut all: Vec<&Raw> = self.ends.iter().take(1).collect();
        all.extend(&self.closed);
        all.extend(self.ends.iter().skip(1));
        let mut previous: Option<u32> = None;
        for (i, r) in all.iter().enumerate() {
            r.validate(l, &format!("runs[{i}]"))?;
            ensure(previous.map_or(true, |p| p < r.first), "runs", || {
                "runs out of bit order".into()
            })?;
            previous = Some(r.last);
        }
        match (self.first, self.previous) {
            (None, None) => ensure(all.is_empty(), "first", || "runs without points".into()),
            (Some((first, _)), Some((last, c))) => {
                pattern(l, first, "first")?;
                pattern(l, last, "previous")?;
                ensure(first <= last, "previous", || "below the first point".into())?;
                ensure(
                    all.first().map_or(true, |r| first <= r.first)
                        && all.last().map_or(true, |r| r.last <= last),
                    "runs",
                    || "runs outside the points".into(),
                )?;
                // The point before the next one continues a run only if that run ends there.
                if c.is_some_and(|(k, r)| k != r) {
                    ensure(
                        self.ends.last().is_some_and(|r| r.last == last),
                        "ends",
                        || "the last point's run is missing".into(),
                    )?;
                }
                Ok(())
            }
            _ => Err("first: only one of first and previous".into()),
        }
    }

    /// Whether `later` (a later part) can be joined: its first point's run, when it may
    /// continue ours, is its first end.
    fn joinable(&self, later: &RunBuilder) -> Result<(), Invalid> {
        if let Some((bits, Some(c))) = later.first {
            if c.0 != c.1 {
                ensure(
                    later.ends.first().is_some_and(|r| r.first == bits),
                    "first",
                    || "the first point's run is missing".into(),
                )?;
            }
        }
        ensure(
            self.summary.keep == later.summary.keep,
            "summary.keep",
            || "parts listing different numbers of runs".into(),
        )?;
        if let (Some((mine, _)), Some((theirs, _))) = (self.previous, later.first) {
            ensure(mine < theirs, "first", || {
                format!("points from {theirs:#x} do not follow the previous part's")
            })?;
        }
        Ok(())
    }
}

impl NonFiniteStream {
    /// Whether the stream is one a check of `format` could have written.
    pub fn validate(&self, format: &dyn Format) -> Result<(), Invalid> {
        ensure(
            self.format.name() == format.name() && self.layout == format.layout(),
            "format",
            || format!("{} in a {} check", self.format.name(), format.name()),
        )?;
        ensure(self.out.is_none(), "out", || {
            "a second (output) format: mixed-format states are not merged".into()
        })?;
        within("builder", self.builder.validate(self.layout))
    }

    /// Whether `later` is the stream of the next part.
    pub fn joinable(&self, later: &NonFiniteStream) -> Result<(), Invalid> {
        within("builder", self.builder.joinable(&later.builder))
    }
}

impl RunsPart {
    /// Whether the part is one a sampled check of `format` could have written.
    pub fn validate(&self, format: &dyn Format) -> Result<(), Invalid> {
        ensure(self.format.name() == format.name(), "format", || {
            format!("{} in a {} check", self.format.name(), format.name())
        })?;
        count(self.scanned, "scanned")?;
        within("builder", self.builder.validate(format.layout()))
    }

    /// Whether `later` is the part of the next stretch.
    pub fn joinable(&self, later: &RunsPart) -> Result<(), Invalid> {
        within("builder", self.builder.joinable(&later.builder))
    }
}
