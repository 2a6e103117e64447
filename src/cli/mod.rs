//! Command-line interface: one file per subcommand.
//!
//! Exit status: 0 clean, 1 a finding failed, 2 bad input (one line on stderr), 3 the kernel
//! crashed or hung.

/// Like `print!`, but a closed standard output (`ulpgauge … | head`) is not an error: reports
/// go on to their files and the exit status stays the check's.
macro_rules! say {
    ($($arg:tt)*) => {{
        use std::io::Write as _;
        let _ = write!(std::io::stdout(), $($arg)*);
    }};
}

/// Like `println!`, with [`say!`]'s handling of a closed standard output.
macro_rules! sayln {
    () => {{
        use std::io::Write as _;
        let _ = writeln!(std::io::stdout());
    }};
    ($($arg:tt)*) => {{
        use std::io::Write as _;
        let _ = writeln!(std::io::stdout(), $($arg)*);
    }};
}

mod batch;
mod certify;
pub mod check;
pub mod check_args;
pub mod check_env;
mod check_pair_manifest;
mod check_pairs;
mod compare;
mod eval;
mod eval_pair;
mod functions;
mod golden;
mod inputs;
mod matrix;
mod merge;
mod quant;
mod slurm;
mod worker;

use clap::{Parser, Subcommand};

/// Exit status for bad input.
pub const EXIT_BAD_INPUT: i32 = 2;

/// An error that ends the command: a one-line message and an exit status.
#[derive(Debug)]
pub struct Failure {
    /// Exit status.
    pub code: i32,
    /// One line, printed on stderr after `ulpgauge: `.
    pub message: String,
}

impl Failure {
    /// Bad input (exit status 2).
    pub fn bad_input(message: impl Into<String>) -> Self {
        Failure {
            code: EXIT_BAD_INPUT,
            message: message.into(),
        }
    }
}

/// Measures how accurate activation-function kernels are, in ulps, against correctly rounded
/// MPFR references.
#[derive(Parser, Debug)]
#[command(name = "ulpgauge", version, about)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Correctly rounded value of a catalog function at one input.
    Eval(eval::Args),
    /// List the catalog: definitions, parameters, defaults and facts.
    Functions(functions::Args),
    /// Correctly rounded references for bit patterns read from stdin, one line each.
    Batch(batch::Args),
    /// Write or verify the golden tables of every 16-bit reference.
    Golden(golden::Args),
    /// Runs a kernel for the main process (internal).
    #[command(hide = true)]
    Worker(worker::Args),
    /// Measure a kernel: ulp error, non-finite runs, thresholds, special values.
    Check(Box<check::Args>),
    /// Judge one kernel against a spec's requirements and write a certificate.
    Certify(certify::Args),
    /// Compare a baseline report with a candidate report, kernel by kernel.
    Compare(compare::Args),
    /// Build the kernels with several compilers and flags and tabulate kernel x build.
    Matrix(matrix::Args),
    /// Join the reports of `check --shard I/N` runs into the report of the whole sweep.
    Merge(merge::Args),
    /// Write (and optionally submit) a Slurm job array that runs a check in shards and merges them.
    Slurm(Box<slurm::Args>),
    /// Write the inputs of a sweep as a .npy array, to record a kernel's outputs anywhere.
    Inputs(inputs::Args),
}

/// Parses the command line, runs the command and returns the exit status.
pub fn run() -> i32 {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            return match e.kind() {
                clap::error::ErrorKind::DisplayHelp | clap::error::ErrorKind::DisplayVersion => {
                    let _ = e.print();
                    0
                }
                _ => {
                    // Bad input is one line, like every other refusal (clap's usage and tips
                    // are what --help shows).
                    eprintln!("ulpgauge: {}", one_line(&e.render().to_string()));
                    EXIT_BAD_INPUT
                }
            };
        }
    };
    let result = match cli.command {
        Command::Eval(args) => eval::run(args),
        Command::Functions(args) => functions::run(args),
        Command::Batch(args) => batch::run(args),
        Command::Golden(args) => golden::run(args),
        Command::Worker(args) => worker::run(args),
        Command::Check(args) => check::run(*args),
        Command::Certify(args) => certify::run(args),
        Command::Compare(args) => compare::run(args),
        Command::Matrix(args) => matrix::run(args),
        Command::Merge(args) => merge::run(args),
        Command::Slurm(args) => slurm::run(*args),
        Command::Inputs(args) => inputs::run(args),
    };
    match result {
        Ok(code) => code,
        Err(failure) => {
            eprintln!("ulpgauge: {}", flatten(&failure.message));
            failure.code
        }
    }
}

/// The first line of clap's message, without its "error: " prefix; control characters of
/// the offending argument shown escaped so the message stays one line.
pub fn one_line(rendered: &str) -> String {
    let first = rendered
        .lines()
        .find(|l| !l.trim().is_empty())
        .unwrap_or("bad arguments");
    let text = first.strip_prefix("error: ").unwrap_or(first);
    text.chars()
        .flat_map(char::escape_default)
        .collect::<String>()
        .replace("\\'", "'")
        .replace("\\\"", "\"")
}

/// A message on one line: a parser's multi-line excerpt (TOML, JSON) joined with " | ".
pub fn flatten(message: &str) -> String {
    message
        .lines()
        .map(str::trim_end)
        .filter(|l| !l.trim().is_empty())
        .collect::<Vec<_>>()
        .join(" | ")
        .replace('\r', " ")
}

/// Options shared by every command that evaluates a catalog function.
#[derive(clap::Args, Debug, Clone)]
pub struct FunctionArgs {
    /// Parameter as NAME=VALUE (exact decimal), repeatable.
    #[arg(long = "param", value_name = "NAME=VALUE")]
    pub params: Vec<String>,
    /// How parameters and built-in constants enter the reference.
    #[arg(long, value_enum, default_value_t = crate::reference::ParamRounding::Exact)]
    pub param_rounding: crate::reference::ParamRounding,
    /// OCP FP8 formats: what the conversion does beyond ±max (the OFP8 specification's two
    /// modes; default nan: NaN in e4m3, ±∞ in e5m2).
    #[arg(long, value_enum, value_name = "nan|saturate")]
    pub fp8_overflow: Option<crate::format::Fp8Overflow>,
}

/// The function of a command that takes `--function FUNC` like `check`, or, in the older form,
/// as its first positional argument; returns it, the remaining positional arguments and, for
/// the older form, the note to print once the command has succeeded (so that bad input stays
/// one line).
pub fn function_and_inputs(
    command: &str,
    flag: Option<String>,
    positional: &[String],
) -> Result<(String, Vec<String>, Option<String>), Failure> {
    if let Some(function) = flag {
        return Ok((function, positional.to_vec(), None));
    }
    let Some((function, rest)) = positional.split_first() else {
        return Err(Failure::bad_input(format!(
            "{command}: --function is required (see `ulpgauge functions`)"
        )));
    };
    let note = format!(
        "ulpgauge: note: `{command} {function} …` is the older form; write `{command} --function {function} …` (the same flag as check, certify specs and manifests)"
    );
    Ok((function.clone(), rest.to_vec(), Some(note)))
}

/// A resolved function, format and role, ready to evaluate.
pub struct Target {
    /// The evaluator.
    pub evaluator: crate::reference::Evaluator<'static>,
}

/// The input and output format names of `--format F` or `--input-format F --output-format G`
/// (either one defaulting to `--format`).
pub fn format_pair(
    format: Option<&str>,
    input: Option<&str>,
    output: Option<&str>,
) -> Result<(String, String), Failure> {
    match (input.or(format), output.or(format)) {
        (Some(i), Some(o)) => Ok((i.to_string(), o.to_string())),
        _ => Err(Failure::bad_input(
            "--format F, or both --input-format F and --output-format G, is required",
        )),
    }
}

/// [`resolve`] with the input patterns read in `input` and the result rounded into `format`;
/// `--fp8-overflow` applies to the output side (an 8-bit input is a pattern, not a rounding).
pub fn resolve_mixed(
    function: &str,
    input: &str,
    format: &str,
    derivative: bool,
    args: &FunctionArgs,
) -> Result<Target, Failure> {
    let mut target = resolve(function, format, derivative, args)?;
    if input != format {
        let base = input.strip_suffix("-sat").unwrap_or(input);
        let input = crate::format::resolve(base, None).map_err(Failure::bad_input)?;
        let e = target.evaluator;
        target.evaluator = e.with_input(input);
    }
    Ok(target)
}

/// Resolves a gated function (two inputs), its role and format into a pair evaluator;
/// `Ok(None)` when `function` is not a gated function.
pub fn resolve_pair(
    function: &str,
    format: &str,
    role: crate::activation::GatedRole,
    args: &FunctionArgs,
) -> Result<Option<crate::reference::PairEvaluator>, Failure> {
    use crate::activation::{lookup_gated, Constants};
    let Some(g) = lookup_gated(function) else {
        return Ok(None);
    };
    let fmt = crate::format::resolve(format, args.fp8_overflow).map_err(Failure::bad_input)?;
    let user = Constants::parse_params(g.act(), &args.params)
        .map_err(|e| Failure::bad_input(e.replacen(g.act().name(), g.name(), 1)))?;
    let constants = Constants::resolve_checked(g.act(), &user, args.param_rounding, fmt)
        .map_err(Failure::bad_input)?;
    Ok(Some(crate::reference::PairEvaluator::new(
        g, role, constants, fmt,
    )))
}

/// The role of a gated function from `--role` and `--derivative`: a gated function has two
/// partial derivatives, so `--derivative` alone is refused naming both roles.
pub fn gated_role(
    function: &str,
    role: Option<&str>,
    derivative: bool,
) -> Result<crate::activation::GatedRole, Failure> {
    use crate::activation::GatedRole;
    match (role, derivative) {
        (None, false) => Ok(GatedRole::Forward),
        (None, true) | (Some("derivative"), _) => Err(Failure::bad_input(format!(
            "{function} takes two inputs and has two partial derivatives: use --role derivative-a (dy/da) or --role derivative-b (dy/db)"
        ))),
        (Some(name), _) => GatedRole::parse(name).ok_or_else(|| {
            Failure::bad_input(format!(
                "--role {name}: {function} has the roles forward, derivative-a, derivative-b"
            ))
        }),
    }
}

/// Whether a unary function's `--role` asks for f′ (`forward` or `derivative`; the gated
/// roles are refused naming the function's arity).
pub fn unary_derivative(
    function: &str,
    role: Option<&str>,
    derivative: bool,
) -> Result<bool, Failure> {
    match role {
        None => Ok(derivative),
        Some("forward") if !derivative => Ok(false),
        Some("derivative") => Ok(true),
        Some(name) => Err(Failure::bad_input(format!(
            "--role {name}: {function} takes one input and has the roles forward, derivative"
        ))),
    }
}

/// The names of every catalog function, unary then gated, for "unknown function" lines.
pub fn all_function_names() -> String {
    let unary = crate::activation::catalog().iter().map(|f| f.name());
    let gated = crate::activation::gated_catalog().iter().map(|g| g.name());
    unary.chain(gated).collect::<Vec<_>>().join(", ")
}

/// Resolves names and parameters into an evaluator, or a bad-input failure.
pub fn resolve(
    function: &str,
    format: &str,
    derivative: bool,
    args: &FunctionArgs,
) -> Result<Target, Failure> {
    use crate::activation::{lookup, Constants, Role};
    let f = lookup(function).ok_or_else(|| {
        Failure::bad_input(format!(
            "unknown function '{function}' (known: {})",
            all_function_names()
        ))
    })?;
    let fmt = crate::format::resolve(format, args.fp8_overflow).map_err(Failure::bad_input)?;
    let user = Constants::parse_params(f, &args.params).map_err(Failure::bad_input)?;
    let constants = Constants::resolve_checked(f, &user, args.param_rounding, fmt)
        .map_err(Failure::bad_input)?;
    let role = if derivative {
        Role::Derivative
    } else {
        Role::Forward
    };
    Ok(Target {
        evaluator: crate::reference::Evaluator::new(f, role, constants, fmt),
    })
}
