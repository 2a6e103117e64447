//! Measures over evaluated points: accuracy, non-finite runs, thresholds, special-value rules,
//! derivative kinks, and the shape of forward kernels (monotonicity, jumps).
//!
//! Measures see the kernel only through [`Probe`], so the ones that must look closer (the exact
//! ends of a non-finite run, a kernel's threshold) can ask for more inputs.

mod accuracy;
mod exact_sum;
mod kinks;
mod neighbourhood;
mod nonfinite;
mod rounding;
mod shape;
mod special;
mod thresholds;
pub mod valid;

pub use accuracy::{
    accuracy, Accuracy, AccuracyAcc, BinadeRow, Bucket, BucketPoint, FloorView, HistogramBin,
    RegionRow, Worst,
};
pub use exact_sum::ExactSum;
pub use kinks::{kink_sides, KinkSide};
pub use neighbourhood::{neighbourhoods, NearPoint, Neighbourhood};
pub use nonfinite::{
    classes, continue_part, non_finite_part, non_finite_runs, Classes, Known, NonFiniteRun,
    NonFiniteStream, RunCell, RunSummary, RunTotals, RunsPart, ValueClass, LISTED_RUNS,
    MAX_GAP_SCAN,
};
pub use rounding::{RoundingCounts, RoundingDiagnosis, DIAGNOSIS_MIN_POINTS, DIAGNOSIS_SHARE};
pub use shape::{shape, Jump, Shape, ShapeAcc, Violation};
pub use special::{special_values, RuleContext, SpecialRule};
pub use thresholds::{thresholds, ThresholdReport};

use crate::format::{Class, Format};
use crate::reference::Reference;

/// One evaluated input: what the kernel returned and the correctly rounded reference.
#[derive(Clone, Debug, serde::Serialize, serde::Deserialize)]
pub struct Point {
    /// The input pattern x.
    pub input: u32,
    /// The second kernel argument (a gradient's upstream g), if any.
    pub second: Option<u32>,
    /// The kernel's output; `None` when the kernel crashed on this input.
    pub output: Option<u32>,
    /// RN of the exact value (for a kink in a derivative role: the right-hand value).
    pub reference: Reference,
    /// At a kink of a derivative role: RN of the left-hand value.
    pub left: Option<Reference>,
}

/// Points that differ only in their input: the consecutive patterns `first..=last`, each with
/// one kernel output and one reference, no second argument and no left-hand reference (a
/// constant-reference span whose kernel outputs are all equal).
#[derive(Clone, Copy, Debug)]
pub struct Uniform {
    /// The first input pattern.
    pub first: u32,
    /// The last input pattern (at least `first`).
    pub last: u32,
    /// The kernel's output at every input.
    pub output: u32,
    /// The reference at every input.
    pub reference: Reference,
}

impl Uniform {
    /// The point of one input of the span.
    #[inline]
    pub fn point(&self, input: u32) -> Point {
        Point {
            input,
            second: None,
            output: Some(self.output),
            reference: self.reference,
            left: None,
        }
    }
}

/// Points whose every output is its reference and equals the exact value (error 0): the
/// consecutive patterns `first..=last` of one sign and one exponent field, no second argument
/// and no left-hand reference, each point built on demand by `point` (a span whose references
/// are the inputs scaled by a power of two, and the kernel returned them all).
pub struct ExactSpan<'a> {
    /// The first input pattern.
    pub first: u32,
    /// The last input pattern (at least `first`).
    pub last: u32,
    /// The point of one input of the span.
    pub point: &'a (dyn Fn(u32) -> Point + Sync),
}

/// Asks the kernel and the reference about more inputs.
pub trait Probe {
    /// Evaluates inputs (any order); the result is in the same order, leaving out inputs whose
    /// reference could not be computed.
    fn probe(&mut self, inputs: &[u32]) -> Vec<Point>;
}

/// Where findings go as they are found, one by one, for people who want every one of them
/// (the report itself keeps exact totals and bounded summaries).
pub trait FindingSink {
    /// A finished non-finite run.
    fn run(&mut self, run: &NonFiniteRun);
    /// A point whose error exceeds the listing limit (`--csv-points-over`).
    fn point(&mut self, point: &Worst);
}

/// A sink that keeps nothing.
pub struct NoSink;

impl FindingSink for NoSink {
    fn run(&mut self, _: &NonFiniteRun) {}
    fn point(&mut self, _: &Worst) {}
}

/// The value classes that non-finite runs compare.
pub fn value_class(format: &dyn Format, bits: u32) -> &'static str {
    match format.classify(bits) {
        Class::Nan => "nan",
        Class::Infinite if format.is_sign_negative(bits) => "-inf",
        Class::Infinite => "+inf",
        _ => "finite",
    }
}

/// Whether a pattern is a finite number.
pub fn is_finite(format: &dyn Format, bits: u32) -> bool {
    format.layout().is_finite(bits)
}

#[cfg(test)]
mod merge_tests;
