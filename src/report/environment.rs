//! The report sections that set one run of a kernel beside another: the caller's FP
//! environment against the default one (`caller_fpenv`), and dispatch variants against each
//! other (`variants`).  Their JSON keys are documented in [`super::json`].

use crate::report::BitsValue;
use serde::Serialize;

/// Inputs listed where two runs differ: the first few in bit order (the counts are exact).
pub const LISTED_DIFFERENCES: usize = 8;

/// One input where two runs gave different outputs.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Difference {
    /// The input.
    pub input: BitsValue,
    /// The first run's output (`null`: it crashed or hung there).
    pub first: Option<BitsValue>,
    /// The second run's output.
    pub second: Option<BitsValue>,
}

/// Two runs over the same inputs compared output by output (NaNs compare equal whatever
/// their payload; a crash compares equal only to a crash).
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct OutputComparison {
    /// Inputs called in both runs: the measured inputs and the edge probes.
    pub compared: u64,
    /// Inputs whose outputs differ.
    pub differing: u64,
    /// The first differing inputs in bit order, at most [`LISTED_DIFFERENCES`].
    pub first_differences: Vec<Difference>,
    /// Differing inputs that are subnormal.
    pub at_subnormal_inputs: u64,
    /// Where the first run's output is subnormal and the second run's is a zero.
    pub outputs_flushed: u64,
    /// Subnormal inputs whose output in the second run is the output of the zero of the same
    /// sign while it was not in the first run: the input was read as zero (forward and
    /// derivative roles; 0 for gradients, whose g differs per input).
    pub inputs_read_as_zero: u64,
}

/// A verdict in short, for a run whose full report is not kept.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct VerdictSummary {
    /// 0, 1 or 3.
    pub exit_code: i32,
    /// The failed findings in sentences.
    pub failed: Vec<String>,
    /// The run's max_ulp.
    pub max_ulp: f64,
    /// Non-finite runs found.
    pub non_finite_runs: u64,
}

/// `caller_fpenv`: the check ran in the caller's FP environment; what changed against the
/// default environment.
#[derive(Clone, Debug, Serialize)]
pub struct CallerEnvSection {
    /// The environment as given: "ftz", "daz", a rounding mode.
    pub environment: Vec<String>,
    /// "MXCSR" or "FPCR".
    pub register: &'static str,
    /// The default control word, "0x…".
    pub default_word: String,
    /// The caller's control word, "0x…".
    pub caller_word: String,
    /// The default environment's run (first) against the caller's (second).
    pub outputs: OutputComparison,
    /// The verdict in the default environment (the report's own verdict is the caller's).
    pub default_verdict: VerdictSummary,
    /// Whether the verdict (exit status) differs between the two environments.
    pub verdict_changed: bool,
    /// What changed, in sentences.
    pub message: String,
}

/// One variant's figures in the `variants` section.
#[derive(Clone, Debug, Serialize)]
pub struct VariantFigures {
    /// The variant's name: its symbol, with the CPU mask it ran under in brackets if any.
    pub name: String,
    /// The exported symbol.
    pub symbol: String,
    /// `GLIBC_TUNABLES` of its worker, if any.
    pub cpu_mask: Option<String>,
    /// max_ulp.
    pub max_ulp: f64,
    /// mean_ulp.
    pub mean_ulp: f64,
    /// Fraction correctly rounded.
    pub correctly_rounded: f64,
    /// Non-finite runs.
    pub non_finite_runs: u64,
    /// Nanoseconds per element.
    pub ns_per_element: Option<f64>,
    /// Its verdict's exit status.
    pub exit_code: i32,
}

/// One variant set beside the first variant.
#[derive(Clone, Debug, Serialize)]
pub struct VariantPair {
    /// The first variant's name.
    pub first: String,
    /// The other's.
    pub second: String,
    /// Output by output.
    pub outputs: OutputComparison,
}

/// `variants`: several symbols (or CPU masks) for one kernel, each measured, compared bit for
/// bit with the first.
#[derive(Clone, Debug, Serialize)]
pub struct VariantsSection {
    /// Each variant's figures, in the order given.
    pub variants: Vec<VariantFigures>,
    /// Whether every variant gave the same bits as the first on every compared input.
    pub agree: bool,
    /// Each other variant against the first.
    pub pairs: Vec<VariantPair>,
    /// The finding in a sentence.
    pub message: String,
}
