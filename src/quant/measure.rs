//! From the kernel's 256 output codes and the expected ones to figures: the error in output
//! steps, the share of correctly rounded codes, every miss listed (at most 256 by nature),
//! the ties-away count and the rounding diagnosis, and the verdict.

use super::reference::Expected;
use crate::measure::{RoundingCounts, RoundingDiagnosis};

/// What decides the verdict.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
#[serde(tag = "kind", content = "steps", rename_all = "kebab-case")]
pub enum Limit {
    /// Every output must be the correctly rounded code (the default).
    CorrectlyRounded,
    /// The largest |ŷ − t| in steps may be at most this (`--max-steps`, or `--max-ulp`).
    MaxSteps(f64),
}

/// One code whose output differs from the correctly rounded code.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Miss {
    /// The input code.
    pub q: i32,
    /// The real input, shortest decimal that reads back as its binary64 approximation.
    pub x: f64,
    /// The kernel's code.
    pub output: i32,
    /// The correctly rounded code.
    pub expected: i32,
    /// Ties-away code.
    pub ties_away: i32,
    /// The exact output t (binary64).
    pub t: f64,
    /// output − expected, in steps.
    pub off_by: i32,
    /// |output − clamp(t)| in steps.
    pub steps: f64,
}

/// The figures of one kernel.
#[derive(Clone, Debug, serde::Serialize)]
pub struct Measures {
    /// Codes measured (256 unless the kernel crashed on some).
    pub outputs: u32,
    /// Codes whose output is the correctly rounded one.
    pub correctly_rounded: u32,
    /// correctly_rounded / outputs.
    pub correctly_rounded_fraction: f64,
    /// Largest |ŷ − clamp(t)| in steps.
    pub max_steps: f64,
    /// Where it is largest (the smallest such code).
    pub worst: Option<Miss>,
    /// Mean |ŷ − clamp(t)| in steps.
    pub mean_steps: f64,
    /// Codes off by one step from the correctly rounded code, by two, by three or more.
    pub off_by_one: u32,
    /// … by two.
    pub off_by_two: u32,
    /// … by three or more.
    pub off_by_more: u32,
    /// Codes where t is an exact tie (inside the range).
    pub ties: u32,
    /// Outputs equal to the ties-away code but not to the correctly rounded one.
    pub ties_away_only: u32,
    /// Every miss, smallest code first.
    pub misses: Vec<Miss>,
    /// Which rounding rule explains the one-step misses.
    pub rounding: RoundingDiagnosis,
}

/// Measures the kernel's codes (`None` where it crashed) against the expected table.
pub fn measure(expected: &[Expected], outputs: &[Option<i32>]) -> Measures {
    let mut m = Measures {
        outputs: 0,
        correctly_rounded: 0,
        correctly_rounded_fraction: 0.0,
        max_steps: 0.0,
        worst: None,
        mean_steps: 0.0,
        off_by_one: 0,
        off_by_two: 0,
        off_by_more: 0,
        ties: expected.iter().filter(|e| e.tie).count() as u32,
        ties_away_only: 0,
        misses: Vec::new(),
        rounding: RoundingCounts::default().diagnose(0),
    };
    let mut counts = RoundingCounts::default();
    let mut sum = 0.0;
    for (e, out) in expected.iter().zip(outputs) {
        let Some(out) = *out else { continue };
        m.outputs += 1;
        // Against clamped t: a code that saturates correctly is not "off" by the overflow.
        let steps = (f64::from(out) - e.t_clamped).abs();
        sum += steps;
        let miss = Miss {
            q: e.q,
            x: nearest_f64(&e.x),
            output: out,
            expected: e.nearest_even,
            ties_away: e.ties_away,
            t: e.t,
            off_by: out - e.nearest_even,
            steps,
        };
        if m.worst.is_none() || steps > m.max_steps {
            m.max_steps = steps;
            m.worst = Some(miss.clone());
        }
        if out == e.nearest_even {
            m.correctly_rounded += 1;
            continue;
        }
        if out == e.ties_away {
            m.ties_away_only += 1;
        }
        match (out - e.nearest_even).unsigned_abs() {
            1 => {
                m.off_by_one += 1;
                // The other neighbour of t: which rule gives it (codes are their own ordinals).
                let other = if f64::from(out) > e.t_clamped {
                    e.t_clamped.floor() + 1.0
                } else {
                    e.t_clamped.ceil() - 1.0
                };
                if f64::from(out) == other && e.t_clamped.fract() != 0.0 {
                    let rn = e.nearest_even;
                    counts.add(out.into(), rn.into(), out.into(), rn.into(), e.t_clamped, 1);
                }
            }
            2 => m.off_by_two += 1,
            _ => m.off_by_more += 1,
        }
        m.misses.push(miss);
    }
    if m.outputs > 0 {
        m.correctly_rounded_fraction = f64::from(m.correctly_rounded) / f64::from(m.outputs);
        m.mean_steps = sum / f64::from(m.outputs);
    }
    m.rounding = counts.diagnose(m.outputs.into());
    m
}

impl Measures {
    /// The verdict's failed lines under `limit` (empty: passed).
    pub fn failures(&self, limit: Limit, ty: &str) -> Vec<String> {
        match limit {
            Limit::CorrectlyRounded if !self.misses.is_empty() => {
                // The first of the misses farthest from t.
                let w = self.misses.iter().fold(&self.misses[0], |best, m| {
                    if m.steps > best.steps {
                        m
                    } else {
                        best
                    }
                });
                vec![format!(
                    "{} of {} {ty} outputs are not the correctly rounded code (worst: q = {} \
                     gave {}, expected {}; exact {}); pass --max-steps to allow more",
                    self.misses.len(),
                    self.outputs,
                    w.q,
                    w.output,
                    w.expected,
                    round6(w.t),
                )]
            }
            Limit::MaxSteps(s) if self.max_steps > s => vec![format!(
                "max error {} steps exceeds --max-steps {s}",
                round6(self.max_steps)
            )],
            _ => Vec::new(),
        }
    }
}

/// Rounded to 6 decimals for sentences.
pub fn round6(v: f64) -> f64 {
    (v * 1e6).round() / 1e6
}

fn nearest_f64(q: &rug::Rational) -> f64 {
    rug::Float::with_val(1024, q).to_f64()
}
