//! Checks of a [`ShapeAcc`] read from a shard's state.

use super::{ShapeAcc, Side, EXAMPLES};
use crate::format::{Format, Layout};
use crate::measure::valid::{bits_value, count, ensure, finite_pattern, pattern, Invalid};

impl Side {
    fn validate(&self, format: &dyn Format, negative: bool, field: &str) -> Result<(), Invalid> {
        let l: Layout = format.layout();
        count(self.violation_count, field)?;
        ensure(
            self.violations.len() <= EXAMPLES
                && self.violations.len() as u64 <= self.violation_count,
            field,
            || {
                format!(
                    "{} examples of {} violations",
                    self.violations.len(),
                    self.violation_count
                )
            },
        )?;
        for v in &self.violations {
            for b in [&v.from, &v.to, &v.from_output, &v.to_output] {
                bits_value(format, b, field)?;
            }
        }
        match (self.first, self.last) {
            (None, None) => Ok(()),
            (Some(a), Some(b)) => {
                for s in [a, b] {
                    finite_pattern(l, s.input, field)?;
                    finite_pattern(l, s.output, field)?;
                    pattern(l, s.reference, field)?;
                    ensure(l.is_sign_negative(s.input) == negative, field, || {
                        format!("input {:#x} of the other sign", s.input)
                    })?;
                }
                ensure(a.input <= b.input, field, || "last below first".into())
            }
            _ => Err(format!("{field}: only one of first and last")),
        }
    }
}

impl ShapeAcc {
    /// Whether the accumulator is one a forward check of `format` could have written.
    pub fn validate(&self, format: &dyn Format) -> Result<(), Invalid> {
        ensure(self.input.is_none(), "input", || {
            "a second (input) format: mixed-format states are not merged".into()
        })?;
        ensure(
            self.format.name() == format.name() && self.layout == format.layout(),
            "format",
            || format!("{} in a {} check", self.format.name(), format.name()),
        )?;
        self.positive.validate(format, false, "positive")?;
        self.negative.validate(format, true, "negative")?;
        count(self.jump_count, "jump_count")?;
        ensure(
            self.jumps.len() <= 4 * EXAMPLES + 1 && self.jumps.len() as u64 <= self.jump_count,
            "jumps",
            || format!("{} jumps listed of {}", self.jumps.len(), self.jump_count),
        )?;
        let l = format.layout();
        for &(a, b, k, r) in &self.jumps {
            finite_pattern(l, a, "jumps")?;
            finite_pattern(l, b, "jumps")?;
            // A jump is more than 2·r + 16 kernel steps (see `pair`).
            ensure(
                r <= 1 << 33 && k > 2 * r + 16 && k <= 1 << 33,
                "jumps",
                || format!("{k} kernel steps against {r} reference steps is no jump"),
            )?;
        }
        Ok(())
    }

    /// Whether `later` is the shape of the next part of the same check.
    pub fn joinable(&self, later: &ShapeAcc) -> Result<(), Invalid> {
        ensure(
            self.monotone_function == later.monotone_function,
            "monotone_function",
            || "parts of different functions".into(),
        )
    }
}
