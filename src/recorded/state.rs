//! What a check of a recorded set adds to the mergeable state of a check: the set's counts,
//! and the kernel's thresholds found by walking the recorded inputs.
//!
//! A recorded set cannot be searched by bisection at arbitrary inputs, but every recorded
//! input is measured anyway: walking them outward in bit order gives the first input from
//! which the kernel stays at its asymptote among the inputs present, and the walks of
//! consecutive parts join exactly.

use super::survey::{Disagreement, Survey, EXAMPLES};
use crate::format::{Format, Layout};
use crate::measure::{value_class, ThresholdReport};
use crate::report::model::{MeasureNote, NonDeterminism, RecordedFile, RecordedSection};
use crate::report::BitsValue;
use crate::sweep::{Threshold, ThresholdKind};
use serde::{Deserialize, Serialize};

mod valid;

/// One side's threshold, walked over the recorded inputs of that side in increasing bit
/// order (outward from zero).
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct ThresholdWalk {
    /// The side: x > 0 when true.
    pub positive: bool,
    /// Saturation or overflow.
    pub kind: ThresholdKind,
    /// The asymptote's bit pattern.
    pub asymptote: u32,
    /// The reference's threshold, as the check found it.
    pub reference: Option<u32>,
    /// Whether the reference's threshold was confirmed.
    pub reference_confirmed: bool,
    /// Whether the kernel is searched (not for gradients, whose asymptote moves with g).
    pub search: bool,
    /// The last walked input whose output is not at the asymptote.
    pub fail: Option<u32>,
    /// The first walked input after `fail` whose output is, with that output.
    pub hold: Option<(u32, u32)>,
    /// The last input walked: inputs come in increasing order, anything else is skipped.
    pub last: Option<u32>,
}

impl ThresholdWalk {
    /// A walk for one reference threshold.
    pub fn new(t: &Threshold, search: bool) -> Self {
        ThresholdWalk {
            positive: t.positive,
            kind: t.kind,
            asymptote: t.asymptote,
            reference: t.first,
            reference_confirmed: t.confirmed,
            search,
            fail: None,
            hold: None,
            last: None,
        }
    }

    /// Whether an output is at this threshold's asymptote (as `measure::thresholds` judges).
    fn holds(&self, l: Layout, y: u32) -> bool {
        match self.kind {
            ThresholdKind::Overflow => !l.is_finite(y),
            ThresholdKind::Saturation => {
                l.is_finite(y) && l.ordinal(y) == l.ordinal(self.asymptote)
            }
        }
    }

    /// Walks one measured input; inputs of the other side, non-finite inputs and inputs not
    /// above the last one are skipped.
    #[inline]
    pub fn see(&mut self, l: Layout, x: u32, y: Option<u32>) {
        if !self.search
            || l.is_sign_negative(x) == self.positive
            || !l.is_finite(x)
            || self.last.is_some_and(|last| x <= last)
        {
            return;
        }
        self.last = Some(x);
        match y.filter(|&y| self.holds(l, y)) {
            Some(y) => {
                if self.hold.is_none() {
                    self.hold = Some((x, y));
                }
            }
            None => {
                self.fail = Some(x);
                self.hold = None;
            }
        }
    }

    /// Joins the walk of the next part (its inputs all above ours).
    pub fn merge(&mut self, later: &ThresholdWalk) {
        if later.fail.is_some() {
            self.fail = later.fail;
            self.hold = later.hold;
        } else if self.hold.is_none() {
            self.hold = later.hold;
        }
        self.last = later.last.or(self.last);
    }

    /// The threshold as reports show it.
    pub fn report(&self, format: &dyn Format) -> ThresholdReport {
        let kernel = self.hold.filter(|_| self.search);
        let zero = if self.positive {
            0
        } else {
            format.infinity(true) & !format.infinity(false)
        };
        // Confirmed when the pattern just before it was recorded and is not at the asymptote
        // (or it is the side's zero): then no unrecorded input can move it.
        let kernel_confirmed = kernel.is_some_and(|(x, _)| {
            x == zero || self.fail.is_some_and(|f| f.checked_add(1) == Some(x))
        });
        let steps = match (self.reference, kernel) {
            (Some(r), Some((k, _))) => {
                let d = format.ordinal(k) - format.ordinal(r);
                Some(if self.positive { d } else { -d })
            }
            _ => None,
        };
        let side = if self.positive { "+" } else { "-" };
        let asymptote = BitsValue::new(format, self.asymptote);
        let reference = self.reference.map(|b| BitsValue::new(format, b));
        let kernel_value = kernel.map(|(x, _)| BitsValue::new(format, x));
        let kernel_class = kernel.map(|(_, y)| value_class(format, y));
        let message = crate::report::sentence::threshold(
            format,
            format,
            self.kind == crate::sweep::ThresholdKind::Overflow,
            side,
            &asymptote,
            reference.as_ref(),
            kernel_value.as_ref(),
            kernel_class,
            steps,
            true,
        );
        ThresholdReport {
            side,
            kind: self.kind,
            asymptote,
            reference,
            reference_confirmed: self.reference_confirmed,
            kernel: kernel_value,
            kernel_confirmed,
            kernel_class,
            kernel_minus_reference_steps: steps,
            message,
        }
    }
}

/// The recorded set's part of a check's state.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct RecordedState {
    /// The arrays read.
    pub files: Vec<RecordedFile>,
    /// Elements per array.
    pub entries: u64,
    /// Distinct inputs in the range.
    pub distinct: u64,
    /// Elements outside the range.
    pub outside_range: u64,
    /// Elements repeating an earlier input.
    pub repeated: u64,
    /// Inputs recorded with different outputs.
    pub disagreeing: u64,
    /// The first of them.
    pub examples: Vec<Disagreement>,
    /// Whether the set (or this part of it) holds every input the sweep asks for.
    pub complete: bool,
    /// Special values the check probes, and how many of them were recorded.
    pub probes: (u64, u64),
    /// The kernel's thresholds over the recorded inputs.
    pub walks: Vec<ThresholdWalk>,
}

impl RecordedState {
    /// The state of a surveyed set; `complete` says whether it holds every input its sweep
    /// (or its part of it) asks for.
    pub fn new(files: Vec<RecordedFile>, survey: &Survey, complete: bool) -> Self {
        RecordedState {
            files,
            entries: survey.entries,
            distinct: survey.distinct,
            outside_range: survey.outside_range,
            repeated: survey.repeats,
            disagreeing: survey.disagreeing,
            examples: survey.examples.clone(),
            complete,
            probes: (0, 0),
            walks: Vec::new(),
        }
    }

    /// Joins the state of the next part.
    pub fn merge(&mut self, later: RecordedState) {
        self.files.extend(later.files);
        self.entries += later.entries;
        self.distinct += later.distinct;
        self.outside_range += later.outside_range;
        self.repeated += later.repeated;
        self.disagreeing += later.disagreeing;
        self.examples.extend(later.examples);
        self.examples.truncate(EXAMPLES);
        self.complete &= later.complete;
        self.probes = (
            self.probes.0.max(later.probes.0),
            self.probes.1 + later.probes.1,
        );
        for (mine, theirs) in self.walks.iter_mut().zip(&later.walks) {
            mine.merge(theirs);
        }
    }

    /// The determinism check the repeats allow: `None` when no input was recorded twice.
    pub fn determinism(&self, format: &dyn Format) -> Option<crate::report::model::HygieneEntry> {
        (self.repeated > 0).then(|| crate::report::model::HygieneEntry {
            // Filled in with the other hygiene sentences when the report is assembled.
            message: String::new(),
            check: "determinism".into(),
            passed: self.disagreeing == 0,
            detail: match self.examples.first() {
                None => format!(
                    "{} repeated inputs, every repeat gave the same output",
                    self.repeated
                ),
                Some(d) => format!(
                    "{} inputs were recorded with different outputs, e.g. {} gave {} and {}",
                    self.disagreeing,
                    crate::format::hex(format, d.input),
                    crate::format::hex(format, d.first),
                    crate::format::hex(format, d.other)
                ),
            },
        })
    }

    /// The report's `recorded` section.
    pub fn section(&self, format: &dyn Format, sampled: bool) -> RecordedSection {
        let mut not_run = vec![
            MeasureNote {
                measure: "hygiene",
                why: "needs a callable kernel: buffer bounds, alignment, in-place use, untouched inputs, the FP environment and thread safety are properties of calls, not of recorded outputs".into(),
            },
            MeasureNote {
                measure: "throughput",
                why: "needs a callable kernel to time".into(),
            },
        ];
        if self.repeated == 0 {
            not_run.push(MeasureNote {
                measure: "determinism",
                why: "no input was recorded twice; record some inputs more than once to check it"
                    .into(),
            });
        }
        let mut limited = vec![
            MeasureNote {
                measure: "special values",
                why: format!(
                    "judged at the {} of the {} special inputs the check probes that were recorded",
                    self.probes.1, self.probes.0
                ),
            },
            MeasureNote {
                measure: "thresholds",
                why: "the kernel's thresholds are the first recorded inputs from which every recorded input outward gives the asymptote; confirmed only where the input just before was recorded".into(),
            },
        ];
        if sampled {
            limited.push(MeasureNote {
                measure: "non-finite runs",
                why: "the gaps next to a run cannot be scanned: its ends are exact only where the neighbouring patterns were recorded".into(),
            });
        }
        RecordedSection {
            files: self.files.clone(),
            entries: self.entries,
            distinct_inputs: self.distinct,
            outside_range: self.outside_range,
            repeated: self.repeated,
            non_deterministic: NonDeterminism {
                inputs: self.disagreeing,
                examples: self
                    .examples
                    .iter()
                    .map(|d| {
                        [
                            BitsValue::new(format, d.input),
                            BitsValue::new(format, d.first),
                            BitsValue::new(format, d.other),
                        ]
                    })
                    .collect(),
            },
            not_run,
            limited_to_recorded: limited,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::Binary16;

    fn walk() -> ThresholdWalk {
        // Saturation at +1 (0x3c00) on the positive side, as for tanh in binary16.
        ThresholdWalk::new(
            &Threshold {
                positive: true,
                kind: ThresholdKind::Saturation,
                asymptote: 0x3c00,
                first: Some(0x4500),
                confirmed: true,
            },
            true,
        )
    }

    /// Outputs: below the asymptote up to 0x44ff, at it from 0x4500 except a dip at 0x4600.
    fn output(x: u32) -> u32 {
        if x < 0x4500 || x == 0x4600 {
            0x3bff
        } else {
            0x3c00
        }
    }

    #[test]
    fn walks_find_the_last_dip_and_merge_in_order() {
        let l = Binary16.layout();
        let mut whole = walk();
        for x in 0..0x7c00 {
            whole.see(l, x, Some(output(x)));
        }
        let r = whole.report(&Binary16);
        assert_eq!(r.kernel.unwrap().bits, "0x4601");
        assert!(r.kernel_confirmed);
        // Split anywhere, the parts join into the same walk.
        for cut in [1u32, 0x4500, 0x4600, 0x4601, 0x5000] {
            let (mut a, mut b) = (walk(), walk());
            for x in 0..cut {
                a.see(l, x, Some(output(x)));
            }
            for x in cut..0x7c00 {
                b.see(l, x, Some(output(x)));
            }
            a.merge(&b);
            assert_eq!((a.fail, a.hold), (whole.fail, whole.hold), "{cut:#x}");
        }
        // A sample that misses the pattern before the threshold cannot confirm it.
        let mut sparse = walk();
        for x in (0..0x7c00).step_by(4) {
            sparse.see(l, x, Some(output(x)));
        }
        let r = sparse.report(&Binary16);
        assert_eq!(r.kernel.unwrap().bits, "0x4604");
        assert!(!r.kernel_confirmed);
        // Negative inputs, repeats and non-finite inputs are skipped.
        let mut w = walk();
        w.see(l, 0xc500, Some(0x3bff));
        w.see(l, 0x7c00, Some(0x3bff));
        assert_eq!(w.fail, None);
    }
}
