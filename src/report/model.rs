//! The report of one checked kernel; its JSON form is documented in [`super::json`].

pub use super::provenance::Provenance;
use crate::measure::{
    Accuracy, KinkSide, Neighbourhood, NonFiniteRun, RunCell, RunTotals, Shape, SpecialRule,
    ThresholdReport,
};
use crate::report::BitsValue;
use crate::sweep::{Coverage, SampleMode, SweepKind};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// Version tag of the JSON schema.
pub const SCHEMA: &str = "ulpgauge-check/2";

/// The sweep as run.
#[derive(Clone, Debug, Serialize)]
pub struct SweepInfo {
    /// Kinds combined.
    pub kinds: Vec<SweepKind>,
    /// `--range` as given, or "all".
    pub range: String,
    /// Exhaustive or sampled.
    pub coverage: Coverage,
    /// Measured inputs (all of them, finite or not).
    pub inputs: u64,
    /// Edge probes.
    pub probes: u64,
    /// Further inputs evaluated to find exact run ends and kernel thresholds.
    pub extra_inputs: u64,
    /// Significands per binade of a dense sweep.
    pub per_binade: u32,
    /// Neighbours on each side of an interesting point.
    pub neighbours: u32,
    /// Samples of a random sweep.
    pub random_points: Option<u64>,
    /// Random sampling mode.
    pub random_mode: Option<SampleMode>,
    /// Seed of random samples and gradient factors.
    pub seed: u64,
    /// The function's interesting points the sweep looked at.
    pub interesting: Vec<InterestingPoint>,
}

/// An interesting point in a report.
#[derive(Clone, Debug, Serialize)]
pub struct InterestingPoint {
    /// The input.
    pub input: BitsValue,
    /// Why it is interesting.
    pub what: String,
}

/// The accuracy object with its coverage.
#[derive(Clone, Debug, Serialize)]
pub struct AccuracySection {
    /// Every accuracy figure.
    #[serde(flatten)]
    pub figures: Accuracy,
    /// Whether the figures cover every input of the range.
    pub coverage: Coverage,
}

/// The first crash.
#[derive(Clone, Debug, Serialize)]
pub struct CrashReport {
    /// Signal name, or "hang".
    pub signal: String,
    /// The input that crashed the kernel.
    pub input: BitsValue,
    /// Crashes in all.
    pub count: u64,
}

/// The kernel under test.
#[derive(Clone, Debug, Serialize)]
pub struct KernelInfo {
    /// Library path (`null` for in-process kernels).
    pub library: Option<String>,
    /// Exported symbol.
    pub symbol: Option<String>,
    /// Throughput, nanoseconds per element.
    pub ns_per_element: Option<f64>,
    /// `"strided"` for a kernel of the strided signature (absent for contiguous arrays).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub signature: Option<&'static str>,
    /// The element strides `[sx, sy]` the sweep called a strided kernel with.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub strides: Option<[i32; 2]>,
}

/// Inputs left out because their reference could not be decided (an engine limit).
#[derive(Clone, Debug, Serialize)]
pub struct ReferenceFailures {
    /// How many.
    pub count: u64,
    /// The first few.
    pub inputs: Vec<BitsValue>,
    /// The first failure's message.
    pub first_message: Option<String>,
}

/// Outcome of the run.
#[derive(Clone, Debug, Serialize)]
pub struct Verdict {
    /// The exit status this kernel alone gives (0, 1 or 3).
    pub exit_code: i32,
    /// The findings that failed, in words.
    pub failed: Vec<String>,
    /// `--max-ulp`, if given (compared with the raw max_ulp).
    pub max_ulp_limit: Option<f64>,
    /// `--allow-non-finite`: non-finite runs do not fail the verdict.
    pub non_finite_allowed: bool,
}

/// Everything `check` found about one kernel.
#[derive(Clone, Debug, Serialize)]
pub struct CheckReport {
    /// [`SCHEMA`].
    pub schema: &'static str,
    /// Catalog function.
    pub function: String,
    /// Format name: the output format (equal to `input_format` unless the kernel mixes
    /// formats).
    pub format: &'static str,
    /// The format of the kernel's inputs (and of a gradient's g).
    pub input_format: &'static str,
    /// The format of the kernel's outputs, in whose ulps errors are measured.
    pub output_format: &'static str,
    /// "forward", "derivative" or "gradient".
    pub role: String,
    /// For gradients: whether the kernel takes f(x) rather than x.
    pub from_output: bool,
    /// Parameters and constants as used by the reference.
    pub params: BTreeMap<String, String>,
    /// How parameters entered the reference.
    pub param_rounding: crate::reference::ParamRounding,
    /// The kernel.
    pub kernel: KernelInfo,
    /// The sweep.
    pub sweep: SweepInfo,
    /// Accuracy.
    pub accuracy: AccuracySection,
    /// The listed non-finite runs: the longest, ties to the lowest first input (at most
    /// `--list-runs`; every run is counted in `non_finite_total`).
    pub non_finite: Vec<NonFiniteRun>,
    /// Exact counts of runs and of inputs in them over the whole sweep.
    pub non_finite_total: RunTotals,
    /// Every run counted per sign × binade of the input × kind.
    pub non_finite_summary: Vec<RunCell>,
    /// Special-value rules.
    pub special_values: Vec<SpecialRule>,
    /// Hygiene checks from the runner.
    pub hygiene: Vec<HygieneEntry>,
    /// The first crash, or `null`.
    pub crash: Option<CrashReport>,
    /// Thresholds per side.
    pub thresholds: Vec<ThresholdReport>,
    /// Derivative roles: which side the kernel uses at each kink.
    pub kinks: Vec<KinkSide>,
    /// Forward role: monotonicity and jumps (`null` for other roles).
    pub shape: Option<Shape>,
    /// Kernel output beside the reference on each side of every threshold and kink (shown,
    /// not measured: these inputs are in no figure).
    pub neighbourhoods: Vec<Neighbourhood>,
    /// Inputs left out because the reference failed.
    pub reference_failures: ReferenceFailures,
    /// Outcome.
    pub verdict: Verdict,
    /// Where the report comes from.
    pub provenance: Provenance,
    /// A shard's part and the state `ulpgauge merge` joins; absent from unsharded reports.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub shard: Option<ShardSection>,
    /// Checks of recorded outputs (`check --inputs/--outputs`): the files, what they hold, and
    /// the measures that need a callable kernel; absent for called kernels.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub recorded: Option<RecordedSection>,
    /// `check --caller-fpenv`: what changed against the default FP environment; absent
    /// otherwise.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub caller_fpenv: Option<super::environment::CallerEnvSection>,
    /// Dispatch variants of the kernel compared bit for bit; absent for a single variant.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub variants: Option<super::environment::VariantsSection>,
}

/// The `recorded` section: a check of outputs recorded elsewhere.
#[derive(Clone, Debug, Serialize)]
pub struct RecordedSection {
    /// The arrays read, one per file (per part for merged shards).
    pub files: Vec<RecordedFile>,
    /// Elements per array (summed over parts).
    pub entries: u64,
    /// Distinct inputs inside the range: the measured inputs.
    pub distinct_inputs: u64,
    /// Elements whose input lies outside the range (not measured).
    pub outside_range: u64,
    /// Elements that repeat an input recorded before them.
    pub repeated: u64,
    /// Inputs recorded more than once with different outputs.
    pub non_deterministic: NonDeterminism,
    /// Measures that need a callable kernel and were not run, and why.
    pub not_run: Vec<MeasureNote>,
    /// Measures run over the recorded inputs only, and what that limits.
    pub limited_to_recorded: Vec<MeasureNote>,
}

/// One recorded array.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RecordedFile {
    /// "inputs", "outputs" or "grads".
    pub array: String,
    /// The path given.
    pub path: String,
    /// Its element type.
    pub dtype: String,
}

/// Inputs whose repeats disagree: the kernel gave different outputs for the same input.
#[derive(Clone, Debug, Serialize)]
pub struct NonDeterminism {
    /// How many inputs.
    pub inputs: u64,
    /// The first few in bit order: the input, the output measured (its first occurrence) and
    /// another output recorded for it.
    pub examples: Vec<[BitsValue; 3]>,
}

/// A measure and a sentence about it.
#[derive(Clone, Debug, Serialize)]
pub struct MeasureNote {
    /// The measure.
    pub measure: &'static str,
    /// Why it was not run, or what limits it.
    pub why: String,
}

/// The `shard` object of a shard's report.
#[derive(Clone, Debug, Serialize)]
pub struct ShardSection {
    /// Which part, 1-based.
    pub index: u64,
    /// How many parts.
    pub count: u64,
    /// The layout of `state` ([`crate::check::STATE_VERSION`]): `merge` joins only states of
    /// the layout it reads.
    pub state_version: u32,
    /// The measured state (accumulators, kept points, probe points, crashes), for `merge`.
    pub state: serde_json::Value,
}

/// One hygiene check of the runner (buffer overruns, in-place use, thread safety, …).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct HygieneEntry {
    /// The check's name.
    pub check: String,
    /// Whether it passed.
    pub passed: bool,
    /// One line of detail.
    pub detail: String,
    /// The check in a sentence: what it requires and, when it failed, what went in, what
    /// came out and what was expected (filled in when the report is assembled).
    #[serde(default)]
    pub message: String,
}
