//! `ulpgauge check`: how wrong is a kernel, where, and what happens at the edges.
//!
//! Wiring: [`run`] handles `--builtin-kernel` (in-process kernels) itself. A shared-library
//! kernel (`--lib`/`--symbol`) or a `--manifest` needs the kernel runner: build a
//! [`KernelTarget`] per kernel, turn it into a [`CheckConfig`] with [`build_config`], start the
//! runner, adapt it to [`KernelUnderTest`] and call [`run_with`] (or [`run_many`] for a
//! manifest). Everything that can be bad input is checked before any kernel is called.

use super::check_env::{self, CallerEnv};
use super::{Failure, FunctionArgs};
use crate::activation::{catalog, lookup, Constants};
use crate::check::{
    builtin_mixed, run_check_into, run_recorded, CheckConfig, CheckRole, KernelUnderTest,
    ReferencePath, RunnerKernel, Shard,
};
use crate::format::Format;
use crate::kernel::{
    load_manifest, load_manifest_entries, KernelSpec, ParamPassing, Runner, RunnerOptions,
    Signature,
};
use crate::recorded::{Recorded, RecordedPaths};
use crate::report::{
    check_outputs, write_atomic, CheckReport, Csv, FindingsWriter, Html, Json, Junit, ReportFormat,
    Svg, Terminal,
};
use crate::sweep::{InputRange, SampleMode, SweepKind, SweepSpec};
use std::path::PathBuf;

/// The role named on the command line.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum RoleArg {
    /// The kernel computes f(x).
    Forward,
    /// The kernel computes f′(x).
    Derivative,
    /// The kernel computes g·f′(x) from x (or f(x), see --from-output) and g.
    Gradient,
    /// A gated kernel computes ∂y/∂a = act′(a)·b from a and b.
    DerivativeA,
    /// A gated kernel computes ∂y/∂b = act(a) from a (and b).
    DerivativeB,
}

/// Arguments of `check`.
#[derive(clap::Args, Debug, Clone)]
pub struct Args {
    /// Shared library holding the kernel.
    #[arg(long, value_name = "FILE")]
    pub lib: Option<PathBuf>,
    /// Exported symbol of the kernel.
    #[arg(long, value_name = "NAME")]
    pub symbol: Option<String>,
    /// Catalog function the kernel computes (see `ulpgauge functions`).
    #[arg(long, value_name = "FUNC")]
    pub function: Option<String>,
    /// Format of the kernel's inputs and outputs (shorthand for --input-format F
    /// --output-format F; i8/u8: affine-quantized codes).
    #[arg(long, value_name = "f32|f16|bf16|e4m3|e5m2|i8|u8")]
    pub format: Option<String>,
    /// Format of the kernel's inputs x (and of a gradient's g): the sweep runs over it.
    #[arg(long, value_name = "FORMAT")]
    pub input_format: Option<String>,
    /// Format of the kernel's outputs: errors are ulps of it.
    #[arg(long, value_name = "FORMAT")]
    pub output_format: Option<String>,
    #[command(flatten)]
    pub function_args: FunctionArgs,
    /// What the kernel computes.
    #[arg(long, value_enum, default_value_t = RoleArg::Forward)]
    pub role: RoleArg,
    /// Gradient kernels: the first argument is y = f(x) instead of x.
    #[arg(long)]
    pub from_output: bool,
    #[command(flatten)]
    pub sweep_options: SweepOptions,
    /// Write the whole report as JSON.
    #[arg(long, value_name = "FILE")]
    pub json: Option<PathBuf>,
    /// Write one CSV row per binade.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Also list in the CSV every point whose error exceeds U ulps (streamed as found).
    #[arg(long, value_name = "U")]
    pub csv_points_over: Option<f64>,
    /// Write every non-finite run (and every point over --csv-points-over) to this CSV file
    /// as it is found; the report itself lists only the longest runs and counts them all.
    #[arg(long, value_name = "FILE")]
    pub findings: Option<PathBuf>,
    /// Non-finite runs listed in the report: the N longest, ties to the lowest first input.
    #[arg(long, value_name = "N", default_value_t = crate::measure::LISTED_RUNS)]
    pub list_runs: usize,
    /// Write an SVG plot of max ulp error per input bucket.
    #[arg(long, value_name = "FILE.svg")]
    pub plot: Option<PathBuf>,
    /// Write a self-contained HTML report (interactive plot, findings in sentences).
    #[arg(long, value_name = "FILE.html")]
    pub html: Option<PathBuf>,
    /// Write JUnit-style XML (a suite per kernel, a case per rule and check) for CI.
    #[arg(long, value_name = "FILE.xml")]
    pub junit: Option<PathBuf>,
    /// Fail (exit 1) when max_ulp exceeds U.
    #[arg(long, value_name = "U")]
    pub max_ulp: Option<f64>,
    /// Report non-finite runs (NaN or ±inf against a finite reference, or the reverse)
    /// without failing the check.
    #[arg(long)]
    pub allow_non_finite: bool,
    /// Also report errors as |ŷ − y| / max(ulp(y), A).
    #[arg(long, value_name = "A")]
    pub abs_floor: Option<f64>,
    /// Check every kernel listed in a manifest.
    #[arg(long, value_name = "FILE")]
    pub manifest: Option<PathBuf>,
    /// How the kernel receives its parameters: compiled in, or trailing float arguments.
    #[arg(long, value_enum, default_value_t = PassingArg::Baked)]
    pub param_passing: PassingArg,
    /// The kernel may be called with y == x.
    #[arg(long)]
    pub in_place: bool,
    /// The kernel must not be called from several threads at once.
    #[arg(long)]
    pub not_thread_safe: bool,
    /// The kernel's C signature: `contiguous` (x, y, n) or `strided` (x, sx, y, sy, n), with
    /// element strides.
    #[arg(long, value_enum, default_value_t = SignatureArg::Contiguous)]
    pub signature: SignatureArg,
    /// Strided kernels: the element strides the measuring sweep calls with (default 1,1;
    /// nonzero, |stride| <= 64; negative strides walk down from x[0]).
    #[arg(long, value_name = "SX,SY", allow_hyphen_values = true)]
    pub strides: Option<String>,
    /// Seconds a batch may take before the kernel counts as hung.
    #[arg(long, value_name = "SECONDS", default_value_t = 10.0)]
    pub timeout: f64,
    /// Stop at the first crash or hang instead of carrying on past it.
    #[arg(long)]
    pub stop_on_crash: bool,
    /// Calls that may crash, hang or corrupt the worker's channel (each restarts the worker)
    /// before the kernel is given up on (exit 3).
    #[arg(long, value_name = "N", default_value_t = crate::kernel::DEFAULT_MAX_RESTARTS)]
    pub max_restarts: u64,
    /// Seconds that failing calls may take in all before the kernel is given up on (exit 3).
    #[arg(long, value_name = "SECONDS", default_value_t = crate::kernel::DEFAULT_MAX_FAULT_TIME.as_secs_f64())]
    pub max_fault_time: f64,
    /// Address space each worker process may use (4G, 1536M, …); an allocation beyond it is
    /// reported as the kernel running out of memory (exit 3).
    #[arg(long, value_name = "SIZE", default_value = "4G")]
    pub kernel_memory: String,
    /// Worker processes calling the kernel at once (1 to 8; default: one per core, at most
    /// 2); each has its own `--kernel-memory`, and after any failed call one carries on alone.
    #[arg(long, value_name = "N")]
    pub kernel_workers: Option<usize>,
    /// References: `auto` uses the proven fast path where it decides (identical results),
    /// `mpfr` forces MPFR for every point.
    #[arg(long, value_enum, default_value_t = ReferencePath::Auto)]
    pub reference: ReferencePath,
    /// Measure only the I-th of N disjoint parts of the sweep (1 <= I <= N) and write the
    /// state that `ulpgauge merge` joins into the report of the whole sweep.
    #[arg(long, value_name = "I/N")]
    pub shard: Option<String>,
    /// Print no terminal summary.
    #[arg(long)]
    pub quiet: bool,
    /// Never show a progress bar.
    #[arg(long)]
    pub no_progress: bool,
    /// Test-only: an in-process kernel instead of a library (reference, next-up,
    /// flush-to-zero, blended-elu, crash-on-nan).
    #[arg(long, hide = true, value_name = "NAME")]
    pub builtin_kernel: Option<String>,
    /// Measure recorded outputs instead of calling a kernel: the inputs, a 1-D .npy array
    /// (float32, float16, uint16 bit patterns, ml_dtypes bfloat16), e.g. from `ulpgauge inputs`.
    #[arg(long, value_name = "X.npy", requires = "outputs")]
    pub inputs: Option<PathBuf>,
    /// The recorded outputs, one per input, in the kernel's format.
    #[arg(long, value_name = "Y.npy", requires = "inputs")]
    pub outputs: Option<PathBuf>,
    /// Gradient roles: the recorded upstream gradients g, one per input.
    #[arg(long, value_name = "G.npy", requires = "inputs")]
    pub grads: Option<PathBuf>,
    /// Also run the kernel in the caller's FP environment, as a framework would, and report
    /// what changed against the default one: comma-separated from `ftz` (subnormal results
    /// flushed to zero), `daz` (subnormal inputs read as zero) and one rounding mode
    /// (`nearest`, `down`, `up`, `toward-zero`). The verdict is the caller's environment's.
    #[arg(long, value_name = "LIST")]
    pub caller_fpenv: Option<String>,
    /// What the worker's dynamic loader and libm see of the CPU: glibc's `glibc.cpu.hwcaps`
    /// list (e.g. -AVX2,-FMA), set in the worker's GLIBC_TUNABLES only. Given more than once,
    /// each mask is a variant of the kernel, measured and compared bit for bit.
    #[arg(long, value_name = "MASK", allow_hyphen_values = true)]
    pub cpu_mask: Vec<String>,
    /// `--format i8|u8`: scales, zero points and `--max-steps` (see `cli/quant.rs`).
    #[command(flatten)]
    pub quant: super::quant::QuantCheckArgs,
}

/// Which inputs a check sweeps: shared by `check` and `matrix` (certify sets them from its
/// `[sweep]` table).
#[derive(clap::Args, Debug, Clone)]
pub struct SweepOptions {
    /// Sweep kinds, comma-separated (default: exhaustive for 16-bit formats, dense,edge for f32).
    #[arg(
        long,
        value_enum,
        value_delimiter = ',',
        value_name = "exhaustive|dense|edge|random"
    )]
    pub sweep: Vec<SweepKind>,
    /// Inputs considered, as decimals (or inf, -inf): LO included, HI excluded.
    #[arg(long, value_name = "LO,HI", allow_hyphen_values = true)]
    pub range: Option<String>,
    /// Samples of a random sweep; for a dense sweep, significands per binade.
    #[arg(long, value_name = "N")]
    pub points: Option<u64>,
    /// Significands per binade of a dense sweep.
    #[arg(long, value_name = "K", default_value_t = 256)]
    pub per_binade: u32,
    /// Neighbours checked on each side of an interesting point (and of a threshold).
    #[arg(long, value_name = "M", default_value_t = 16)]
    pub neighbours: u32,
    /// Seed of random sweeps and of gradient factors g.
    #[arg(long, value_name = "S", default_value_t = 1)]
    pub seed: u64,
    /// Random sweeps: uniform over bit patterns or over values.
    #[arg(long, value_enum, default_value_t = SampleMode::Bits)]
    pub random_mode: SampleMode,
}

/// How parameters reach the kernel, as named on the command line.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum PassingArg {
    /// Compiled into the kernel.
    Baked,
    /// Trailing `float` arguments in catalog order.
    Trailing,
}

/// The C signature, as named on the command line.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum SignatureArg {
    /// (x, y, n).
    Contiguous,
    /// (x, sx, y, sy, n).
    Strided,
}

/// The signature of `--signature` and `--strides`; bad strides are bad input.
pub(super) fn signature_from_args(args: &Args) -> Result<Signature, Failure> {
    let name = match args.signature {
        SignatureArg::Contiguous => "contiguous",
        SignatureArg::Strided => "strided",
    };
    Signature::parse(name, args.strides.as_deref())
        .map_err(|e| Failure::bad_input(format!("--strides: {e}")))
}

/// One kernel to check, as named on the command line or in a manifest.
#[derive(Clone, Debug)]
pub struct KernelTarget {
    /// Library file.
    pub library: Option<PathBuf>,
    /// Symbol.
    pub symbol: Option<String>,
    /// Catalog function name.
    pub function: String,
    /// Format name (of the outputs).
    pub format: String,
    /// Format name of the inputs, when it differs from `format`.
    pub input_format: Option<String>,
    /// Role.
    pub role: CheckRole,
    /// `NAME=VALUE` parameters.
    pub params: Vec<String>,
}

impl KernelTarget {
    /// The target a manifest entry names.
    pub fn of_spec(spec: &KernelSpec) -> KernelTarget {
        KernelTarget {
            library: Some(spec.library.clone()),
            symbol: Some(spec.symbol.clone()),
            function: spec.function.clone(),
            format: spec.format.name().to_string(),
            input_format: (spec.input_format.name() != spec.format.name())
                .then(|| spec.input_format.name().to_string()),
            role: spec.role,
            params: spec
                .params
                .iter()
                .map(|(n, v)| format!("{n}={v}"))
                .collect(),
        }
    }
}

/// Where the reports go.
#[derive(Clone, Debug, Default)]
pub struct Outputs {
    /// --json.
    pub json: Option<PathBuf>,
    /// --csv.
    pub csv: Option<PathBuf>,
    /// --plot.
    pub plot: Option<PathBuf>,
    /// --html.
    pub html: Option<PathBuf>,
    /// --junit.
    pub junit: Option<PathBuf>,
    /// Print the terminal summary.
    pub terminal: bool,
    /// --findings: every run and listed point, streamed.
    pub findings: Option<PathBuf>,
    /// The CSV report lists points (streamed to a spool, copied in at the end).
    pub csv_points: bool,
}

impl Outputs {
    /// The outputs of the arguments, each file checked writable (exit 2 before any work).
    pub fn from_args(args: &Args) -> Result<Outputs, Failure> {
        let files = [
            &args.json,
            &args.csv,
            &args.plot,
            &args.findings,
            &args.html,
            &args.junit,
        ]
        .map(|p| p.as_deref());
        let to_stdout = check_outputs(&files).map_err(Failure::bad_input)?;
        if args.findings.is_some() && args.shard.is_some() {
            return Err(Failure::bad_input(
                "--findings lists whole runs, which a shard cannot see: use it without --shard",
            ));
        }
        Ok(Outputs {
            json: args.json.clone(),
            csv: args.csv.clone(),
            plot: args.plot.clone(),
            html: args.html.clone(),
            junit: args.junit.clone(),
            terminal: !args.quiet && !to_stdout,
            findings: args.findings.clone(),
            csv_points: args.csv_points_over.is_some(),
        })
    }

    /// The writer of the findings streamed during the checks.
    pub fn findings_writer(&self) -> Result<FindingsWriter, Failure> {
        let csv = self.csv.as_deref().filter(|_| self.csv_points);
        FindingsWriter::new(self.findings.as_deref(), csv).map_err(Failure::bad_input)
    }
}

fn role_of(args: &Args) -> CheckRole {
    match args.role {
        RoleArg::Forward => CheckRole::Forward,
        // The gated roles are refused for one-input functions before a role is needed.
        RoleArg::Derivative | RoleArg::DerivativeA | RoleArg::DerivativeB => CheckRole::Derivative,
        RoleArg::Gradient => CheckRole::Gradient {
            from_output: args.from_output,
        },
    }
}

/// The single kernel named by `--lib/--symbol/--function/--format/--param/--role`.
pub fn target_from_args(args: &Args) -> Result<KernelTarget, Failure> {
    let need = |v: &Option<String>, flag: &str| {
        v.clone()
            .ok_or_else(|| Failure::bad_input(format!("{flag} is required (or use --manifest)")))
    };
    let function = need(&args.function, "--function")?;
    let (input, output) = format_names(
        args.format.as_deref(),
        args.input_format.as_deref(),
        args.output_format.as_deref(),
    )?;
    Ok(KernelTarget {
        library: args.lib.clone(),
        symbol: args.symbol.clone(),
        function,
        input_format: (input != output).then_some(input),
        format: output,
        role: role_of(args),
        params: args.function_args.params.clone(),
    })
}

/// The input and output format names of `--format F` (both) or `--input-format F
/// --output-format G`; giving `--format` with either of the pair, or one of the pair alone, is
/// bad input.
pub fn format_names(
    format: Option<&str>,
    input: Option<&str>,
    output: Option<&str>,
) -> Result<(String, String), Failure> {
    match (format, input, output) {
        (Some(_), Some(_), _) | (Some(_), _, Some(_)) => Err(Failure::bad_input(
            "--format F is shorthand for --input-format F --output-format F: give --format or the pair, not both",
        )),
        (Some(f), None, None) => Ok((f.to_string(), f.to_string())),
        (None, Some(i), Some(o)) => Ok((i.to_string(), o.to_string())),
        (None, Some(_), None) => Err(Failure::bad_input(
            "--input-format needs --output-format too (or --format for both)",
        )),
        (None, None, Some(_)) => Err(Failure::bad_input(
            "--output-format needs --input-format too (or --format for both)",
        )),
        (None, None, None) => Err(Failure::bad_input(
            "--format is required (or --input-format and --output-format, or --manifest)",
        )),
    }
}

/// The input format of a target whose output format is `format`: the same object unless the
/// target names another one. An input is a bit pattern, not a rounding, so an FP8 `-sat`
/// suffix means nothing on that side.
pub fn input_format_of(
    target: &KernelTarget,
    format: &'static dyn Format,
) -> Result<&'static dyn Format, Failure> {
    let Some(name) = &target.input_format else {
        return Ok(format);
    };
    let base = name.strip_suffix("-sat").unwrap_or(name);
    let input = crate::format::resolve(base, None)
        .map_err(|e| Failure::bad_input(format!("--input-format: {e}")))?;
    Ok(if input.name() == format.name() {
        format
    } else {
        input
    })
}

fn positive(value: Option<f64>, flag: &str, allow_zero: bool) -> Result<Option<f64>, Failure> {
    match value {
        Some(v) if !v.is_finite() || v < 0.0 || (!allow_zero && v == 0.0) => {
            Err(Failure::bad_input(format!(
                "{flag} must be a finite number {} 0, got {v}",
                if allow_zero { ">=" } else { ">" }
            )))
        }
        v => Ok(v),
    }
}

/// The sweep of `--sweep`, `--range`, `--points`, … for a format; every error is bad input.
pub fn sweep_spec(
    format: &'static dyn Format,
    options: &SweepOptions,
) -> Result<SweepSpec, Failure> {
    let range = match &options.range {
        Some(text) => InputRange::parse(format, text).map_err(Failure::bad_input)?,
        None => InputRange::all(format),
    };
    if options.points == Some(0) {
        return Err(Failure::bad_input("--points must be at least 1"));
    }
    if options.neighbours > MAX_NEIGHBOURS {
        return Err(Failure::bad_input(format!(
            "--neighbours {} is more than {MAX_NEIGHBOURS} (the neighbourhoods are listed)",
            options.neighbours
        )));
    }
    if options.per_binade < 2 {
        return Err(Failure::bad_input("--per-binade must be at least 2"));
    }
    let kinds = if options.sweep.is_empty() {
        if format.width() <= 16 {
            vec![SweepKind::Exhaustive]
        } else {
            vec![SweepKind::Dense, SweepKind::Edge]
        }
    } else {
        options.sweep.clone()
    };
    if kinds.contains(&SweepKind::Exhaustive)
        && range.pattern_count(format) > crate::sweep::MAX_EXHAUSTIVE
    {
        return Err(Failure::bad_input(format!(
            "an exhaustive {} sweep of {} patterns is too large (at most {}); narrow it with --range",
            format.name(),
            range.pattern_count(format),
            crate::sweep::MAX_EXHAUSTIVE
        )));
    }
    let dense_points = kinds
        .contains(&SweepKind::Dense)
        .then_some(options.points)
        .flatten();
    let per_binade = dense_points
        .map(|n| u32::try_from(n).unwrap_or(u32::MAX).max(2))
        .unwrap_or(options.per_binade);
    // Without --points a random sweep takes 100,000 points, or every pattern of a smaller
    // range (NaNs are never drawn).
    let mut plain = range.clone();
    plain.with_nans = false;
    let random_points = options
        .points
        .unwrap_or_else(|| plain.pattern_count(format).min(100_000));
    let spec = SweepSpec {
        kinds,
        range,
        per_binade,
        random_points,
        neighbours: options.neighbours,
        seed: options.seed,
        mode: options.random_mode,
    };
    let patterns = plain.pattern_count(format);
    if spec.kinds.contains(&SweepKind::Random) && spec.random_points > patterns {
        // Refused before any work: a sample is distinct points of the range.
        return Err(Failure::bad_input(format!(
            "--points {} is more than the {patterns} patterns of the range (NaNs are never drawn); use --sweep exhaustive to measure them all",
            spec.random_points
        )));
    }
    Ok(spec)
}

/// Most neighbours of an interesting point on each side (`--neighbours`).
pub const MAX_NEIGHBOURS: u32 = 1 << 16;

/// Most non-finite runs a report lists (`--list-runs`); counts are exact whatever it is.
pub const MAX_LISTED_RUNS: usize = 1 << 16;

/// Validates a target with the sweep options into a [`CheckConfig`]; every error is bad input.
pub fn build_config(target: &KernelTarget, args: &Args) -> Result<CheckConfig, Failure> {
    if args.list_runs > MAX_LISTED_RUNS {
        return Err(Failure::bad_input(format!(
            "--list-runs {} is more than {MAX_LISTED_RUNS}",
            args.list_runs
        )));
    }
    if args.from_output && args.role != RoleArg::Gradient {
        return Err(Failure::bad_input(
            "--from-output applies to --role gradient only",
        ));
    }
    let function = lookup(&target.function).ok_or_else(|| {
        let names: Vec<_> = catalog().iter().map(|f| f.name()).collect();
        Failure::bad_input(format!(
            "unknown function '{}' (known: {})",
            target.function,
            names.join(", ")
        ))
    })?;
    let format =
        crate::format::resolve(&target.format, args.function_args.fp8_overflow).map_err(|e| {
            match target.input_format {
                Some(_) => Failure::bad_input(format!("--output-format: {e}")),
                None => Failure::bad_input(e),
            }
        })?;
    let input_format = input_format_of(target, format)?;
    if input_format.name() != format.name() {
        refuse_for_mixed(target, args)?;
    }
    let params = Constants::parse_params(function, &target.params).map_err(Failure::bad_input)?;
    Constants::resolve_checked(function, &params, args.function_args.param_rounding, format)
        .map_err(Failure::bad_input)?;
    let sweep = sweep_spec(input_format, &args.sweep_options)?;
    Ok(CheckConfig {
        function,
        format,
        input_format,
        role: target.role,
        params,
        param_rounding: args.function_args.param_rounding,
        sweep,
        abs_floor: positive(args.abs_floor, "--abs-floor", false)?,
        max_ulp: positive(args.max_ulp, "--max-ulp", true)?,
        allow_non_finite: args.allow_non_finite,
        list_over: positive(args.csv_points_over, "--csv-points-over", true)?,
        listed_runs: args.list_runs,
        library: target.library.clone(),
        symbol: target.symbol.clone(),
        progress: !args.no_progress,
        reference: args.reference,
        shard: args
            .shard
            .as_deref()
            .map(Shard::parse)
            .transpose()
            .map_err(Failure::bad_input)?,
    })
}

/// What a check of a mixed-format kernel cannot do yet: each is bad input, named.
fn refuse_for_mixed(target: &KernelTarget, args: &Args) -> Result<(), Failure> {
    let refused = [
        (
            matches!(target.role, CheckRole::Gradient { from_output: true }),
            "--from-output (gradient-from-output)",
        ),
        (
            args.in_place,
            "--in-place (y == x needs equal element widths)",
        ),
        (args.shard.is_some(), "--shard"),
        (
            args.inputs.is_some(),
            "--inputs/--outputs (recorded outputs)",
        ),
    ];
    match refused.iter().find(|(given, _)| *given) {
        Some((_, what)) => Err(Failure::bad_input(format!(
            "{what} is not supported with different input and output formats ({} -> {})",
            target.input_format.as_deref().unwrap_or(&target.format),
            target.format
        ))),
        None => Ok(()),
    }
}

/// Combines exit statuses: 3 (crash) beats 1 (finding) beats 0.
pub fn combine(codes: impl IntoIterator<Item = i32>) -> i32 {
    codes.into_iter().fold(0, |acc, c| match (acc, c) {
        (3, _) | (_, 3) => 3,
        (1, _) | (_, 1) => 1,
        _ => 0,
    })
}

/// Writes every requested output of finished reports.
pub fn emit(reports: &[CheckReport], manifest: bool, outputs: &Outputs) -> Result<(), Failure> {
    emit_with(reports, manifest, outputs, None)
}

/// [`emit`], with the findings streamed during the checks: the CSV report takes its point
/// rows from them and the `--findings` file is put in place.
pub fn emit_with(
    reports: &[CheckReport],
    manifest: bool,
    outputs: &Outputs,
    findings: Option<FindingsWriter>,
) -> Result<(), Failure> {
    // A CSV that lists points is written from the streamed rows.
    let csv = if findings.is_some() && outputs.csv_points {
        &None
    } else {
        &outputs.csv
    };
    let files: [(&Option<PathBuf>, &dyn ReportFormat); 5] = [
        (&outputs.json, &Json),
        (csv, &Csv),
        (&outputs.plot, &Svg),
        (&outputs.html, &Html),
        (&outputs.junit, &Junit),
    ];
    for (path, format) in files {
        if let Some(path) = path {
            let text = format.render(reports, manifest).map_err(|e| Failure {
                code: 1,
                message: format!("{} report: {e}", format.name()),
            })?;
            write_atomic(path, &text).map_err(Failure::bad_input)?;
        }
    }
    if let Some(findings) = findings {
        findings.finish(reports).map_err(Failure::bad_input)?;
    }
    if outputs.terminal {
        say!(
            "{}",
            Terminal
                .render(reports, manifest)
                .map_err(Failure::bad_input)?
        );
    }
    Ok(())
}

/// Checks one kernel and writes its reports; returns the exit status (0, 1 or 3).
pub fn run_with(
    kernel: &mut dyn KernelUnderTest,
    config: &CheckConfig,
    outputs: &Outputs,
) -> Result<i32, Failure> {
    let mut findings = outputs.findings_writer()?;
    findings.begin(lead(config));
    let report = run_check_into(kernel, config, &mut findings)
        .map_err(|message| Failure { code: 1, message })?;
    let code = report.verdict.exit_code;
    emit_with(
        std::slice::from_ref(&report),
        false,
        outputs,
        Some(findings),
    )?;
    Ok(code)
}

/// Checks several kernels (a manifest) and writes one report set `{"kernels": [...]}`.
pub fn run_many(kernels: &mut [Configured], outputs: &Outputs) -> Result<i32, Failure> {
    let mut reports = Vec::new();
    let mut findings = outputs.findings_writer()?;
    for (kernel, config) in kernels.iter_mut() {
        findings.begin(lead(config));
        reports.push(
            run_check_into(kernel.as_mut(), config, &mut findings)
                .map_err(|message| Failure { code: 1, message })?,
        );
    }
    emit_with(&reports, true, outputs, Some(findings))?;
    Ok(combine(reports.iter().map(|r| r.verdict.exit_code)))
}

/// The first columns of a kernel's findings rows: function, format, role, symbol.
pub(super) fn lead(config: &CheckConfig) -> [String; 4] {
    [
        config.function.name().to_string(),
        config.format.name().to_string(),
        config.role.report_name().to_string(),
        config.symbol.clone().unwrap_or_default(),
    ]
}

pub(super) fn runner_options(args: &Args) -> Result<RunnerOptions, Failure> {
    let batch_timeout =
        crate::kernel::batch_timeout(args.timeout, "--timeout").map_err(Failure::bad_input)?;
    let limits = crate::kernel::fault_limits(args.max_restarts, args.max_fault_time)
        .map_err(Failure::bad_input)?;
    Ok(RunnerOptions {
        batch_timeout,
        stop_on_crash: args.stop_on_crash,
        max_restarts: limits.0,
        max_fault_time: limits.1,
        kernel_memory: crate::kernel::kernel_memory(&args.kernel_memory, "--kernel-memory")
            .map_err(Failure::bad_input)?,
        workers: match args.kernel_workers {
            None => crate::kernel::default_workers(),
            Some(n @ 1..=crate::kernel::MAX_WORKERS) => n,
            Some(n) => {
                return Err(Failure::bad_input(format!(
                    "--kernel-workers must be between 1 and {}, got {n}",
                    crate::kernel::MAX_WORKERS
                )))
            }
        },
        ..RunnerOptions::default()
    })
}

pub(super) fn start(
    spec: &KernelSpec,
    options: &RunnerOptions,
) -> Result<Box<dyn KernelUnderTest>, Failure> {
    let runner = Runner::start(spec, options.clone()).map_err(Failure::bad_input)?;
    Ok(Box::new(RunnerKernel(runner)))
}

/// The runner's description of the kernel named on the command line.
fn spec_from_args(
    target: &KernelTarget,
    config: &CheckConfig,
    args: &Args,
) -> Result<KernelSpec, Failure> {
    let library = target
        .library
        .clone()
        .ok_or_else(|| Failure::bad_input("--lib is required (or use --manifest)"))?;
    let symbol = target
        .symbol
        .clone()
        .ok_or_else(|| Failure::bad_input("--symbol is required with --lib"))?;
    Ok(KernelSpec {
        library,
        symbol,
        function: target.function.clone(),
        format: config.format,
        input_format: config.input_format,
        role: config.role,
        params: target
            .params
            .iter()
            .filter_map(|p| {
                p.split_once('=')
                    .map(|(n, v)| (n.to_string(), v.trim().to_string()))
            })
            .collect(),
        param_passing: match args.param_passing {
            PassingArg::Baked => ParamPassing::Baked,
            PassingArg::Trailing => ParamPassing::Trailing,
        },
        in_place: args.in_place,
        thread_safe: !args.not_thread_safe,
        signature: signature_from_args(args)?,
    })
}

/// A started kernel with its configuration.
type Configured = (Box<dyn KernelUnderTest>, CheckConfig);

/// Every kernel of a manifest, configured and started (bad input stops before any report).
fn manifest_kernels(path: &std::path::Path, args: &Args) -> Result<Vec<Configured>, Failure> {
    let specs = load_manifest(path).map_err(Failure::bad_input)?;
    kernels_of(path, &specs, args)
}

/// The one-input entries of a manifest that has two-input ones too: configured, started and
/// checked; their terminal summary printed when `terminal`, their reports returned.
pub(super) fn check_specs(
    path: &std::path::Path,
    specs: &[KernelSpec],
    args: &Args,
    terminal: bool,
) -> Result<Vec<CheckReport>, Failure> {
    let mut kernels = kernels_of(path, specs, args)?;
    let mut findings = FindingsWriter::new(None, None).map_err(Failure::bad_input)?;
    let mut reports = Vec::new();
    for (kernel, config) in kernels.iter_mut() {
        findings.begin(lead(config));
        reports.push(
            run_check_into(kernel.as_mut(), config, &mut findings)
                .map_err(|message| Failure { code: 1, message })?,
        );
    }
    findings.finish(&reports).map_err(Failure::bad_input)?;
    if terminal && !reports.is_empty() {
        say!(
            "{}",
            Terminal
                .render(&reports, true)
                .map_err(Failure::bad_input)?
        );
    }
    Ok(reports)
}

/// Every kernel of a manifest's specs, configured and started.
fn kernels_of(
    path: &std::path::Path,
    specs: &[KernelSpec],
    args: &Args,
) -> Result<Vec<Configured>, Failure> {
    let options = runner_options(args)?;
    let mut configs = Vec::new();
    for spec in specs {
        let target = KernelTarget::of_spec(spec);
        configs.push(build_config(&target, args).map_err(|f| {
            Failure::bad_input(format!(
                "{}: kernel {}: {}",
                path.display(),
                spec.symbol,
                f.message
            ))
        })?);
    }
    let mut kernels = Vec::new();
    for (spec, config) in specs.iter().zip(configs) {
        kernels.push((start(spec, &options)?, config));
    }
    Ok(kernels)
}

/// Checks recorded outputs (`--inputs/--outputs`); every problem with the files is bad input.
fn run_recorded_set(args: &Args) -> Result<i32, Failure> {
    let called = [
        (args.lib.is_some(), "--lib"),
        (args.symbol.is_some(), "--symbol"),
        (args.manifest.is_some(), "--manifest"),
        (args.builtin_kernel.is_some(), "--builtin-kernel"),
        (!args.sweep_options.sweep.is_empty(), "--sweep"),
        (args.caller_fpenv.is_some(), "--caller-fpenv"),
        (!args.cpu_mask.is_empty(), "--cpu-mask"),
    ];
    if let Some((_, flag)) = called.iter().find(|(given, _)| *given) {
        return Err(Failure::bad_input(format!(
            "{flag} does not apply to recorded outputs: the recorded inputs are the sweep (--range restricts them)"
        )));
    }
    let gradient = args.role == RoleArg::Gradient;
    if gradient != args.grads.is_some() {
        return Err(Failure::bad_input(if gradient {
            "--role gradient with recorded outputs needs --grads G.npy (the g of each input)"
        } else {
            "--grads applies to --role gradient only"
        }));
    }
    let target = target_from_args(args)?;
    let mut config = build_config(&target, args)?;
    config.sweep.kinds = vec![SweepKind::Recorded];
    let outputs = Outputs::from_args(args)?;
    let paths = RecordedPaths {
        inputs: args.inputs.as_deref().expect("checked by clap"),
        outputs: args.outputs.as_deref().expect("checked by clap"),
        grads: args.grads.as_deref(),
    };
    let set =
        Recorded::open(&paths, config.format, &config.sweep.range).map_err(Failure::bad_input)?;
    let mut findings = outputs.findings_writer()?;
    findings.begin(lead(&config));
    let report = run_recorded(set, &config, &mut findings).map_err(Failure::bad_input)?;
    let code = report.verdict.exit_code;
    emit_with(
        std::slice::from_ref(&report),
        false,
        &outputs,
        Some(findings),
    )?;
    Ok(code)
}

/// Runs `check`.
pub fn run(args: Args) -> Result<i32, Failure> {
    if let Some(code) = super::quant::check(&args)? {
        return Ok(code);
    }
    // Every kernel kind is held to the runner options, whether or not it runs in a worker.
    runner_options(&args)?;
    let signature = signature_from_args(&args)?;
    if signature != Signature::Contiguous
        && (args.input_format.is_some() || args.output_format.is_some())
    {
        return Err(Failure::bad_input(
            "--signature strided takes one format for x and y (--format), not --input-format/--output-format",
        ));
    }
    if signature != Signature::Contiguous
        && (args.manifest.is_some()
            || args.builtin_kernel.is_some()
            || args.inputs.is_some()
            || args
                .function
                .as_deref()
                .is_some_and(|f| crate::activation::lookup_gated(f).is_some()))
    {
        return Err(Failure::bad_input(
            "--signature strided and --strides describe a one-input library kernel (--lib); a manifest entry sets its own",
        ));
    }
    if let Some(function) = &args.function {
        if crate::activation::lookup_gated(function).is_some() {
            return super::check_pairs::run(&args, function);
        }
    }
    if matches!(args.role, RoleArg::DerivativeA | RoleArg::DerivativeB) {
        return Err(Failure::bad_input(
            "--role derivative-a and derivative-b are the roles of the two-input functions (swiglu, geglu, geglu-tanh, reglu)",
        ));
    }
    if args.inputs.is_some() {
        return run_recorded_set(&args);
    }
    if let Some(path) = &args.manifest {
        if args.lib.is_some()
            || args.symbol.is_some()
            || args.function.is_some()
            || args.format.is_some()
            || args.input_format.is_some()
            || args.output_format.is_some()
        {
            return Err(Failure::bad_input(
                "--manifest replaces --lib, --symbol, --function and --format (or --input-format/--output-format)",
            ));
        }
        let (specs, pairs) =
            crate::kernel::load_check_manifest(path).map_err(Failure::bad_input)?;
        if !pairs.is_empty() {
            return super::check_pair_manifest::run(path, &args, specs, pairs);
        }
        let outputs = Outputs::from_args(&args)?;
        if needs_several_runs(&args) || manifest_has_extras(path)? {
            return run_manifest_variants(path, &args, &outputs);
        }
        let mut kernels = manifest_kernels(path, &args)?;
        return run_many(&mut kernels, &outputs);
    }
    let target = target_from_args(&args)?;
    let config = build_config(&target, &args)?;
    let outputs = Outputs::from_args(&args)?;
    if let Some(name) = &args.builtin_kernel {
        if needs_several_runs(&args) {
            return Err(Failure::bad_input(
                "--caller-fpenv and --cpu-mask apply to library kernels, which run in a worker",
            ));
        }
        let mut kernel = builtin_mixed(
            name,
            config.function,
            config.input_format,
            config.format,
            config.role,
            &config.params,
            config.param_rounding,
        )
        .map_err(Failure::bad_input)?;
        return run_with(kernel.as_mut(), &config, &outputs);
    }
    let spec = spec_from_args(&target, &config, &args)?;
    if needs_several_runs(&args) {
        let env = caller_env(&args, args.caller_fpenv.as_deref())?;
        let variants = check_env::variants(std::slice::from_ref(&spec.symbol), &args.cpu_mask);
        let options = runner_options(&args)?;
        let mut findings = outputs.findings_writer()?;
        let reports = check_env::check_variants(
            &spec,
            &config,
            &variants,
            env.as_ref(),
            &options,
            &mut findings,
            &start,
            &lead,
        )?;
        let many = reports.len() > 1;
        emit_with(&reports, many, &outputs, Some(findings))?;
        return Ok(combine(reports.iter().map(|r| r.verdict.exit_code)));
    }
    let mut kernel = start(&spec, &runner_options(&args)?)?;
    run_with(kernel.as_mut(), &config, &outputs)
}

/// Whether the options ask for more than one run of each kernel (or for a CPU mask).
fn needs_several_runs(args: &Args) -> bool {
    args.caller_fpenv.is_some() || !args.cpu_mask.is_empty()
}

/// The caller's environment of `--caller-fpenv` (or of a manifest entry), checked; a shard
/// cannot hold the comparison.
fn caller_env(args: &Args, list: Option<&str>) -> Result<Option<CallerEnv>, Failure> {
    for mask in &args.cpu_mask {
        check_env::check_cpu_mask(mask).map_err(Failure::bad_input)?;
    }
    let Some(list) = list else {
        return Ok(None);
    };
    if args.shard.is_some() {
        return Err(Failure::bad_input(
            "--caller-fpenv compares two whole runs: use it without --shard",
        ));
    }
    CallerEnv::parse(list).map(Some).map_err(Failure::bad_input)
}

/// Whether any manifest entry lists variants or a caller environment.
fn manifest_has_extras(path: &std::path::Path) -> Result<bool, Failure> {
    let entries = load_manifest_entries(path).map_err(Failure::bad_input)?;
    Ok(entries
        .iter()
        .any(|(_, e)| !e.variants.is_empty() || e.caller_fpenv.is_some()))
}

/// A manifest whose entries have variants or environments (or run under `--caller-fpenv` /
/// `--cpu-mask`): every entry configured and its symbols validated first, then checked entry
/// by entry.
fn run_manifest_variants(
    path: &std::path::Path,
    args: &Args,
    outputs: &Outputs,
) -> Result<i32, Failure> {
    if args.shard.is_some() {
        return Err(Failure::bad_input(
            "variants and caller environments compare whole runs: use them without --shard",
        ));
    }
    let entries = load_manifest_entries(path).map_err(Failure::bad_input)?;
    let options = runner_options(args)?;
    let mut planned = Vec::new();
    for (spec, extras) in &entries {
        let target = KernelTarget::of_spec(spec);
        let in_entry = |f: Failure| {
            Failure::bad_input(format!(
                "{}: kernel {}: {}",
                path.display(),
                spec.symbol,
                f.message
            ))
        };
        let config = build_config(&target, args).map_err(in_entry)?;
        let list = extras
            .caller_fpenv
            .as_deref()
            .or(args.caller_fpenv.as_deref());
        let env = caller_env(args, list).map_err(in_entry)?;
        let symbols = if extras.variants.is_empty() {
            vec![spec.symbol.clone()]
        } else {
            extras.variants.clone()
        };
        for symbol in &symbols {
            crate::kernel::loader::validate(&spec.library, symbol).map_err(Failure::bad_input)?;
        }
        let variants = check_env::variants(&symbols, &args.cpu_mask);
        planned.push((spec, config, variants, env));
    }
    let mut findings = outputs.findings_writer()?;
    let mut reports = Vec::new();
    for (spec, config, variants, env) in planned {
        reports.extend(check_env::check_variants(
            spec,
            &config,
            &variants,
            env.as_ref(),
            &options,
            &mut findings,
            &start,
            &lead,
        )?);
    }
    emit_with(&reports, true, outputs, Some(findings))?;
    Ok(combine(reports.iter().map(|r| r.verdict.exit_code)))
}
