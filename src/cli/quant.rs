//! `check` and `eval` with `--format i8|u8`: 8-bit affine-quantized kernels (see
//! [`crate::quant`]). A self-contained path: the float measures, sweeps and reports are not
//! involved; the kernel runs in the same isolated worker, its bytes carried as 1-byte elements.

use super::check::{Args as CheckArgs, Outputs, RoleArg};
use super::{Failure, FunctionArgs};
use crate::activation::{catalog, lookup, Activation, Constants, Role};
use crate::kernel::{KernelRole, KernelSpec, ParamPassing, Runner};
use crate::quant::manifest::QuantEntry;
use crate::quant::report::{csv_document, json_document};
use crate::quant::spec::QuantTexts;
use crate::quant::{expected_table, measure, IntType, Limit, QuantReport, QuantSpec};
use crate::reference::ParamRounding;
use crate::report::write_atomic;

/// The quantization of `--format i8|u8` (refused with any other format).
#[derive(clap::Args, Debug, Clone, Default)]
pub struct QuantArgs {
    /// i8/u8: S_in of x = S_in·(q − Z_in), an exact decimal (0.1 is one tenth).
    #[arg(long, value_name = "S")]
    pub input_scale: Option<String>,
    /// i8/u8: Z_in, an integer in the type's range.
    #[arg(long, value_name = "Z", allow_hyphen_values = true)]
    pub input_zero_point: Option<String>,
    /// i8/u8: S_out of the output code f(x)/S_out + Z_out, an exact decimal.
    #[arg(long, value_name = "S")]
    pub output_scale: Option<String>,
    /// i8/u8: Z_out, an integer in the type's range.
    #[arg(long, value_name = "Z", allow_hyphen_values = true)]
    pub output_zero_point: Option<String>,
}

/// `check`'s quantized options: the quantization and the verdict's limit.
#[derive(clap::Args, Debug, Clone, Default)]
pub struct QuantCheckArgs {
    #[command(flatten)]
    pub quant: QuantArgs,
    /// i8/u8: fail when an output is more than S output steps from the exact value (default:
    /// fail when any output is not the correctly rounded code).
    #[arg(long, value_name = "S", allow_hyphen_values = true)]
    pub max_steps: Option<f64>,
}

impl QuantArgs {
    fn texts(&self) -> QuantTexts<'_> {
        QuantTexts {
            input_scale: self.input_scale.as_deref(),
            input_zero_point: self.input_zero_point.as_deref(),
            output_scale: self.output_scale.as_deref(),
            output_zero_point: self.output_zero_point.as_deref(),
        }
    }
}

/// Refuses the quantization options with a float format.
fn refuse_with_float(quant: &QuantArgs, format: Option<&str>) -> Result<(), Failure> {
    if let Some(flag) = quant.texts().given().first() {
        return Err(Failure::bad_input(format!(
            "{flag} applies to --format i8 and u8 only{}",
            format.map_or(String::new(), |f| format!(", not {f}"))
        )));
    }
    Ok(())
}

/// The function and its constants (parameters exact, or rounded to f32 as the kernel would).
fn function_and_constants(
    name: &str,
    params: &[String],
    function_args: &FunctionArgs,
) -> Result<(&'static dyn Activation, Constants), Failure> {
    let function = lookup(name).ok_or_else(|| {
        let names: Vec<_> = catalog().iter().map(|f| f.name()).collect();
        Failure::bad_input(format!(
            "unknown function '{name}' (known: {})",
            names.join(", ")
        ))
    })?;
    if function_args.param_rounding == ParamRounding::Format {
        return Err(Failure::bad_input(
            "--param-rounding format: an 8-bit integer format holds no parameters; use exact or f32",
        ));
    }
    if function_args.fp8_overflow.is_some() {
        return Err(Failure::bad_input(
            "--fp8-overflow applies to e4m3 and e5m2 only",
        ));
    }
    let user = Constants::parse_params(function, params).map_err(Failure::bad_input)?;
    let constants = Constants::resolve_checked(
        function,
        &user,
        function_args.param_rounding,
        &crate::format::Binary32,
    )
    .map_err(Failure::bad_input)?;
    Ok((function, constants))
}

/// `eval --format i8|u8 X`: the expected code of input code X (an integer), or with X = `all`
/// the CSV table of the 256 codes. `None` when the format is not quantized.
pub fn eval(
    format: Option<&str>,
    quant: &QuantArgs,
    function: &str,
    x: &str,
    derivative: bool,
    json: bool,
    function_args: &FunctionArgs,
) -> Result<Option<i32>, Failure> {
    let Some(ty) = format.and_then(IntType::by_name) else {
        refuse_with_float(quant, format)?;
        return Ok(None);
    };
    let spec = QuantSpec::parse(ty, &quant.texts()).map_err(Failure::bad_input)?;
    let (f, constants) = function_and_constants(function, &function_args.params, function_args)?;
    let role = if derivative {
        Role::Derivative
    } else {
        Role::Forward
    };
    if json && x == "all" {
        return Err(Failure::bad_input(
            "eval --json takes one code; `all` prints the 256-row table as CSV",
        ));
    }
    let codes: Vec<i32> = if x == "all" {
        ty.codes().collect()
    } else {
        let q: i32 = x.trim().parse().map_err(|_| {
            Failure::bad_input(format!(
                "input '{x}': with --format {} X is an integer code or `all`",
                ty.name()
            ))
        })?;
        if !ty.codes().contains(&q) {
            return Err(Failure::bad_input(format!(
                "input {q} is outside the {} range {}..{}",
                ty.name(),
                ty.min(),
                ty.max()
            )));
        }
        vec![q]
    };
    let table = codes
        .iter()
        .map(|&q| crate::quant::reference::expected(&spec, f, role, &constants, q))
        .collect::<Result<Vec<_>, _>>()
        .map_err(|message| Failure { code: 1, message })?;
    if !json {
        if x == "all" {
            sayln!("q,x,t,t_exact,expected,ties_away");
        }
        for e in &table {
            if x == "all" {
                let exact = e.t_exact.as_ref().map_or(String::new(), |t| t.to_string());
                sayln!(
                    "{},{},{},{exact},{},{}",
                    e.q,
                    e.x,
                    e.t,
                    e.nearest_even,
                    e.ties_away
                );
            } else {
                sayln!(
                    "{} {}: x = {} = {}, exact output {}, correctly rounded {} (ties away: {})",
                    f.name(),
                    ty.name(),
                    e.x,
                    Float64(&e.x),
                    e.t,
                    e.nearest_even,
                    e.ties_away
                );
            }
        }
    } else {
        let e = &table[0];
        sayln!(
            "{}",
            serde_json::json!({
                "function": f.name(), "format": ty.name(),
                "role": if derivative { "derivative" } else { "forward" },
                "q": e.q, "x": e.x.to_string(), "t": e.t,
                "t_exact": e.t_exact.as_ref().map(|t| t.to_string()),
                "expected": e.nearest_even, "ties_away": e.ties_away,
            })
        );
    }
    Ok(Some(0))
}

/// A rational shown as its nearest binary64.
struct Float64<'a>(&'a rug::Rational);

impl std::fmt::Display for Float64<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}", rug::Float::with_val(1024, self.0).to_f64())
    }
}

/// `check` of quantized kernels: `Some(exit status)` when `--format i8|u8` or a quantized
/// manifest is given, `None` for the float path (after refusing the quantized options there).
pub fn check(args: &CheckArgs) -> Result<Option<i32>, Failure> {
    let quantized_manifest = args
        .manifest
        .as_deref()
        .is_some_and(crate::quant::manifest::is_quantized);
    let ty = args.format.as_deref().and_then(IntType::by_name);
    if ty.is_none() && !quantized_manifest {
        refuse_with_float(&args.quant.quant, args.format.as_deref())?;
        if args.quant.max_steps.is_some() {
            return Err(Failure::bad_input(
                "--max-steps applies to --format i8 and u8 only (use --max-ulp)",
            ));
        }
        return Ok(None);
    }
    refuse_float_only(args)?;
    let limit = match (args.quant.max_steps, args.max_ulp) {
        (Some(_), Some(_)) => {
            return Err(Failure::bad_input(
                "--max-steps and --max-ulp are the same limit for i8/u8 (a step is the ulp of an integer code): give one",
            ))
        }
        (Some(s), None) | (None, Some(s)) => {
            if !s.is_finite() || s < 0.0 {
                return Err(Failure::bad_input(format!(
                    "--max-steps must be a finite number >= 0, got {s}"
                )));
            }
            Limit::MaxSteps(s)
        }
        (None, None) => Limit::CorrectlyRounded,
    };
    let entries = match (&args.manifest, ty) {
        (Some(path), _) => {
            if args.lib.is_some() || args.symbol.is_some() || args.function.is_some() {
                return Err(Failure::bad_input(
                    "--manifest replaces --lib, --symbol, --function and --format",
                ));
            }
            refuse_with_float(&args.quant.quant, Some("a manifest (its entries set them)"))?;
            crate::quant::manifest::load(path).map_err(Failure::bad_input)?
        }
        (None, Some(ty)) => vec![entry_from_args(args, ty)?],
        (None, None) => unreachable!("checked above"),
    };
    let outputs = Outputs::from_args(args)?;
    let options = super::check::runner_options(args)?;
    // Everything that can be bad input is checked before any kernel is called.
    let mut planned = Vec::new();
    for entry in &entries {
        let (function, constants) =
            function_and_constants(&entry.function, &entry.params, &args.function_args)?;
        crate::kernel::loader::validate(&entry.library, &entry.symbol)
            .map_err(Failure::bad_input)?;
        planned.push((entry, function, constants));
    }
    let mut reports = Vec::new();
    for (entry, function, constants) in planned {
        reports.push(check_one(
            entry, function, &constants, args, &options, limit,
        )?);
    }
    let manifest = args.manifest.is_some();
    if let Some(path) = &outputs.json {
        write_atomic(path, &json_document(&reports, manifest)).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &outputs.csv {
        write_atomic(path, &csv_document(&reports)).map_err(Failure::bad_input)?;
    }
    if outputs.terminal {
        for r in &reports {
            say!("{}", r.terminal());
        }
    }
    Ok(Some(super::check::combine(
        reports.iter().map(QuantReport::exit_code),
    )))
}

/// Runs one kernel on the 256 codes and measures it.
fn check_one(
    entry: &QuantEntry,
    function: &'static dyn Activation,
    constants: &Constants,
    args: &CheckArgs,
    options: &crate::kernel::RunnerOptions,
    limit: Limit,
) -> Result<QuantReport, Failure> {
    let role = if entry.derivative {
        Role::Derivative
    } else {
        Role::Forward
    };
    let expected = expected_table(&entry.spec, function, role, constants)
        .map_err(|message| Failure { code: 1, message })?;
    let spec = KernelSpec {
        library: entry.library.clone(),
        symbol: entry.symbol.clone(),
        function: entry.function.clone(),
        // The worker only needs the element size: any 1-byte format carries the codes' bytes.
        format: &crate::format::E4m3 { saturating: false },
        input_format: &crate::format::E4m3 { saturating: false },
        signature: crate::kernel::Signature::Contiguous,
        role: if entry.derivative {
            KernelRole::Derivative
        } else {
            KernelRole::Forward
        },
        params: entry
            .params
            .iter()
            .filter_map(|p| {
                p.split_once('=')
                    .map(|(n, v)| (n.to_string(), v.trim().to_string()))
            })
            .collect(),
        param_passing: match args.param_passing {
            super::check::PassingArg::Baked => ParamPassing::Baked,
            super::check::PassingArg::Trailing => ParamPassing::Trailing,
        },
        in_place: args.in_place,
        thread_safe: !args.not_thread_safe,
    };
    let ty = entry.spec.ty;
    let mut runner = Runner::start(&spec, options.clone()).map_err(Failure::bad_input)?;
    let codes: Vec<u32> = ty.codes().map(|q| u32::from(ty.bits(q))).collect();
    let run = runner.run(&codes, None);
    // The worker returns each element's byte widened to a word; only the low byte is the code.
    let outputs: Vec<Option<i32>> = run
        .outputs
        .iter()
        .map(|o| o.map(|w| ty.code(w as u8)))
        .collect();
    let crashes = run
        .crashes
        .iter()
        .map(|c| (ty.code(c.input as u8), c.signal.clone()))
        .collect();
    let measures = measure(&expected, &outputs);
    Ok(QuantReport {
        function: function.name().to_string(),
        role: if entry.derivative {
            "derivative"
        } else {
            "forward"
        }
        .to_string(),
        params: spec.params.clone(),
        spec: entry.spec.clone(),
        library: entry.library.display().to_string(),
        symbol: entry.symbol.clone(),
        expected,
        outputs,
        measures,
        crashes,
        limit,
    })
}

/// The kernel named by `--lib/--symbol/--function/--format`.
fn entry_from_args(args: &CheckArgs, ty: IntType) -> Result<QuantEntry, Failure> {
    let spec = QuantSpec::parse(ty, &args.quant.quant.texts()).map_err(Failure::bad_input)?;
    fn need<T>(v: Option<T>, flag: &str) -> Result<T, Failure> {
        v.ok_or_else(|| Failure::bad_input(format!("{flag} is required (or use --manifest)")))
    }
    Ok(QuantEntry {
        library: need(args.lib.clone(), "--lib")?,
        symbol: need(args.symbol.clone(), "--symbol")?,
        function: need(args.function.clone(), "--function")?,
        derivative: args.role == RoleArg::Derivative,
        params: args.function_args.params.clone(),
        spec,
    })
}

/// Options of the float path that mean nothing for 256 codes: refused, not ignored.
fn refuse_float_only(args: &CheckArgs) -> Result<(), Failure> {
    let s = &args.sweep_options;
    let given = [
        (args.role == RoleArg::Gradient, "--role gradient"),
        (args.from_output, "--from-output"),
        (!s.sweep.is_empty(), "--sweep"),
        (s.range.is_some(), "--range"),
        (s.points.is_some(), "--points"),
        (args.shard.is_some(), "--shard"),
        (args.plot.is_some(), "--plot"),
        (args.html.is_some(), "--html"),
        (args.junit.is_some(), "--junit"),
        (args.findings.is_some(), "--findings"),
        (args.csv_points_over.is_some(), "--csv-points-over"),
        (args.abs_floor.is_some(), "--abs-floor"),
        (args.inputs.is_some(), "--inputs"),
        (args.builtin_kernel.is_some(), "--builtin-kernel"),
        (args.caller_fpenv.is_some(), "--caller-fpenv"),
        (!args.cpu_mask.is_empty(), "--cpu-mask"),
        (
            args.signature == super::check::SignatureArg::Strided || args.strides.is_some(),
            "--signature strided",
        ),
        (args.input_format.is_some(), "--input-format"),
        (args.output_format.is_some(), "--output-format"),
    ];
    if let Some((_, flag)) = given.iter().find(|(g, _)| *g) {
        return Err(Failure::bad_input(format!(
            "{flag} does not apply to quantized kernels (i8/u8: all 256 codes, reported as JSON, CSV and terminal)"
        )));
    }
    Ok(())
}
