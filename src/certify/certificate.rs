//! The certificate: what was required, what was measured, over which inputs, of which file,
//! built by which compiler, on which machine, when.
//!
//! JSON schema `ulpgauge-certificate/1` (values V are {"bits", "value"} objects as in check
//! reports):
//!
//! - `schema`, `verdict` ("pass" | "fail" | "crashed"), `exit_code` (0 | 1 | 3), `statement`
//!   (the coverage in words: exhaustive, or evidence over sampled points and not proof).
//! - `spec`: {path, sha256}.
//! - `kernel`: {library, symbol, function, format, input_format, output_format, role,
//!   from_output, params, param_rounding} (`format` the outputs'; the pair differs only for a
//!   kernel that mixes formats).
//! - `requirements`: [{key, requirement, limit, measured, shown, passed, detail}].
//! - `sweep`: {kinds, range, coverage, inputs, points, seed, per_binade, random_points,
//!   reference_failures}; `ranges`: the same for each `require.range` sweep, with `range`.
//! - `crash`: null or {signal, input: V, count}.
//! - `provenance`: {ulpgauge, mpfr, gmp, library: {path, sha256, compiler}, cpu: {model,
//!   features}, date}.
//! - `check`: the full check report (schema `ulpgauge-check/1`) the verdicts come from.

use super::judge::Judged;
use super::spec::Spec;
use crate::check::Provenance;
use crate::report::model::CrashReport;
use crate::report::CheckReport;
use crate::sweep::{Coverage, SweepKind};
use serde::Serialize;

/// Version tag of the certificate schema.
pub const CERTIFICATE_SCHEMA: &str = "ulpgauge-certificate/1";

/// The spec a certificate answers.
#[derive(Clone, Debug, Serialize)]
pub struct SpecRef {
    /// Path as given.
    pub path: String,
    /// SHA-256 of the spec file.
    pub sha256: String,
}

/// The kernel certified.
#[derive(Clone, Debug, Serialize)]
pub struct KernelRef {
    /// Library path.
    pub library: String,
    /// Symbol.
    pub symbol: String,
    /// Catalog function.
    pub function: String,
    /// Format (of the outputs).
    pub format: &'static str,
    /// Format of the inputs (equal to `output_format` unless the kernel mixes formats).
    pub input_format: &'static str,
    /// Format of the outputs.
    pub output_format: &'static str,
    /// "forward", "derivative" or "gradient".
    pub role: String,
    /// Gradient kernels fed f(x).
    pub from_output: bool,
    /// Parameters as the reference used them.
    pub params: std::collections::BTreeMap<String, String>,
    /// How parameters entered the reference.
    pub param_rounding: crate::reference::ParamRounding,
}

/// A sweep and its coverage.
#[derive(Clone, Debug, Serialize)]
pub struct SweepRef {
    /// The `require.range` this sweep measured (`null` for the main sweep).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub require_range: Option<String>,
    /// Kinds combined.
    pub kinds: Vec<SweepKind>,
    /// Range of inputs ("all" or "LO,HI").
    pub range: String,
    /// Exhaustive or sampled.
    pub coverage: Coverage,
    /// Inputs evaluated by the sweep.
    pub inputs: u64,
    /// Points in the accuracy figures (finite input, output and reference).
    pub points: u64,
    /// Seed.
    pub seed: u64,
    /// Significands per binade of a dense sweep.
    pub per_binade: u32,
    /// Samples of a random sweep.
    pub random_points: Option<u64>,
    /// Inputs left out because the reference engine could not decide them.
    pub reference_failures: u64,
}

impl SweepRef {
    /// The sweep of a report.
    pub fn of(report: &CheckReport, require_range: Option<String>) -> Self {
        SweepRef {
            require_range,
            kinds: report.sweep.kinds.clone(),
            range: report.sweep.range.clone(),
            coverage: report.sweep.coverage,
            inputs: report.sweep.inputs,
            points: report.accuracy.figures.points,
            seed: report.sweep.seed,
            per_binade: report.sweep.per_binade,
            random_points: report.sweep.random_points,
            reference_failures: report.reference_failures.count,
        }
    }
}

/// The certificate.
#[derive(Clone, Debug, Serialize)]
pub struct Certificate {
    /// [`CERTIFICATE_SCHEMA`].
    pub schema: &'static str,
    /// "pass", "fail" or "crashed".
    pub verdict: &'static str,
    /// 0, 1 or 3.
    pub exit_code: i32,
    /// The coverage in words.
    pub statement: String,
    /// The spec.
    pub spec: SpecRef,
    /// The kernel.
    pub kernel: KernelRef,
    /// Every requirement judged.
    pub requirements: Vec<Judged>,
    /// The main sweep.
    pub sweep: SweepRef,
    /// The sweeps of the per-range requirements.
    pub ranges: Vec<SweepRef>,
    /// The first crash or hang, if any.
    pub crash: Option<CrashReport>,
    /// Versions, library, machine, date.
    pub provenance: Provenance,
    /// The check report behind the verdicts.
    pub check: CheckReport,
}

/// The coverage of the main sweep and the range sweeps, in words.
fn statement(main: &SweepRef, ranges: &[SweepRef], format: &str) -> String {
    let all_exhaustive = main.coverage == Coverage::Exhaustive
        && ranges.iter().all(|r| r.coverage == Coverage::Exhaustive);
    let left_out: u64 =
        main.reference_failures + ranges.iter().map(|r| r.reference_failures).sum::<u64>();
    let mut s = if all_exhaustive {
        format!(
            "Exhaustive: every one of the {} {format} bit patterns in range {} was evaluated, so the \
             verdicts hold for every input of that range.",
            main.inputs, main.range
        )
    } else {
        format!(
            "Sampled: {} {format} inputs of range {} were evaluated ({} sweep, seed {}). The \
             verdicts are evidence over the sampled points, not proof: inputs outside the sample \
             were not evaluated.",
            main.inputs,
            main.range,
            main.kinds
                .iter()
                .map(|k| format!("{k:?}").to_lowercase())
                .collect::<Vec<_>>()
                .join("+"),
            main.seed
        )
    };
    if left_out > 0 {
        s.push_str(&format!(
            " {left_out} inputs were left out because the reference could not be decided."
        ));
    }
    s
}

/// Assembles the certificate; the exit status is 3 on a crash, 1 on a failed requirement.
pub fn certificate(
    spec: &Spec,
    report: CheckReport,
    range_reports: &[CheckReport],
    requirements: Vec<Judged>,
) -> Certificate {
    let crash = report
        .crash
        .clone()
        .or_else(|| range_reports.iter().find_map(|r| r.crash.clone()));
    let failed = requirements.iter().any(|r| !r.passed);
    let (verdict, exit_code) = match (crash.is_some(), failed) {
        (true, _) => ("crashed", 3),
        (false, true) => ("fail", 1),
        (false, false) => ("pass", 0),
    };
    let sweep = SweepRef::of(&report, None);
    let ranges: Vec<SweepRef> = spec
        .require
        .ranges
        .iter()
        .zip(range_reports)
        .map(|(l, r)| SweepRef::of(r, Some(l.text.clone())))
        .collect();
    let mut provenance = report.provenance.clone();
    provenance.sweep = serde_json::to_value(&sweep).unwrap_or_default();
    Certificate {
        schema: CERTIFICATE_SCHEMA,
        verdict,
        exit_code,
        statement: statement(&sweep, &ranges, report.input_format),
        spec: SpecRef {
            path: spec.path.display().to_string(),
            sha256: spec.sha256.clone(),
        },
        kernel: KernelRef {
            library: spec.library.display().to_string(),
            symbol: spec.symbol.clone(),
            function: report.function.clone(),
            format: report.format,
            input_format: report.input_format,
            output_format: report.output_format,
            role: report.role.clone(),
            from_output: report.from_output,
            params: report.params.clone(),
            param_rounding: report.param_rounding,
        },
        requirements,
        sweep,
        ranges,
        crash,
        provenance,
        check: report,
    }
}

fn cut(s: &str, n: usize) -> String {
    if s.chars().count() <= n {
        s.to_string()
    } else {
        let mut t: String = s.chars().take(n - 1).collect();
        t.push('…');
        t
    }
}

/// The verdict table printed on the terminal.
pub fn table(c: &Certificate) -> String {
    let mut s = String::new();
    let k = &c.kernel;
    s.push_str(&format!(
        "certify {} {} {} — {}\n",
        k.function,
        k.role,
        if k.input_format == k.output_format {
            k.format.to_string()
        } else {
            format!("{} → {}", k.input_format, k.output_format)
        },
        k.symbol
    ));
    if let Some(lib) = &c.provenance.library {
        s.push_str(&format!(
            "  library   {} (sha256 {})\n",
            lib.path,
            lib.sha256.as_deref().map_or("?".into(), |h| cut(h, 17))
        ));
        s.push_str(&format!(
            "  compiler  {}\n",
            lib.compiler
                .as_deref()
                .unwrap_or("unknown (no ELF .comment)")
        ));
    }
    s.push_str(&format!(
        "  sweep     {} over range {}: {} inputs, {} measured points\n\n",
        match c.sweep.coverage {
            Coverage::Exhaustive => "exhaustive",
            Coverage::Sampled => "sampled",
        },
        c.sweep.range,
        c.sweep.inputs,
        c.sweep.points
    ));
    let w = c
        .requirements
        .iter()
        .map(|r| r.requirement.chars().count())
        .max()
        .unwrap_or(0)
        .max("requirement".len());
    s.push_str(&format!(
        "  {:<w$}  {:>18}  verdict\n",
        "requirement", "measured"
    ));
    for r in &c.requirements {
        s.push_str(&format!(
            "  {:<w$}  {:>18}  {}\n",
            r.requirement,
            r.shown,
            if r.passed { "pass" } else { "FAIL" }
        ));
    }
    let failures: Vec<_> = c.requirements.iter().filter(|r| !r.passed).collect();
    if !failures.is_empty() {
        s.push('\n');
        for r in failures {
            s.push_str(&format!("  FAILED {}: {}\n", r.key, r.detail));
        }
    }
    if let Some(crash) = &c.crash {
        s.push_str(&format!(
            "\n  CRASHED {} at x = {} ({}), {} inputs in all\n",
            crash.signal, crash.input.value, crash.input.bits, crash.count
        ));
    }
    s.push_str(&format!("\n  {}\n", c.statement));
    s.push_str(&format!(
        "  verdict   {}\n",
        match c.verdict {
            "pass" => "PASS: every requirement met",
            "fail" => "FAIL: a requirement is not met",
            _ => "CRASHED: the kernel crashed or hung",
        }
    ));
    s
}
