//! Everything a check measured, before it becomes report sections: the state a shard writes
//! into its report and `merge` joins, and the one function that turns it into figures, so an
//! unsharded run and a merge of shards compute their figures the same way.

use super::stream::Stream;
use super::{HygieneEntry, KernelCrash};
use crate::format::Format;
use crate::measure::{
    self, Accuracy, FindingSink, KinkSide, NonFiniteRun, Point, RuleContext, RunCell, RunTotals,
    RunsPart, Shape, SpecialRule,
};
use crate::recorded::RecordedState;
use crate::report::model::{CrashReport, ReferenceFailures, Verdict};
use crate::report::BitsValue;
use serde::{Deserialize, Serialize};

mod valid;

/// A crash of the kernel, as kept in the state.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct CrashAt {
    /// The input.
    pub input: u32,
    /// "SIGSEGV", "hang", …
    pub signal: String,
}

impl From<&KernelCrash> for CrashAt {
    fn from(c: &KernelCrash) -> Self {
        CrashAt {
            input: c.input,
            signal: c.signal.clone(),
        }
    }
}

/// Crashes by the phase that met them, in evaluation order within each phase.
#[derive(Clone, Debug, Default, Serialize, Deserialize)]
pub struct Crashes {
    /// On measured inputs.
    pub measured: Vec<CrashAt>,
    /// On edge probes and format specials (the same in every shard).
    pub probes: Vec<CrashAt>,
    /// On the inputs scanned next to non-finite runs.
    pub scans: Vec<CrashAt>,
    /// During threshold searches (the same in every shard).
    pub thresholds: Vec<CrashAt>,
}

/// What a check measured, in a form that merges in bit order.
#[derive(Serialize, Deserialize)]
pub struct Gathered {
    /// Accumulators over the measured inputs.
    pub stream: Stream,
    /// Sampled sweeps: the non-finite runs of this part (exhaustive ones stream them).
    pub runs: Option<RunsPart>,
    /// The probe points (the same in every shard).
    pub probe_points: Vec<Point>,
    /// Inputs whose reference could not be decided, with the message.
    pub failures: Vec<(u32, String)>,
    /// Crashes by phase.
    pub crashes: Crashes,
    /// Measured inputs of this part.
    pub inputs: u64,
    /// Inputs evaluated by threshold searches (the same in every shard).
    pub threshold_inputs: u64,
    /// Whether f(−0) = −0 is required.
    pub keeps_negative_zero: bool,
    /// Largest error accepted by the rules.
    pub tolerance: f64,
    /// Forward role (kinks are reported for the other roles).
    pub role_is_forward: bool,
    /// Checks of recorded outputs: the set's counts and the kernel's threshold walks.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub recorded: Option<RecordedState>,
}

/// The report sections computed from a [`Gathered`].
pub struct Figures {
    /// Accuracy.
    pub accuracy: Accuracy,
    /// The listed non-finite runs (the longest, ties to the lowest first input).
    pub non_finite: Vec<NonFiniteRun>,
    /// Exact totals over every non-finite run.
    pub non_finite_total: RunTotals,
    /// Every non-finite run counted per sign × binade × kind.
    pub non_finite_summary: Vec<RunCell>,
    /// Special-value rules.
    pub special_values: Vec<SpecialRule>,
    /// Kinks of derivative roles.
    pub kinks: Vec<KinkSide>,
    /// Shape of forward roles.
    pub shape: Option<Shape>,
    /// Undecided references.
    pub reference_failures: ReferenceFailures,
    /// The first crash.
    pub crash: Option<CrashReport>,
    /// Inputs evaluated beyond the measured ones and the probes.
    pub extra_inputs: u64,
}

impl Gathered {
    /// Joins the state of the next part of the same sweep (its inputs all above ours).
    pub fn merge(&mut self, other: Gathered) {
        self.stream.merge(other.stream);
        // The probes are the same in every shard of a called kernel; parts of a recorded set
        // each hold the ones they recorded.
        self.probe_points.extend(other.probe_points);
        self.probe_points.sort_by_key(|p| p.input);
        self.probe_points.dedup_by_key(|p| p.input);
        match (&mut self.recorded, other.recorded) {
            (Some(mine), Some(theirs)) => mine.merge(theirs),
            (None, theirs) => self.recorded = theirs,
            _ => {}
        }
        if let (Some(mine), Some(theirs)) = (&mut self.runs, other.runs) {
            mine.merge(theirs);
        }
        self.failures.extend(other.failures);
        self.crashes.measured.extend(other.crashes.measured);
        self.crashes.scans.extend(other.crashes.scans);
        self.inputs += other.inputs;
    }

    /// The figures; findings still held go to the sink. `input`: the inputs' format, `output`
    /// the outputs'.
    pub fn figures(
        self,
        input: &'static dyn Format,
        output: &'static dyn Format,
        sink: &mut dyn FindingSink,
    ) -> Figures {
        let format = input;
        let (accuracy, shape, streamed_runs, kept) = self.stream.finish(sink);
        let scanned = self.runs.as_ref().map_or(0, |r| r.scanned);
        let summary = match (streamed_runs, self.runs) {
            (Some(runs), _) => runs,
            (None, Some(part)) => part.finish(sink),
            (None, None) => measure::RunSummary::new(0),
        };
        let ctx = RuleContext {
            keeps_negative_zero: self.keeps_negative_zero,
            tolerance: self.tolerance,
        };
        // The rules read the zeros and the first and last subnormal-reference point per sign,
        // the kinks the kink points: exactly what the stream keeps.
        let special_values =
            measure::special_values(input, output, &self.probe_points, &kept, &ctx);
        let kinks = if self.role_is_forward {
            Vec::new()
        } else {
            let mut all = self.probe_points.clone();
            all.extend(kept.iter().filter(|p| p.left.is_some()).cloned());
            all.sort_by_key(|p| p.input);
            all.dedup_by_key(|p| p.input);
            measure::kink_sides(input, output, &all, self.tolerance)
        };
        let mut failures = self.failures;
        failures.sort();
        failures.dedup_by_key(|f| f.0);
        let reference_failures = ReferenceFailures {
            count: failures.len() as u64,
            inputs: failures
                .iter()
                .take(20)
                .map(|f| BitsValue::new(format, f.0))
                .collect(),
            first_message: failures.first().map(|f| f.1.clone()),
        };
        let c = self.crashes;
        let all: Vec<&CrashAt> = c
            .measured
            .iter()
            .chain(&c.probes)
            .chain(&c.scans)
            .chain(&c.thresholds)
            .collect();
        let crash = all.first().map(|first| CrashReport {
            signal: first.signal.clone(),
            input: BitsValue::new(format, first.input),
            count: all.len() as u64,
        });
        Figures {
            accuracy,
            non_finite: summary.listed(format),
            non_finite_total: summary.totals(),
            non_finite_summary: summary.cells(format),
            special_values,
            kinks,
            shape,
            reference_failures,
            crash,
            extra_inputs: scanned + self.threshold_inputs,
        }
    }
}

/// What the user accepts: `--max-ulp` and `--allow-non-finite`.
#[derive(Clone, Copy, Debug, Default)]
pub struct Acceptance {
    /// Largest max_ulp that passes.
    pub max_ulp: Option<f64>,
    /// Non-finite runs are reported without failing.
    pub allow_non_finite: bool,
}

impl Figures {
    /// The verdict: exit 3 on a crash, 1 when a hygiene check, a special-value rule, the
    /// `--max-ulp` limit or an MPFR confirmation failed or a non-finite run was found (unless
    /// accepted), 0 otherwise.
    pub fn verdict(
        &self,
        format: &dyn Format,
        hygiene: &[HygieneEntry],
        disagreements: &[BitsValue],
        accept: Acceptance,
    ) -> Verdict {
        verdict(
            format,
            self.crash.is_some(),
            hygiene,
            &self.special_values,
            self.accuracy.max_ulp,
            accept.max_ulp,
            disagreements,
            self.non_finite_total,
            accept.allow_non_finite,
        )
    }
}

#[allow(clippy::too_many_arguments)] // private: the fields of Figures and Acceptance, spelled out
fn verdict(
    format: &dyn Format,
    crashed: bool,
    hygiene: &[HygieneEntry],
    special_values: &[SpecialRule],
    max_ulp: f64,
    limit: Option<f64>,
    disagreements: &[BitsValue],
    non_finite: RunTotals,
    allow_non_finite: bool,
) -> Verdict {
    let mut failed = Vec::new();
    use crate::report::sentence;
    for x in disagreements {
        failed.push(sentence::disagreement(format, x));
    }
    for h in hygiene.iter().filter(|h| !h.passed) {
        failed.push(if h.message.is_empty() {
            format!("hygiene check {} failed: {}", h.check, h.detail)
        } else {
            h.message.clone()
        });
    }
    for r in special_values.iter().filter(|r| !r.passed) {
        failed.push(r.message.clone());
    }
    if non_finite.runs > 0 && !allow_non_finite {
        failed.push(format!(
            "non-finite: {} inputs in {} runs where kernel and reference differ in class \
             (NaN or ±inf against a finite value, or the reverse; --allow-non-finite accepts them)",
            non_finite.inputs, non_finite.runs
        ));
    }
    if let Some(limit) = limit {
        if max_ulp > limit {
            failed.push(sentence::over_limit(max_ulp, limit));
        }
    }
    let exit_code = if crashed {
        3
    } else if failed.is_empty() {
        0
    } else {
        1
    };
    Verdict {
        exit_code,
        failed,
        max_ulp_limit: limit,
        non_finite_allowed: allow_non_finite,
    }
}
