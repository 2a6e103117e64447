//! `ulpgauge eval` of a gated function: the correctly rounded y(a, b) at one pair.

use super::eval::{parse_input, plain_decimal, Rounded};
use super::{format_pair, Failure, FunctionArgs};
use crate::format::hex;
use crate::reference::PairEvaluator;
use crate::report::{display_value, BitsValue};
use rug::Float;
use serde_json::json;

/// What `eval` was asked, beyond the function and its inputs.
pub struct Options<'a> {
    /// `--format`.
    pub format: Option<&'a str>,
    /// `--input-format` (must equal the output format for a gated function).
    pub input_format: Option<&'a str>,
    /// `--output-format`.
    pub output_format: Option<&'a str>,
    /// `--role`.
    pub role: Option<&'a str>,
    /// `--derivative` (refused: two partial derivatives).
    pub derivative: bool,
    /// `--json`.
    pub json: bool,
    /// Parameters and their rounding.
    pub function_args: &'a FunctionArgs,
}

/// Evaluates a gated function at the pair given in `rest` (A B).
pub fn evaluate(function: &str, rest: &[String], opts: Options) -> Result<i32, Failure> {
    let [a_text, b_text] = rest else {
        return Err(Failure::bad_input(format!(
            "{function} takes two inputs A B (usage: ulpgauge eval --function {function} --format FMT A B)"
        )));
    };
    let (input_name, output_name) =
        format_pair(opts.format, opts.input_format, opts.output_format)?;
    if input_name != output_name {
        return Err(Failure::bad_input(format!(
            "{function}: a, b and y share one format (--format), got input {input_name} and output {output_name}"
        )));
    }
    let role = super::gated_role(function, opts.role, opts.derivative)?;
    let evaluator = super::resolve_pair(function, &output_name, role, opts.function_args)?
        .expect("a gated function");
    let format = evaluator.format();
    let a = parse_input(format, a_text).map_err(|e| prefixed("a", e))?;
    let b = parse_input(format, b_text).map_err(|e| prefixed("b", e))?;
    let reference = evaluator.reference(a.bits, b.bits).map_err(|e| Failure {
        code: 1,
        message: e.to_string(),
    })?;
    let rounded = Rounded::of(format, &reference);
    let Rounded {
        out,
        below,
        above,
        ulp,
        rounding_error,
    } = rounded;
    let exact = exact_digits(&evaluator, a.bits, b.bits);
    let name = evaluator.gated().name();
    if opts.json {
        let report = json!({
            "function": name,
            "arity": 2,
            "role": role.name(),
            "format": format.name(),
            "a": BitsValue::new(format, a.bits),
            "a_rounded_from": a.rounded_from,
            "b": BitsValue::new(format, b.bits),
            "b_rounded_from": b.rounded_from,
            "exact": exact,
            "rounded": BitsValue::new(format, out),
            "neighbours": {
                "below": below.map(|v| BitsValue::new(format, v)),
                "above": above.map(|v| BitsValue::new(format, v)),
            },
            "ulp": ulp,
            "rounding_error_ulp": rounding_error,
        });
        sayln!("{}", serde_json::to_string_pretty(&report).expect("json"));
        return Ok(0);
    }
    let show = |bits: u32| format!("{} = {}", hex(format, bits), display_value(format, bits));
    let definition = match role.name() {
        "forward" => evaluator.gated().definition().to_string(),
        "derivative-a" => crate::activation::gated::partial_definitions(evaluator.gated()).0,
        _ => crate::activation::gated::partial_definitions(evaluator.gated()).1,
    };
    sayln!(
        "{name} {} in {}  ({definition})",
        role.name(),
        format.name()
    );
    for (label, input) in [("a", &a), ("b", &b)] {
        match &input.rounded_from {
            Some(text) => sayln!(
                "  {label}          {}  (rounded from {text})",
                show(input.bits)
            ),
            None => sayln!("  {label}          {}", show(input.bits)),
        }
    }
    rounded.say(exact.as_deref(), &show);
    Ok(0)
}

fn prefixed(which: &str, e: Failure) -> Failure {
    Failure {
        code: e.code,
        message: format!("{which}: {}", e.message),
    }
}

/// The exact y to 40 significant digits, from a 320-bit enclosure (finite inputs only).
fn exact_digits(evaluator: &PairEvaluator, a: u32, b: u32) -> Option<String> {
    let iv = evaluator.enclosure(a, b, 320)?;
    let mid = Float::with_val(321, &iv.lo + &iv.hi) / 2u32;
    Some(plain_decimal(&mid.to_string_radix(10, Some(40))))
}
