//! Rounding diagnosis: over the points whose output is the *other* neighbour of the exact value
//! (one step off RN(y), on y's far side), which rounding rule would have produced it.
//!
//! A cast done by truncation leaves every such point rounded toward zero; a kernel that rounds
//! ties away from zero leaves only exact midpoints. Counts only, so the state is bounded and
//! shards merge by addition.

use serde::{Deserialize, Serialize};

/// Share of the off-by-one points one rule must explain to be named ("almost all").
pub const DIAGNOSIS_SHARE: f64 = 0.95;
/// Fewest off-by-one points for a diagnosis: below it a handful of misses says nothing.
pub const DIAGNOSIS_MIN_POINTS: u64 = 10;

/// Counts of the off-by-one points by the rules that explain them; a point counts under every
/// rule that gives it (a positive value rounded down was also rounded toward zero).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct RoundingCounts {
    /// Points whose output differs from RN(y) but is the other neighbour of y.
    pub other_neighbour: u64,
    /// … whose output is the neighbour nearer zero.
    pub toward_zero: u64,
    /// … farther from zero.
    pub away_from_zero: u64,
    /// … above y (toward +∞).
    pub up: u64,
    /// … below y (toward −∞).
    pub down: u64,
    /// … where y is the midpoint of its neighbours and the output the one away from zero:
    /// round to nearest with ties away from zero (y's binary64 approximation decides the tie).
    pub nearest_ties_away: u64,
}

impl RoundingCounts {
    /// Counts `n` equal points with output ordinal `out`, RN(y) ordinal `rn`, their values and y.
    #[inline]
    pub fn add(&mut self, out: i64, rn: i64, out_value: f64, rn_value: f64, y: f64, n: u64) {
        let up = out > rn;
        let toward_zero = up == (y < 0.0);
        self.other_neighbour += n;
        self.up += up as u64 * n;
        self.down += (!up) as u64 * n;
        self.toward_zero += toward_zero as u64 * n;
        self.away_from_zero += (!toward_zero) as u64 * n;
        // Both neighbours are values of a format with p ≤ 24, so their midpoint is exact.
        let tie = rn_value + (out_value - rn_value) / 2.0 == y;
        self.nearest_ties_away += (tie && !toward_zero) as u64 * n;
    }

    /// Joins the counts of other inputs.
    pub fn merge(&mut self, other: &RoundingCounts) {
        self.other_neighbour += other.other_neighbour;
        self.toward_zero += other.toward_zero;
        self.away_from_zero += other.away_from_zero;
        self.up += other.up;
        self.down += other.down;
        self.nearest_ties_away += other.nearest_ties_away;
    }

    /// The report object, over `points` measured points.
    pub fn diagnose(self, points: u64) -> RoundingDiagnosis {
        let rules = [
            ("toward-zero", self.toward_zero),
            ("nearest-ties-away", self.nearest_ties_away),
            ("down", self.down),
            ("up", self.up),
            ("away-from-zero", self.away_from_zero),
        ];
        // The first rule with the largest count: toward zero before down or up, which a
        // function of one sign cannot tell from it; ties away before the directed rules.
        let (rule, count) =
            rules
                .iter()
                .copied()
                .fold(("", 0), |best, r| if r.1 > best.1 { r } else { best });
        let named = self.other_neighbour >= DIAGNOSIS_MIN_POINTS
            && count as f64 >= DIAGNOSIS_SHARE * self.other_neighbour as f64;
        let rule = named.then_some(rule);
        let message = rule.map(|rule| {
            let share = 100.0 * count as f64 / points.max(1) as f64;
            let (looks, how) = match rule {
                "toward-zero" => ("truncated", "rounded toward zero"),
                "nearest-ties-away" => (
                    "rounded to nearest with ties away from zero",
                    "exact ties rounded away from zero",
                ),
                "down" => ("rounded down", "rounded toward -inf"),
                "up" => ("rounded up", "rounded toward +inf"),
                _ => ("rounded away from zero", "rounded away from zero"),
            };
            let same = match rule {
                "toward-zero" if self.down == count => {
                    "; every such value was positive, so rounding down looks the same"
                }
                "toward-zero" if self.up == count => {
                    "; every such value was negative, so rounding up looks the same"
                }
                _ => "",
            };
            format!(
                "the outputs look {looks}: {share:.1}% of the points were {how} ({count} of the {} points whose output is the exact value's other neighbour{same})",
                self.other_neighbour
            )
        });
        RoundingDiagnosis {
            counts: self,
            rule: rule.map(str::to_string),
            message,
        }
    }
}

/// The `accuracy.rounding` object of a report.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RoundingDiagnosis {
    /// The counts.
    #[serde(flatten)]
    pub counts: RoundingCounts,
    /// The rule that explains almost all of the off-by-one points, if one does:
    /// "toward-zero" | "nearest-ties-away" | "down" | "up" | "away-from-zero".
    pub rule: Option<String>,
    /// That finding in a sentence.
    pub message: Option<String>,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn truncation_is_named_and_one_sign_is_noted() {
        let mut c = RoundingCounts::default();
        // y = 1.3 between 1.25 (ordinal 10) and 1.5 (11): RN is 1.25, output 1.5 (up, away).
        c.add(11, 10, 1.5, 1.25, 1.3, 1);
        assert_eq!((c.up, c.away_from_zero, c.nearest_ties_away), (1, 1, 0));
        // y = −1.45: RN −1.5 (ordinal −11), output −1.25 (ordinal −10): up and toward zero.
        c.add(-10, -11, -1.25, -1.5, -1.45, 1);
        assert_eq!((c.up, c.toward_zero), (2, 1));
        // A tie 1.375 given as 1.5 (RN 1.25 by ties to even... here taken as the rn side).
        c.add(11, 10, 1.5, 1.25, 1.375, 1);
        assert_eq!(c.nearest_ties_away, 1);
        assert_eq!(c.diagnose(100).rule, None, "too few points");

        let mut t = RoundingCounts::default();
        t.add(10, 11, 1.25, 1.5, 1.45, 40);
        t.add(11, 12, 1.5, 1.75, 1.7, 1);
        let d = t.diagnose(100);
        assert_eq!(d.rule.as_deref(), Some("toward-zero"));
        let m = d.message.unwrap();
        assert!(
            m.starts_with(
                "the outputs look truncated: 41.0% of the points were rounded toward zero"
            ),
            "{m}"
        );
        assert!(m.contains("every such value was positive"), "{m}");
        let mut merged = RoundingCounts::default();
        merged.merge(&t);
        merged.add(12, 11, 1.75, 1.5, 1.55, 3);
        assert_eq!(merged.other_neighbour, 44);
        assert_eq!(merged.diagnose(100).rule, None, "41 of 44 is below 95%");
    }
}
