//! Checks of a shard's state ([`Gathered`]) before `merge` joins it: every field bounded,
//! counts consistent with the inputs the part measured, and parts that fit together.

use super::Gathered;
use crate::format::Format;
use crate::measure::valid::{count, ensure, error, pattern, point, within, Invalid};

/// Longest crash signal name or reference failure message kept from a state.
const MAX_MESSAGE: usize = 4096;

impl Gathered {
    /// Whether the state is one a check of `format` could have written; the error names
    /// the field (`stream.accuracy.histogram: …`).
    pub fn validate(&self, format: &dyn Format) -> Result<(), Invalid> {
        let l = format.layout();
        within("stream", self.stream.validate(format))?;
        if let Some(r) = &self.runs {
            within("runs", r.validate(format))?;
        }
        ensure(
            !(self.runs.is_some() && self.stream.streams_runs()),
            "runs",
            || "both streamed and sampled runs".into(),
        )?;
        count(self.inputs, "inputs")?;
        count(self.threshold_inputs, "threshold_inputs")?;
        // Inputs whose reference failed are left out of the points, so every counted point
        // is a measured input.
        let counted = self.stream.counted();
        ensure(counted <= self.inputs, "inputs", || {
            format!(
                "{counted} points counted from {} measured inputs",
                self.inputs
            )
        })?;
        for (i, p) in self.probe_points.iter().enumerate() {
            point(l, p, &format!("probe_points[{i}]"))?;
        }
        for (i, (x, why)) in self.failures.iter().enumerate() {
            let field = format!("failures[{i}]");
            pattern(l, *x, &field)?;
            ensure(why.len() <= MAX_MESSAGE, &field, || {
                "message too long".into()
            })?;
        }
        let c = &self.crashes;
        for (name, list) in [
            ("measured", &c.measured),
            ("probes", &c.probes),
            ("scans", &c.scans),
            ("thresholds", &c.thresholds),
        ] {
            for crash in list {
                let field = format!("crashes.{name}");
                pattern(l, crash.input, &field)?;
                ensure(
                    !crash.signal.is_empty() && crash.signal.len() <= MAX_MESSAGE,
                    &field,
                    || "no signal".into(),
                )?;
            }
        }
        error(self.tolerance, "tolerance")?;
        if let Some(r) = &self.recorded {
            within("recorded", r.validate(format))?;
        }
        Ok(())
    }

    /// Whether `later`, the next part's state, can be joined to this one.
    pub fn joinable(&self, later: &Gathered) -> Result<(), Invalid> {
        within("stream", self.stream.joinable(&later.stream))?;
        match (&self.runs, &later.runs) {
            (Some(a), Some(b)) => within("runs", a.joinable(b))?,
            (None, None) => {}
            _ => return Err("runs: in some parts only".into()),
        }
        ensure(
            self.keeps_negative_zero == later.keeps_negative_zero
                && self.tolerance == later.tolerance
                && self.role_is_forward == later.role_is_forward
                && self.recorded.is_some() == later.recorded.is_some(),
            "tolerance",
            || "parts of checks with different rules".into(),
        )?;
        if let (Some(a), Some(b)) = (&self.recorded, &later.recorded) {
            ensure(a.walks.len() == b.walks.len(), "recorded.walks", || {
                "parts with different thresholds".into()
            })?;
        }
        Ok(())
    }
}
