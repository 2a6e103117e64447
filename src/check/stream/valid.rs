//! Checks of a [`Stream`] read from a shard's state.

use super::{Kept, Stream};
use crate::format::{Format, Layout};
use crate::measure::valid::{ensure, pattern, point, within, Invalid};

impl Kept {
    fn validate(&self, l: Layout) -> Result<(), Invalid> {
        for (input, p) in &self.points {
            point(l, p, "points")?;
            ensure(*input == p.input, "points", || {
                format!("point {:#x} kept under {input:#x}", p.input)
            })?;
        }
        for (first, last) in self.subnormal_ends.iter().flatten() {
            pattern(l, *first, "subnormal_ends")?;
            pattern(l, *last, "subnormal_ends")?;
            ensure(first <= last, "subnormal_ends", || {
                "last below first".into()
            })?;
        }
        Ok(())
    }
}

impl Stream {
    /// Whether the accumulators are ones a check of `format` could have written.
    pub fn validate(&self, format: &dyn Format) -> Result<(), Invalid> {
        ensure(
            self.format.name() == format.name() && self.layout == format.layout(),
            "format",
            || format!("{} in a {} check", self.format.name(), format.name()),
        )?;
        ensure(self.in_layout.is_none(), "in_layout", || {
            "a second (input) format: mixed-format states are not merged".into()
        })?;
        within("accuracy", self.accuracy.validate(format))?;
        if let Some(s) = &self.shape {
            within("shape", s.validate(format))?;
        }
        if let Some(r) = &self.runs {
            within("runs", r.validate(format))?;
        }
        within("kept", self.kept.validate(self.layout))
    }

    /// Whether non-finite runs are streamed (exhaustive sweeps).
    pub fn streams_runs(&self) -> bool {
        self.runs.is_some()
    }

    /// Measured points the accuracy accumulator has seen (counted, flushed or excluded).
    pub fn counted(&self) -> u64 {
        self.accuracy.counted()
    }

    /// Whether `later` holds the accumulators of the next part of the same sweep.
    pub fn joinable(&self, later: &Stream) -> Result<(), Invalid> {
        within("accuracy", self.accuracy.joinable(&later.accuracy))?;
        match (&self.shape, &later.shape) {
            (Some(a), Some(b)) => within("shape", a.joinable(b))?,
            (None, None) => {}
            _ => return Err("shape: in some parts only".into()),
        }
        match (&self.runs, &later.runs) {
            (Some(a), Some(b)) => within("runs", a.joinable(b)),
            (None, None) => Ok(()),
            _ => Err("runs: in some parts only".into()),
        }
    }
}
