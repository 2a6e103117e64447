//! `ulpgauge batch`: references for many bit patterns at once (used by the independent
//! cross-check script and by scripts of users).

use super::{format_pair, resolve_mixed, Failure, FunctionArgs};
use crate::format::{hex, parse_hex};
use rayon::prelude::*;
use std::io::{Read, Write};

/// Arguments of `batch`.
#[derive(clap::Args, Debug)]
pub struct Args {
    /// Catalog function, as `check` and every command take it.
    #[arg(long, value_name = "FUNC")]
    function: Option<String>,
    /// The older form `batch FUNC` (still read, with a note).
    #[arg(value_name = "FUNC", hide = true)]
    positional: Option<String>,
    /// Format of the inputs and of the results.
    #[arg(long, value_name = "f32|f16|bf16|e4m3|e5m2")]
    format: Option<String>,
    /// Format of the inputs, when it differs from the results' (default: --format).
    #[arg(long, value_name = "FORMAT")]
    input_format: Option<String>,
    /// Format the results are rounded into (default: --format).
    #[arg(long, value_name = "FORMAT")]
    output_format: Option<String>,
    /// Evaluate f′ instead of f (one-input functions).
    #[arg(long)]
    derivative: bool,
    /// forward or derivative; for a gated function forward, derivative-a or derivative-b.
    #[arg(long, value_name = "ROLE")]
    role: Option<String>,
    #[command(flatten)]
    function_args: FunctionArgs,
}

/// Reads 0x-hex patterns (whitespace separated) from stdin; prints `0xIN 0xOUT` per input, or
/// for a gated function reads them two by two and prints `0xA 0xB 0xOUT` per pair.
pub fn run(args: Args) -> Result<i32, Failure> {
    let given: Vec<String> = args.positional.iter().cloned().collect();
    let (function, rest, note) =
        super::function_and_inputs("batch", args.function.clone(), &given)?;
    if !rest.is_empty() {
        return Err(Failure::bad_input(
            "batch reads its inputs from stdin (usage: ulpgauge batch --function FUNC --format FMT)",
        ));
    }
    let (input_name, output_name) = format_pair(
        args.format.as_deref(),
        args.input_format.as_deref(),
        args.output_format.as_deref(),
    )?;
    if crate::activation::lookup_gated(&function).is_some() {
        if input_name != output_name {
            return Err(Failure::bad_input(format!(
                "{function}: a, b and y share one format (--format), got input {input_name} and output {output_name}"
            )));
        }
        let role = super::gated_role(&function, args.role.as_deref(), args.derivative)?;
        let evaluator = super::resolve_pair(&function, &output_name, role, &args.function_args)?
            .expect("a gated function");
        pairs(&evaluator)?;
        if let Some(note) = note {
            eprintln!("{note}");
        }
        return Ok(0);
    }
    let derivative = super::unary_derivative(&function, args.role.as_deref(), args.derivative)?;
    let target = resolve_mixed(
        &function,
        &input_name,
        &output_name,
        derivative,
        &args.function_args,
    )?;
    let evaluator = &target.evaluator;
    let format = evaluator.format();
    let in_format = evaluator.input_format();
    let inputs = read_patterns(in_format)?;
    let outputs = inputs
        .par_iter()
        .map(|&x| evaluator.reference(x).map(|r| r.bits))
        .collect::<Result<Vec<u32>, _>>()
        .map_err(|e| Failure {
            code: 1,
            message: e.to_string(),
        })?;
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    for (x, y) in inputs.iter().zip(&outputs) {
        writeln!(out, "{} {}", hex(in_format, *x), hex(format, *y))
            .map_err(|e| Failure::bad_input(e.to_string()))?;
    }
    if let Some(note) = note {
        eprintln!("{note}");
    }
    Ok(0)
}

/// `batch` of a gated function: stdin read as pairs (a b), `0xA 0xB 0xOUT` per pair.
fn pairs(evaluator: &crate::reference::PairEvaluator) -> Result<(), Failure> {
    let format = evaluator.format();
    let tokens = read_patterns(format)?;
    if tokens.len() % 2 != 0 {
        return Err(Failure::bad_input(format!(
            "stdin: {} takes pairs (a b), got an odd number of items ({})",
            evaluator.gated().name(),
            tokens.len()
        )));
    }
    let outputs = tokens
        .par_chunks(2)
        .map(|p| evaluator.reference(p[0], p[1]).map(|r| r.bits))
        .collect::<Result<Vec<u32>, _>>()
        .map_err(|e| Failure {
            code: 1,
            message: e.to_string(),
        })?;
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    for (p, y) in tokens.chunks(2).zip(&outputs) {
        writeln!(
            out,
            "{} {} {}",
            hex(format, p[0]),
            hex(format, p[1]),
            hex(format, *y)
        )
        .map_err(|e| Failure::bad_input(e.to_string()))?;
    }
    Ok(())
}

/// Every whitespace-separated bit pattern on stdin, in `format`; a bad item is bad input.
fn read_patterns(format: &dyn crate::format::Format) -> Result<Vec<u32>, Failure> {
    let mut text = String::new();
    std::io::stdin()
        .read_to_string(&mut text)
        .map_err(|e| Failure::bad_input(format!("cannot read stdin: {e}")))?;
    text.split_whitespace()
        .enumerate()
        .map(|(i, token)| {
            parse_hex(format, token)
                .map_err(|e| Failure::bad_input(format!("stdin item {}: {e}", i + 1)))
        })
        .collect()
}
