//! `ulpgauge inputs`: writes the inputs a check's sweep measures as a .npy array, so that a
//! kernel can be run anywhere (any framework, any device) and its outputs measured with
//! `check --inputs X.npy --outputs Y.npy`.

use super::check::{build_config, sweep_spec, KernelTarget, RoleArg, SweepOptions};
use super::{check_args, Failure, FunctionArgs};
use crate::check::{planned_inputs, CheckRole, Shard};
use crate::format::Format;
use crate::recorded::{natural_element, write_patterns};
use crate::report::check_writable;
use crate::sweep::{self, Inputs, SweepKind};
use std::path::PathBuf;

/// Arguments of `inputs`.
#[derive(clap::Args, Debug)]
pub struct Args {
    /// Format of the kernel's inputs.
    #[arg(long, value_name = "f32|f16|bf16|e4m3|e5m2")]
    pub format: String,
    #[command(flatten)]
    pub sweep_options: SweepOptions,
    /// Write only the I-th of N contiguous parts of the inputs (1 <= I <= N), as `check
    /// --shard I/N` would measure them.
    #[arg(long, value_name = "I/N")]
    pub shard: Option<String>,
    /// The .npy file to write: float32 for f32, float16 for f16, uint16 bit patterns for bf16.
    #[arg(long, value_name = "X.npy")]
    pub out: PathBuf,
    /// Catalog function whose interesting points (kinks, thresholds) dense and edge sweeps
    /// visit, as `check` does; without it they sweep the format alone.
    #[arg(long, value_name = "FUNC")]
    pub function: Option<String>,
    #[command(flatten)]
    pub function_args: FunctionArgs,
    /// What the kernel computes (derivative roles also probe the kinks).
    #[arg(long, value_enum, default_value_t = RoleArg::Forward)]
    pub role: RoleArg,
    /// Print nothing on success.
    #[arg(long)]
    pub quiet: bool,
}

/// The planned measured inputs and probes of the sweep the arguments describe.
fn plan(args: &Args, format: &'static dyn Format) -> Result<(Inputs, Vec<u32>), Failure> {
    let Some(function) = &args.function else {
        let spec = sweep_spec(format, &args.sweep_options)?;
        let plan = sweep::plan(format, &spec, Vec::new()).map_err(Failure::bad_input)?;
        let mut probes = plan.probes;
        probes.extend(sweep::format_specials(format));
        probes.sort_unstable();
        probes.dedup();
        return Ok((plan.measured, probes));
    };
    let mut check = check_args::defaults();
    check.sweep_options = args.sweep_options.clone();
    check.function_args = args.function_args.clone();
    check.role = args.role;
    let target = KernelTarget {
        library: None,
        symbol: None,
        function: function.clone(),
        format: args.format.clone(),
        role: match args.role {
            RoleArg::Forward => CheckRole::Forward,
            RoleArg::Derivative => CheckRole::Derivative,
            RoleArg::Gradient => CheckRole::Gradient { from_output: false },
            RoleArg::DerivativeA | RoleArg::DerivativeB => {
                return Err(Failure::bad_input(
                    "inputs: the roles of the two-input functions (derivative-a, derivative-b) are not planned here yet",
                ))
            }
        },
        params: args.function_args.params.clone(),
    };
    let config = build_config(&target, &check)?;
    let (plan, probes) = planned_inputs(&config).map_err(Failure::bad_input)?;
    Ok((plan.measured, probes))
}

/// Runs `inputs`.
pub fn run(args: Args) -> Result<i32, Failure> {
    let format = crate::format::resolve(&args.format, args.function_args.fp8_overflow)
        .map_err(Failure::bad_input)?;
    if format.width() == 8 {
        return Err(Failure::bad_input(format!(
            "inputs: recorded sets of {} are not supported (8-bit formats are checked through the kernel ABI)",
            format.name()
        )));
    }
    let shard = args
        .shard
        .as_deref()
        .map(Shard::parse)
        .transpose()
        .map_err(Failure::bad_input)?;
    check_writable(&args.out).map_err(Failure::bad_input)?;
    let (measured, probes) = plan(&args, format)?;
    // Unsharded, the file also holds the probes (special values, kinks) that a check
    // evaluates beside its sweep; a part holds its slice of the sweep alone, so that the parts
    // stay in bit order one after the other.
    let (inputs, part) = match shard {
        None => (measured.union(&Inputs::from_list(probes)), String::new()),
        Some(s) => {
            let (from, to) = s.bounds(measured.len());
            (
                measured.slice(from, to),
                format!(", part {}/{}", s.index, s.count),
            )
        }
    };
    if inputs.is_empty() {
        return Err(Failure::bad_input(
            "the sweep has no inputs here (is the part or the range empty?)",
        ));
    }
    write_patterns(&args.out, format, inputs.len(), inputs.iter()).map_err(Failure::bad_input)?;
    if !args.quiet {
        let kinds = sweep_spec(format, &args.sweep_options)?
            .kinds
            .iter()
            .map(|k| format!("{k:?}").to_lowercase())
            .collect::<Vec<_>>()
            .join(",");
        sayln!(
            "wrote {} {} inputs ({kinds} sweep{part}, {}) to {}",
            inputs.len(),
            format.name(),
            natural_element(format).describe(),
            args.out.display()
        );
        if args.function.is_none()
            && args
                .sweep_options
                .sweep
                .iter()
                .any(|k| *k != SweepKind::Exhaustive)
        {
            sayln!("note: without --function, dense and edge sweeps leave out the neighbourhoods of the function's interesting points");
        }
    }
    Ok(0)
}
