//! `check`: sweep a kernel's inputs, compare with correctly rounded references, measure, and
//! gather one [`CheckReport`].
//!
//! The kernel is reached only through [`KernelUnderTest`]; the shared-library runner and the
//! in-process [`InProcessKernel`] both implement it.

mod builtin;
mod kernel;
mod probe;
mod provenance;
mod runner_kernel;

pub use builtin::{blended_elu, builtin, BUILTIN_NAMES};
pub use kernel::{HygieneEntry, InProcessKernel, KernelCrash, KernelOutput, KernelUnderTest};
pub use probe::{gradient_factor, Prober, RoleReferences};
pub use provenance::{cpu_info, gmp_version, library_info, mpfr_version, utc_now, Provenance};
pub use runner_kernel::RunnerKernel;

use crate::activation::{Constants, Entry, Role};
use crate::format::Format;
use crate::measure::{self, Point, Probe, RuleContext};
use crate::reference::{Evaluator, ParamRounding, Real};
use crate::report::model::*;
use crate::report::BitsValue;
use crate::sweep::{self, Coverage, Inputs, SweepKind, SweepSpec};
use rug::Rational;
use std::path::PathBuf;

/// What the kernel computes: the runner's role type, shared so a manifest entry maps 1:1.
pub use crate::kernel::KernelRole as CheckRole;
use crate::reference::fast::FastEvaluator;

/// Everything a check needs besides the kernel.
#[derive(Clone)]
pub struct CheckConfig {
    /// Catalog function.
    pub function: Entry,
    /// Format of the kernel.
    pub format: &'static dyn Format,
    /// What the kernel computes.
    pub role: CheckRole,
    /// Validated `--param` values.
    pub params: Vec<(String, Rational)>,
    /// How parameters enter the reference.
    pub param_rounding: ParamRounding,
    /// The sweep.
    pub sweep: SweepSpec,
    /// `--abs-floor`.
    pub abs_floor: Option<f64>,
    /// `--max-ulp`.
    pub max_ulp: Option<f64>,
    /// List every point whose error exceeds this (CSV `point` rows).
    pub list_over: Option<f64>,
    /// Library file, for provenance.
    pub library: Option<PathBuf>,
    /// Symbol, for the report.
    pub symbol: Option<String>,
    /// Allow a progress bar on stderr.
    pub progress: bool,
    /// Which reference path computes the sweep's references.
    pub reference: ReferencePath,
}

/// How references are computed (`--reference`).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ReferencePath {
    /// The proven double-double fast path where it decides, MPFR elsewhere (identical results).
    #[default]
    Auto,
    /// MPFR only.
    Mpfr,
}

/// Hygiene sample size and throughput sample size.
const HYGIENE_SAMPLE: usize = 1024;
const SPEED_SAMPLE: usize = 8192;

/// Measured inputs evaluated per streamed chunk: the main process holds one chunk of points.
const STREAM_CHUNK: usize = 1 << 18;

/// An evenly spread sample of the finite inputs.
fn spread(format: &dyn Format, inputs: &Inputs, n: usize) -> Vec<u32> {
    let finite = inputs.finite(format);
    let len = finite.len();
    if len <= n as u64 {
        return finite.iter().collect();
    }
    finite.at_sorted((0..n as u64).map(|i| i * len / n as u64))
}

/// Ordinal span of the finite inputs, if any.
fn ordinal_span(format: &dyn Format, inputs: &Inputs) -> Option<(i64, i64)> {
    let ends = inputs
        .finite(format)
        .runs()
        .iter()
        .flat_map(|&(a, b)| [format.ordinal(a), format.ordinal(b)])
        .collect::<Vec<i64>>();
    Some((*ends.iter().min()?, *ends.iter().max()?))
}

/// What an exhaustive sweep keeps of its points besides the accumulators: the few points
/// that special-value rules and kink reports look at.
#[derive(Default)]
struct Kept {
    /// Measured points at ±0, at kinks, and the first and last of each sign whose reference
    /// is subnormal; by input.
    points: std::collections::BTreeMap<u32, Point>,
    /// Inputs of the first and last subnormal-reference point of each sign (+, −).
    subnormal_ends: [Option<(u32, u32)>; 2],
}

impl Kept {
    fn add(&mut self, format: &dyn Format, p: &Point) {
        let sign = format.infinity(true) & !format.infinity(false);
        if p.input & !sign == 0 || p.left.is_some() {
            self.points.insert(p.input, p.clone());
        }
        if measure::is_finite(format, p.input)
            && format.classify(p.reference.bits) == crate::format::Class::Subnormal
        {
            let side = &mut self.subnormal_ends[format.is_sign_negative(p.input) as usize];
            match side {
                None => {
                    *side = Some((p.input, p.input));
                    self.points.insert(p.input, p.clone());
                }
                Some((_, last)) => {
                    // Points come in bit order: this one is the new last; the old last goes
                    // unless it is kept for another reason.
                    let old = *last;
                    *last = p.input;
                    let first = side.expect("set").0;
                    if old != first && old & !sign != 0 {
                        let at_kink = self.points.get(&old).is_some_and(|q| q.left.is_some());
                        if !at_kink {
                            self.points.remove(&old);
                        }
                    }
                    self.points.insert(p.input, p.clone());
                }
            }
        }
    }
}

/// Runs a check of one kernel.
pub fn run_check(
    kernel: &mut dyn KernelUnderTest,
    config: &CheckConfig,
) -> Result<CheckReport, String> {
    let format = config.format;
    let function = config.function;
    let constants = Constants::resolve(function, &config.params, config.param_rounding, format);
    let kinks = function
        .kinks(&constants)
        .into_iter()
        .map(|k| (k.at as f64, k.left))
        .collect();
    let forward = Evaluator::new(function, Role::Forward, constants.clone(), format);
    let derivative = Evaluator::new(function, Role::Derivative, constants.clone(), format);
    let fast = (config.reference == ReferencePath::Auto).then(|| {
        (
            FastEvaluator::new(&forward),
            FastEvaluator::new(&derivative),
        )
    });
    let refs = RoleReferences {
        forward,
        derivative,
        role: config.role,
        seed: config.sweep.seed,
        kinks,
        fast,
    };
    let spec = &config.sweep;
    let role_is_forward = config.role == CheckRole::Forward;
    let (interesting, role_thresholds) = sweep::interesting_points(
        &refs.forward,
        &refs.derivative,
        role_is_forward,
        spec.neighbours,
    );
    let plan = sweep::plan(format, spec, interesting)?;
    let mut probes = plan.probes.clone();
    probes.extend(sweep::format_specials(format));
    if !role_is_forward {
        // Both zeros and every kink, so the kink report never depends on the sweep.
        for (at, _) in &refs.kinks {
            if let Some(b) = format.from_f64_exact(*at) {
                probes.push(b);
                probes.push(b | (format.infinity(true) & !format.infinity(false)));
            }
        }
    }
    probes.sort_unstable();
    probes.dedup();

    let exhaustive = plan.coverage == Coverage::Exhaustive;
    let mut prober = Prober::new(kernel, &refs, config.progress);
    prober.expect(plan.measured.len() + probes.len() as u64);
    // Measured points stream through the accumulators chunk by chunk, in bit order; a sampled
    // sweep also keeps them all (its runs' gaps are scanned later), an exhaustive one only the
    // few that special values and kinks need.
    let span = exhaustive
        .then(|| ordinal_span(format, &plan.measured))
        .flatten();
    let mut accuracy = measure::AccuracyAcc::new(format, config.abs_floor, config.list_over, span);
    let mut shape =
        role_is_forward.then(|| measure::ShapeAcc::new(format, function.facts().monotone));
    let mut runs = exhaustive.then(|| measure::NonFiniteStream::new(format));
    let mut kept = Kept::default();
    let mut measured: Vec<Point> = Vec::new();
    for chunk in plan.measured.chunks(STREAM_CHUNK) {
        let points = prober.probe(&chunk);
        for p in &points {
            accuracy.add(p);
            if let Some(s) = &mut shape {
                s.add(p);
            }
            if let Some(r) = &mut runs {
                r.add(p);
                kept.add(format, p);
            }
        }
        if !exhaustive {
            measured.extend(points);
        }
    }
    if exhaustive {
        measured = kept.points.into_values().collect();
    }
    let probe_points = prober.probe(&probes);
    let evaluated_main = prober.evaluated;
    prober.expect(0);

    let accuracy = accuracy.finish();
    let non_finite = match runs {
        Some(r) => r.finish(),
        None => {
            let mut run_points: Vec<Point> = measured.clone();
            run_points.extend(
                probe_points
                    .iter()
                    .filter(|p| spec.range.contains(format, p.input))
                    .cloned(),
            );
            measure::non_finite_runs(format, &run_points, &mut prober, false)
        }
    };
    let search_kernel = !matches!(config.role, CheckRole::Gradient { .. });
    let thresholds = measure::thresholds(
        format,
        &role_thresholds,
        &mut prober,
        search_kernel,
        spec.neighbours,
    );
    let tolerance = config.max_ulp.unwrap_or(1.0).max(1.0);
    let rules_ctx = RuleContext {
        keeps_negative_zero: role_is_forward && function.facts().keeps_negative_zero,
        tolerance,
    };
    // For an exhaustive sweep `measured` holds only the kept points: the rules read the zeros
    // and the first and last subnormal-reference point per sign, the kinks the kink points.
    let special_values = measure::special_values(format, &probe_points, &measured, &rules_ctx);
    let kinks = if role_is_forward {
        Vec::new()
    } else {
        let mut all = probe_points.clone();
        all.extend(measured.iter().filter(|p| p.left.is_some()).cloned());
        all.sort_by_key(|p| p.input);
        all.dedup_by_key(|p| p.input);
        measure::kink_sides(format, &all, tolerance)
    };
    let shape = shape.map(|s| s.finish());

    let hygiene_sample = spread(format, &plan.measured, HYGIENE_SAMPLE);
    let (first, second) = prober.arguments(&hygiene_sample);
    let hygiene = prober.kernel().hygiene(&first, second.as_deref());
    let speed_sample = spread(format, &plan.measured, SPEED_SAMPLE);
    let (first, second) = prober.arguments(&speed_sample);
    let ns_per_element = prober.kernel().ns_per_element(&first, second.as_deref());
    let mut failures = prober.failures.clone();
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

    let crash = prober.crashes.first().map(|c| CrashReport {
        signal: c.signal.clone(),
        input: BitsValue::new(format, c.input),
        count: prober.crashes.len() as u64,
    });
    let mut failed = Vec::new();
    for h in hygiene.iter().filter(|h| !h.passed) {
        failed.push(format!("hygiene {}: {}", h.check, h.detail));
    }
    for r in special_values.iter().filter(|r| !r.passed) {
        failed.push(format!("{} at {}", r.rule, r.input.bits));
    }
    if let Some(limit) = config.max_ulp {
        if accuracy.max_ulp > limit {
            failed.push(format!(
                "max_ulp {} exceeds --max-ulp {limit}",
                accuracy.max_ulp
            ));
        }
    }
    let exit_code = if crash.is_some() {
        3
    } else if failed.is_empty() {
        0
    } else {
        1
    };
    let sweep_info = SweepInfo {
        kinds: spec.kinds.clone(),
        range: spec.range.text.clone(),
        coverage: plan.coverage,
        inputs: plan.measured.len(),
        probes: probes.len() as u64,
        extra_inputs: prober.evaluated - evaluated_main,
        per_binade: spec.per_binade,
        neighbours: spec.neighbours,
        random_points: spec
            .kinds
            .contains(&SweepKind::Random)
            .then_some(spec.random_points),
        random_mode: spec.kinds.contains(&SweepKind::Random).then_some(spec.mode),
        seed: spec.seed,
        interesting: plan
            .interesting
            .iter()
            .map(|i| InterestingPoint {
                input: BitsValue::new(format, i.input),
                what: i.what.clone(),
            })
            .collect(),
    };
    let params = constants
        .entries()
        .iter()
        .map(|(name, value)| {
            let text = match value {
                Real::Exact(q) => q.to_string(),
                Real::Irrational(name, _) => name.to_string(),
            };
            (name.to_string(), text)
        })
        .collect();
    let provenance = Provenance {
        ulpgauge: env!("CARGO_PKG_VERSION"),
        mpfr: mpfr_version(),
        gmp: gmp_version(),
        library: config.library.as_deref().map(library_info),
        cpu: cpu_info(),
        date: utc_now(),
        sweep: serde_json::json!({
            "kinds": sweep_info.kinds,
            "coverage": sweep_info.coverage,
            "points": accuracy.points,
            "inputs": sweep_info.inputs,
        }),
    };
    Ok(CheckReport {
        schema: SCHEMA,
        function: function.name().to_string(),
        format: format.name(),
        role: config.role.report_name().to_string(),
        from_output: matches!(config.role, CheckRole::Gradient { from_output: true }),
        params,
        param_rounding: config.param_rounding,
        kernel: KernelInfo {
            library: config.library.as_ref().map(|p| p.display().to_string()),
            symbol: config.symbol.clone(),
            ns_per_element,
        },
        sweep: sweep_info,
        accuracy: AccuracySection {
            figures: accuracy,
            coverage: plan.coverage,
        },
        non_finite,
        special_values,
        hygiene,
        crash,
        thresholds,
        kinks,
        shape,
        reference_failures,
        verdict: Verdict {
            exit_code,
            failed,
            max_ulp_limit: config.max_ulp,
        },
        provenance,
    })
}
