//! Checking a Rust kernel in process: the entry point for a kernel author's own `cargo test`.
//!
//! [`Check`] names a catalog function and a format, and runs a closure over the sweep (every
//! input for the 16-bit formats, dense and edge samples for binary32 unless told otherwise),
//! against correctly rounded references, returning the same [`CheckReport`] that `ulpgauge
//! check` writes as JSON. No shared library, no worker process: the closure runs in the test's
//! own process, so a crash is the test's crash.
//!
//! ```
//! use ulpgauge::api::{half::f16, Check, Format};
//!
//! // A binary16 sigmoid computed in binary32 and rounded once.
//! let sigmoid = |x: f16| f16::from_f32(1.0 / (1.0 + (-x.to_f32()).exp()));
//! let report = Check::new("sigmoid", Format::F16).run_f16(sigmoid).unwrap();
//! assert_eq!(report.sweep.inputs, 65536); // every binary16 input
//! assert!(report.accuracy.figures.max_ulp <= 1.0);
//! ```

use crate::activation::{catalog, lookup, Constants};
use crate::check::{run_check, CheckConfig, CheckRole, InProcessKernel, ReferencePath};
use crate::format::{Bfloat16, Binary16, Binary32};
use crate::reference::ParamRounding;
use crate::sweep::{InputRange, SampleMode, SweepKind, SweepSpec};

pub use crate::report::model::CheckReport;
/// The `half` crate whose `f16` and `bf16` the closures of [`Check::run_f16`] and
/// [`Check::run_bf16`] take, re-exported so that the versions match.
pub use half;

/// The number formats a kernel may compute in.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// IEEE 754 binary32 (`f32`).
    F32,
    /// IEEE 754 binary16 (`half::f16`).
    F16,
    /// bfloat16 (`half::bf16`).
    Bf16,
}

impl Format {
    fn format(self) -> &'static dyn crate::format::Format {
        match self {
            Format::F32 => &Binary32,
            Format::F16 => &Binary16,
            Format::Bf16 => &Bfloat16,
        }
    }
}

/// Which inputs a check measures.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Sweep {
    /// Every bit pattern of the range (the default for 16-bit formats).
    Exhaustive,
    /// 256 significands per binade and the edge cases (the default for binary32).
    DenseAndEdge,
    /// This many seeded random bit patterns.
    Random(u64),
}

/// A check of one kernel against one catalog function, configured step by step.
#[derive(Clone, Debug)]
pub struct Check {
    function: String,
    format: Format,
    derivative: bool,
    params: Vec<String>,
    range: Option<String>,
    sweep: Option<Sweep>,
    max_ulp: Option<f64>,
}

impl Check {
    /// A check of `function` (a catalog name, as `ulpgauge functions` lists them) in `format`.
    pub fn new(function: &str, format: Format) -> Self {
        Check {
            function: function.to_string(),
            format,
            derivative: false,
            params: Vec::new(),
            range: None,
            sweep: None,
            max_ulp: None,
        }
    }

    /// The kernel computes f′ rather than f.
    pub fn derivative(mut self) -> Self {
        self.derivative = true;
        self
    }

    /// A parameter as an exact decimal, e.g. `.param("alpha", "0.5")`.
    pub fn param(mut self, name: &str, value: &str) -> Self {
        self.params.push(format!("{name}={value}"));
        self
    }

    /// Only the inputs in [lo, hi), as decimals (or `inf`, `-inf`), e.g. `"-8,8"`.
    pub fn range(mut self, range: &str) -> Self {
        self.range = Some(range.to_string());
        self
    }

    /// Which inputs to measure.
    pub fn sweep(mut self, sweep: Sweep) -> Self {
        self.sweep = Some(sweep);
        self
    }

    /// The verdict fails (`report.verdict.exit_code == 1`) when the max ulp error exceeds `u`.
    pub fn max_ulp(mut self, u: f64) -> Self {
        self.max_ulp = Some(u);
        self
    }

    /// Runs a binary32 kernel.
    pub fn run_f32(
        &self,
        mut kernel: impl FnMut(f32) -> f32 + Send,
    ) -> Result<CheckReport, String> {
        self.expect(Format::F32)?;
        self.run_bits(move |x| kernel(f32::from_bits(x)).to_bits())
    }

    /// Runs a binary16 kernel.
    pub fn run_f16(
        &self,
        mut kernel: impl FnMut(half::f16) -> half::f16 + Send,
    ) -> Result<CheckReport, String> {
        self.expect(Format::F16)?;
        self.run_bits(move |x| u32::from(kernel(half::f16::from_bits(x as u16)).to_bits()))
    }

    /// Runs a bfloat16 kernel.
    pub fn run_bf16(
        &self,
        mut kernel: impl FnMut(half::bf16) -> half::bf16 + Send,
    ) -> Result<CheckReport, String> {
        self.expect(Format::Bf16)?;
        self.run_bits(move |x| u32::from(kernel(half::bf16::from_bits(x as u16)).to_bits()))
    }

    /// Runs a kernel on bit patterns of the format (in the low bits of a `u32`).
    pub fn run_bits(
        &self,
        mut kernel: impl FnMut(u32) -> u32 + Send,
    ) -> Result<CheckReport, String> {
        let config = self.config()?;
        let mut kernel = InProcessKernel::new(move |x: u32, _g: Option<u32>| Some(kernel(x)));
        run_check(&mut kernel, &config)
    }

    fn expect(&self, format: Format) -> Result<(), String> {
        if self.format == format {
            Ok(())
        } else {
            Err(format!(
                "the check is for {:?} but the kernel takes {format:?}",
                self.format
            ))
        }
    }

    fn config(&self) -> Result<CheckConfig, String> {
        let format = self.format.format();
        let function = lookup(&self.function).ok_or_else(|| {
            let names: Vec<_> = catalog().iter().map(|f| f.name()).collect();
            format!(
                "unknown function '{}' (known: {})",
                self.function,
                names.join(", ")
            )
        })?;
        let params = Constants::parse_params(function, &self.params)?;
        let range = match &self.range {
            Some(text) => InputRange::parse(format, text)?,
            None => InputRange::all(format),
        };
        let sweep = self.sweep.unwrap_or(if format.width() <= 16 {
            Sweep::Exhaustive
        } else {
            Sweep::DenseAndEdge
        });
        let (kinds, random_points) = match sweep {
            Sweep::Exhaustive => (vec![SweepKind::Exhaustive], 0),
            Sweep::DenseAndEdge => (vec![SweepKind::Dense, SweepKind::Edge], 0),
            Sweep::Random(n) if n > 0 => (vec![SweepKind::Random], n),
            Sweep::Random(_) => return Err("a random sweep needs at least one point".into()),
        };
        if let Some(u) = self.max_ulp.filter(|u| !(u.is_finite() && *u >= 0.0)) {
            return Err(format!("max_ulp must be a finite number >= 0, got {u}"));
        }
        Ok(CheckConfig {
            function,
            format,
            input_format: format,
            role: if self.derivative {
                CheckRole::Derivative
            } else {
                CheckRole::Forward
            },
            params,
            param_rounding: ParamRounding::Exact,
            sweep: SweepSpec {
                kinds,
                range,
                per_binade: 256,
                random_points,
                neighbours: 16,
                seed: 1,
                mode: SampleMode::Bits,
            },
            abs_floor: None,
            max_ulp: self.max_ulp,
            allow_non_finite: false,
            list_over: None,
            listed_runs: crate::measure::LISTED_RUNS,
            library: None,
            symbol: None,
            progress: false,
            reference: ReferencePath::Auto,
            shard: None,
        })
    }
}
