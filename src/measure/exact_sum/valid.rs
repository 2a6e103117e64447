//! Checks of an [`ExactSum`] read from a shard's state.

use super::{ExactSum, Slot};
use crate::measure::valid::{count, ensure, Invalid};

impl ExactSum {
    /// Whether the sum could have come from adding `count` errors (finite, not negative):
    /// its slots lie on binary64 exponent fields, each Σk is at most count·2^53 and Σk² at
    /// most count·2^106, and an empty sum has empty slots.
    pub fn validate(&self) -> Result<(), Invalid> {
        count(self.count, "count")?;
        if self.slots.is_empty() {
            return Ok(());
        }
        // Finite binary64 values have exponent fields 1..=2046 (subnormals sit at 1).
        ensure(
            self.base >= 1 && self.base.saturating_add(self.slots.len()) <= 2047,
            "base",
            || {
                format!(
                    "slots for exponent fields {}..{} are outside 1..=2046",
                    self.base,
                    self.base.saturating_add(self.slots.len())
                )
            },
        )?;
        let n = self.count as i128;
        for (i, s) in self.slots.iter().enumerate() {
            let field = format!("slots[{i}]");
            ensure(s.sum >= 0 && s.sum <= n << 53, &field, || {
                format!("sum {} is not one of {} errors", s.sum, self.count)
            })?;
            // Σk² < count·2^106, so the carries above 2^128 stay below count·2^-22 + 1.
            ensure(
                u128::from(s.squares_carries) <= (self.count as u128 >> 22) + 1,
                &field,
                || {
                    format!(
                        "squares {} are not of {} errors",
                        s.squares_carries, self.count
                    )
                },
            )?;
            ensure(self.count > 0 || *s == Slot::default(), &field, || {
                "an empty sum has a nonzero slot".into()
            })?;
        }
        Ok(())
    }
}
