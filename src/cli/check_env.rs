//! `check` runs that measure one kernel more than once and set the runs side by side: in the
//! caller's FP environment beside the default one (`--caller-fpenv`, a manifest entry's
//! `caller-fpenv`), and as several dispatch variants (a manifest entry's `variants`, or
//! `--cpu-mask` given more than once).

use super::Failure;
use crate::check::{compare_runs, run_check, run_check_into, CheckConfig, KernelUnderTest};
use crate::kernel::{fpenv, KernelSpec, RunnerOptions};
use crate::report::environment::{
    CallerEnvSection, OutputComparison, VariantFigures, VariantPair, VariantsSection,
    VerdictSummary,
};
use crate::report::sentence::{count, shown_of};
use crate::report::{CheckReport, FindingsWriter};

/// The caller's FP environment of `--caller-fpenv`.
#[derive(Clone, Debug)]
pub struct CallerEnv {
    /// The names as given ("ftz", "daz", a rounding mode).
    pub names: Vec<String>,
    /// The default control word (this process's at start, status flags cleared).
    pub default_word: u32,
    /// The caller's control word.
    pub word: u32,
}

impl CallerEnv {
    /// Parses `ftz,daz,toward-zero`; one line naming what is wrong otherwise.
    pub fn parse(list: &str) -> Result<CallerEnv, String> {
        let base = fpenv::read().ok_or_else(|| {
            format!(
                "--caller-fpenv: ulpgauge cannot set the FP control register on {}",
                std::env::consts::ARCH
            )
        })?;
        let word = fpenv::caller_word(base, list)?;
        Ok(CallerEnv {
            names: list.split(',').map(|n| n.trim().to_string()).collect(),
            default_word: fpenv::control_bits(base),
            word,
        })
    }
}

/// One way of running the kernel: a symbol, and the CPU features its worker is shown.
#[derive(Clone, Debug)]
pub struct Variant {
    /// The exported symbol.
    pub symbol: String,
    /// `--cpu-mask`: the `glibc.cpu.hwcaps` list (e.g. "-AVX2,-FMA").
    pub cpu_mask: Option<String>,
}

impl Variant {
    /// "symbol" or "symbol [cpu-mask -AVX2]".
    pub fn name(&self) -> String {
        match &self.cpu_mask {
            Some(m) => format!("{} [cpu-mask {m}]", self.symbol),
            None => self.symbol.clone(),
        }
    }
}

/// Checks a `--cpu-mask` list: comma-separated CPU feature names as glibc spells them, each
/// with `-` (hide it) or `+` (show it).
pub fn check_cpu_mask(mask: &str) -> Result<(), String> {
    for item in mask.split(',') {
        let name = item.strip_prefix(['-', '+']).unwrap_or("");
        if name.is_empty() || !name.chars().all(|c| c.is_ascii_alphanumeric() || c == '_') {
            return Err(format!(
                "--cpu-mask: '{item}' is not -FEATURE or +FEATURE (e.g. -AVX2,-FMA)"
            ));
        }
    }
    Ok(())
}

/// The worker's `GLIBC_TUNABLES` for a CPU mask: ours after any the user set (glibc reads
/// them left to right, so the mask wins).
fn tunables(mask: &str) -> String {
    let ours = format!("glibc.cpu.hwcaps={mask}");
    match std::env::var("GLIBC_TUNABLES") {
        Ok(theirs) if !theirs.is_empty() => format!("{theirs}:{ours}"),
        _ => ours,
    }
}

/// The variants of a kernel: each symbol under each CPU mask (none: the machine as it is).
pub fn variants(symbols: &[String], masks: &[String]) -> Vec<Variant> {
    let masks: Vec<Option<String>> = if masks.is_empty() {
        vec![None]
    } else {
        masks.iter().cloned().map(Some).collect()
    };
    symbols
        .iter()
        .flat_map(|s| {
            masks.iter().map(move |m| Variant {
                symbol: s.clone(),
                cpu_mask: m.clone(),
            })
        })
        .collect()
}

type Start<'a> =
    &'a dyn Fn(&KernelSpec, &RunnerOptions) -> Result<Box<dyn KernelUnderTest>, Failure>;
type Lead<'a> = &'a dyn Fn(&CheckConfig) -> [String; 4];

/// Checks every variant of one kernel (in the caller's environment too when `env` is set) and
/// returns one report per variant; the first carries the `variants` section.
#[allow(clippy::too_many_arguments)]
pub fn check_variants(
    spec: &KernelSpec,
    config: &CheckConfig,
    variants: &[Variant],
    env: Option<&CallerEnv>,
    options: &RunnerOptions,
    findings: &mut FindingsWriter,
    start: Start,
    lead: Lead,
) -> Result<Vec<CheckReport>, Failure> {
    let failed = |message: String| Failure { code: 1, message };
    let mut reports = Vec::new();
    let mut kernels: Vec<Box<dyn KernelUnderTest>> = Vec::new();
    for v in variants {
        let spec_v = KernelSpec {
            symbol: v.symbol.clone(),
            ..spec.clone()
        };
        let options_v = RunnerOptions {
            glibc_tunables: v.cpu_mask.as_deref().map(tunables),
            ..options.clone()
        };
        let mut config_v = config.clone();
        config_v.symbol = Some(v.name());
        let Some(env) = env else {
            let mut kernel = start(&spec_v, &options_v)?;
            findings.begin(lead(&config_v));
            reports.push(run_check_into(kernel.as_mut(), &config_v, findings).map_err(failed)?);
            kernels.push(kernel);
            continue;
        };
        let mut default = start(&spec_v, &options_v)?;
        let mut caller = start(
            &spec_v,
            &RunnerOptions {
                caller_fpenv: Some(env.word),
                ..options_v
            },
        )?;
        let default_report = run_check(default.as_mut(), &config_v).map_err(failed)?;
        findings.begin(lead(&config_v));
        let mut report = run_check_into(caller.as_mut(), &config_v, findings).map_err(failed)?;
        let outputs = compare_runs(default.as_mut(), caller.as_mut(), &config_v).map_err(failed)?;
        report.caller_fpenv = Some(env_section(env, outputs, &default_report, &report));
        reports.push(report);
        kernels.push(caller);
    }
    if variants.len() > 1 {
        let mut pairs = Vec::new();
        let (first, rest) = kernels.split_at_mut(1);
        for (k, v) in rest.iter_mut().zip(&variants[1..]) {
            let outputs = compare_runs(first[0].as_mut(), k.as_mut(), config).map_err(failed)?;
            pairs.push(VariantPair {
                first: variants[0].name(),
                second: v.name(),
                outputs,
            });
        }
        let section = variants_section(variants, &reports, pairs, config.format);
        let head = &mut reports[0];
        if !section.agree {
            head.verdict.failed.push(section.message.clone());
            head.verdict.exit_code = head.verdict.exit_code.max(1);
        }
        head.variants = Some(section);
    }
    Ok(reports)
}

fn summary(report: &CheckReport) -> VerdictSummary {
    VerdictSummary {
        exit_code: report.verdict.exit_code,
        failed: report.verdict.failed.clone(),
        max_ulp: report.accuracy.figures.max_ulp,
        non_finite_runs: report.non_finite_total.runs,
    }
}

fn verdict_word(code: i32) -> &'static str {
    match code {
        0 => "pass",
        3 => "crash",
        _ => "fail",
    }
}

/// "1,234 of 5,678 outputs differ, first at x = …: A gives …, B gives …".
fn differing(
    format: &dyn crate::format::Format,
    o: &OutputComparison,
    what: &str,
    names: [&str; 2],
) -> String {
    let mut text = format!(
        "{} of {} outputs differ{what}",
        count(o.differing),
        count(o.compared)
    );
    if let Some(d) = o.first_differences.first() {
        let out = |v: &Option<crate::report::BitsValue>| {
            v.as_ref()
                .map_or("no output".to_string(), |v| shown_of(format, v))
        };
        text.push_str(&format!(
            ", first at x = {}: {} gives {}, {} gives {}",
            shown_of(format, &d.input),
            names[0],
            out(&d.first),
            names[1],
            out(&d.second)
        ));
    }
    text
}

/// The `caller_fpenv` section of the caller's report, against the default run's.
fn env_section(
    env: &CallerEnv,
    outputs: OutputComparison,
    default: &CheckReport,
    caller: &CheckReport,
) -> CallerEnvSection {
    let format = crate::format::by_name(caller.format).expect("a report's own format");
    let change = fpenv::describe_change(env.default_word, env.word);
    let (d, c) = (default.verdict.exit_code, caller.verdict.exit_code);
    let mut message = format!(
        "In the caller's FP environment ({}: {change}) {}",
        env.names.join(","),
        differing(
            format,
            &outputs,
            " from the default environment's",
            ["the default environment", "the caller's"]
        )
    );
    message.push_str(&format!(
        "; {} of them at subnormal inputs; {} subnormal outputs were flushed to zero and {} \
         subnormal inputs gave the output of a zero (read as zero)",
        count(outputs.at_subnormal_inputs),
        count(outputs.outputs_flushed),
        count(outputs.inputs_read_as_zero)
    ));
    let figures = |r: &CheckReport| {
        format!(
            "max {} ulp, {} non-finite runs",
            crate::report::sentence::round3(r.accuracy.figures.max_ulp),
            count(r.non_finite_total.runs)
        )
    };
    if d == c {
        message.push_str(&format!(
            "; the verdict is {} in both ({} by default, {} in the caller's).",
            verdict_word(c),
            figures(default),
            figures(caller)
        ));
    } else {
        message.push_str(&format!(
            "; the verdict changed from {} ({}) to {} ({}).",
            verdict_word(d),
            figures(default),
            verdict_word(c),
            figures(caller)
        ));
        if let Some(line) = default.verdict.failed.first().filter(|_| d != 0) {
            message.push_str(&format!(" By default: {line}"));
        }
        if let Some(line) = caller.verdict.failed.first().filter(|_| c != 0) {
            message.push_str(&format!(" In the caller's: {line}"));
        }
    }
    CallerEnvSection {
        environment: env.names.clone(),
        register: fpenv::register_name(),
        default_word: format!("0x{:04x}", env.default_word),
        caller_word: format!("0x{:04x}", env.word),
        outputs,
        default_verdict: summary(default),
        verdict_changed: d != c,
        message,
    }
}

/// The `variants` section: each variant's figures and each against the first.
fn variants_section(
    variants: &[Variant],
    reports: &[CheckReport],
    pairs: Vec<VariantPair>,
    format: &dyn crate::format::Format,
) -> VariantsSection {
    let figures = variants
        .iter()
        .zip(reports)
        .map(|(v, r)| VariantFigures {
            name: v.name(),
            symbol: v.symbol.clone(),
            cpu_mask: v.cpu_mask.clone(),
            max_ulp: r.accuracy.figures.max_ulp,
            mean_ulp: r.accuracy.figures.mean_ulp,
            correctly_rounded: r.accuracy.figures.correctly_rounded,
            non_finite_runs: r.non_finite_total.runs,
            ns_per_element: r.kernel.ns_per_element,
            exit_code: r.verdict.exit_code,
        })
        .collect();
    let agree = pairs.iter().all(|p| p.outputs.differing == 0);
    let message = if agree {
        format!(
            "The {} variants ({}) agree bit for bit on all {} inputs compared.",
            variants.len(),
            variants
                .iter()
                .map(Variant::name)
                .collect::<Vec<_>>()
                .join(", "),
            count(pairs.first().map_or(0, |p| p.outputs.compared))
        )
    } else {
        let parts: Vec<String> = pairs
            .iter()
            .filter(|p| p.outputs.differing > 0)
            .map(|p| {
                format!(
                    "{} differs from {}: {}",
                    p.second,
                    p.first,
                    differing(format, &p.outputs, "", [&p.first, &p.second])
                )
            })
            .collect();
        format!("Dispatch variants disagree: {}.", parts.join("; "))
    };
    VariantsSection {
        variants: figures,
        agree,
        pairs,
        message,
    }
}
