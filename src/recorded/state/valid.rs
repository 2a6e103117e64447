//! Checks of a recorded set's part of a shard's state.

use super::{RecordedState, ThresholdWalk, EXAMPLES};
use crate::format::{Format, Layout};
use crate::measure::valid::{count, ensure, pattern, Invalid};

impl ThresholdWalk {
    fn validate(&self, l: Layout, field: &str) -> Result<(), Invalid> {
        pattern(l, self.asymptote, field)?;
        let hold = self.hold.iter().flat_map(|&(x, y)| [x, y]);
        for bits in self
            .reference
            .into_iter()
            .chain(self.fail)
            .chain(self.last)
            .chain(hold)
        {
            pattern(l, bits, field)?;
        }
        Ok(())
    }
}

impl RecordedState {
    /// Whether the state is one a check of recorded outputs in `format` could have written.
    pub fn validate(&self, format: &dyn Format) -> Result<(), Invalid> {
        let l = format.layout();
        for (name, n) in [
            ("entries", self.entries),
            ("distinct", self.distinct),
            ("outside_range", self.outside_range),
            ("repeated", self.repeated),
            ("disagreeing", self.disagreeing),
            ("probes", self.probes.0),
            ("probes", self.probes.1),
        ] {
            count(n, name)?;
        }
        ensure(
            self.distinct <= self.entries
                && self.repeated <= self.entries
                && self.disagreeing <= self.repeated,
            "entries",
            || {
                format!(
                    "{} entries, {} distinct, {} repeated, {} disagreeing",
                    self.entries, self.distinct, self.repeated, self.disagreeing
                )
            },
        )?;
        ensure(self.examples.len() <= EXAMPLES, "examples", || {
            format!("{} examples", self.examples.len())
        })?;
        for d in &self.examples {
            for bits in [d.input, d.first, d.other] {
                pattern(l, bits, "examples")?;
            }
        }
        for (i, w) in self.walks.iter().enumerate() {
            w.validate(l, &format!("walks[{i}]"))?;
        }
        Ok(())
    }
}
