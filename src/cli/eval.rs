//! `ulpgauge eval`: the correctly rounded value of one function at one input.

use super::{format_pair, resolve_mixed, Failure, FunctionArgs};
use crate::activation::{Ctx, Role, Value};
use crate::format::{hex, parse_hex, Class, Format};
use crate::reference::{parse_decimal, round_rational, Evaluator};
use crate::report::{display_value, BitsValue};
use rug::Float;
use serde_json::json;

/// Arguments of `eval`.
#[derive(clap::Args, Debug)]
pub struct Args {
    /// Catalog function (see `ulpgauge functions`), as `check` and every command take it.
    #[arg(long, value_name = "FUNC")]
    function: Option<String>,
    /// Input: a decimal (rounded to nearest, ties to even, if the format cannot hold it), `inf`,
    /// `-inf`, `nan`, or the format's bit pattern as 0x-hex; a gated function (swiglu, geglu,
    /// geglu-tanh, reglu) takes two, `A B`. The older form `eval FUNC X` is still read (with a
    /// note).
    #[arg(allow_hyphen_values = true, value_name = "X")]
    x: String,
    /// The second input of a gated function (B), or the input in the older form `eval FUNC X`.
    #[arg(allow_hyphen_values = true, value_name = "B")]
    more: Option<String>,
    /// B in the older form `eval FUNC A B` (a negative number, or any value after `--`).
    #[arg(allow_negative_numbers = true, hide = true)]
    older_b: Option<String>,
    /// Format of the input and of the result.
    #[arg(long, value_name = "f32|f16|bf16|e4m3|e5m2")]
    format: Option<String>,
    /// Format of the input, when it differs from the result's (default: --format).
    #[arg(long, value_name = "FORMAT")]
    input_format: Option<String>,
    /// Format the result is rounded into (default: --format).
    #[arg(long, value_name = "FORMAT")]
    output_format: Option<String>,
    /// Evaluate f′ instead of f (one-input functions).
    #[arg(long)]
    derivative: bool,
    /// forward or derivative; for a gated function forward, derivative-a (∂y/∂a = act′(a)·b) or
    /// derivative-b (∂y/∂b = act(a)).
    #[arg(long, value_name = "ROLE")]
    role: Option<String>,
    /// Print one JSON object instead of text.
    #[arg(long)]
    json: bool,
    #[command(flatten)]
    function_args: FunctionArgs,
    #[command(flatten)]
    quant: super::quant::QuantArgs,
}

/// How the input was given.
pub(super) struct Input {
    pub(super) bits: u32,
    /// The decimal text when it was not exactly representable.
    pub(super) rounded_from: Option<String>,
}

pub(super) fn parse_input(format: &dyn Format, text: &str) -> Result<Input, Failure> {
    let exact = |bits| {
        Ok(Input {
            bits,
            rounded_from: None,
        })
    };
    if text.starts_with("0x") || text.starts_with("0X") {
        return parse_hex(format, text)
            .map_err(Failure::bad_input)
            .and_then(exact);
    }
    match text.to_ascii_lowercase().as_str() {
        "nan" => return exact(format.quiet_nan()),
        "inf" | "+inf" | "infinity" | "-inf" | "-infinity" if format.layout().is_finite_only() => {
            return Err(Failure::bad_input(format!(
                "input {text}: {} has no infinities",
                format.name()
            )))
        }
        "inf" | "+inf" | "infinity" => return exact(format.infinity(false)),
        "-inf" | "-infinity" => return exact(format.infinity(true)),
        _ => {}
    }
    let q = parse_decimal(text).map_err(|e| Failure::bad_input(format!("input {e}")))?;
    let bits = round_rational(&q, text.trim_start().starts_with('-'), format);
    let representable = format.layout().is_finite(bits)
        && rug::Rational::from_f64(format.to_f64(bits)).is_some_and(|r| r == q);
    Ok(Input {
        bits,
        rounded_from: (!representable).then(|| text.to_string()),
    })
}

/// Exact value to 40 significant digits, from a 320-bit enclosure or the exact rational.
fn exact_digits(evaluator: &Evaluator, format: &dyn Format, bits: u32) -> Option<String> {
    if matches!(format.classify(bits), Class::Nan | Class::Infinite) {
        return None;
    }
    let x = Float::with_val(64, format.to_f64(bits));
    let x = if format.is_sign_negative(bits) && x.is_zero() {
        -x
    } else {
        x
    };
    let ctx = Ctx {
        prec: 320,
        constants: evaluator.constants(),
    };
    let v = match evaluator.function().eval(&x, evaluator.role(), &ctx) {
        Value::Exact(q) => Float::with_val(320, &q),
        Value::Enclosed(iv) => Float::with_val(321, &iv.lo + &iv.hi) / 2u32,
        Value::Near { base, delta } => {
            Float::with_val(640, &base) + (Float::with_val(321, &delta.lo + &delta.hi) / 2u32)
        }
    };
    Some(plain_decimal(&v.to_string_radix(10, Some(40))))
}

/// Rewrites MPFR's `d.ddd…e±N` as a plain decimal when −6 ≤ N ≤ 20, which reads better for
/// activation values; other exponents stay in scientific form.
pub(super) fn plain_decimal(text: &str) -> String {
    let Some((mantissa, exponent)) = text.split_once('e') else {
        return text.to_string();
    };
    let Ok(exponent) = exponent.parse::<i32>() else {
        return text.to_string();
    };
    if !(-6..=20).contains(&exponent) {
        return text.to_string();
    }
    let (sign, digits) = match mantissa.strip_prefix('-') {
        Some(rest) => ("-", rest),
        None => ("", mantissa),
    };
    let digits: String = digits.chars().filter(|c| *c != '.').collect();
    let point = exponent + 1;
    let body = if point <= 0 {
        format!("0.{}{digits}", "0".repeat((-point) as usize))
    } else if point as usize >= digits.len() {
        format!("{digits}{}", "0".repeat(point as usize - digits.len()))
    } else {
        format!(
            "{}.{}",
            &digits[..point as usize],
            &digits[point as usize..]
        )
    };
    format!("{sign}{body}")
}

/// Runs `eval`.
pub fn run(args: Args) -> Result<i32, Failure> {
    let given: Vec<String> = std::iter::once(args.x.clone())
        .chain(args.more.iter().cloned())
        .chain(args.older_b.iter().cloned())
        .collect();
    let (function, rest, note) = super::function_and_inputs("eval", args.function.clone(), &given)?;
    let code = evaluate(&args, &function, &rest)?;
    if let Some(note) = note {
        eprintln!("{note}");
    }
    Ok(code)
}

/// `eval` once its function and input are known.
fn evaluate(args: &Args, function: &str, rest: &[String]) -> Result<i32, Failure> {
    if crate::activation::lookup_gated(function).is_some() {
        return super::eval_pair::evaluate(
            function,
            rest,
            super::eval_pair::Options {
                format: args.format.as_deref(),
                input_format: args.input_format.as_deref(),
                output_format: args.output_format.as_deref(),
                role: args.role.as_deref(),
                derivative: args.derivative,
                json: args.json,
                function_args: &args.function_args,
            },
        );
    }
    let derivative = super::unary_derivative(function, args.role.as_deref(), args.derivative)?;
    let [x] = rest else {
        return Err(Failure::bad_input(
            "eval takes one input X (usage: ulpgauge eval --function FUNC --format FMT X)",
        ));
    };
    if args.input_format.is_none() && args.output_format.is_none() {
        let quantized = super::quant::eval(
            args.format.as_deref(),
            &args.quant,
            function,
            x,
            args.derivative,
            args.json,
            &args.function_args,
        )?;
        if let Some(code) = quantized {
            return Ok(code);
        }
    } else if args.quant.input_scale.is_some() || args.quant.output_scale.is_some() {
        return Err(Failure::bad_input(
            "--input-scale and --output-scale apply to --format i8 and u8 only",
        ));
    }
    let (input_name, output_name) = format_pair(
        args.format.as_deref(),
        args.input_format.as_deref(),
        args.output_format.as_deref(),
    )?;
    let target = resolve_mixed(
        function,
        &input_name,
        &output_name,
        derivative,
        &args.function_args,
    )?;
    let evaluator = &target.evaluator;
    let format = evaluator.format();
    let in_format = evaluator.input_format();
    let input = parse_input(in_format, x)?;
    let reference = evaluator.reference(input.bits).map_err(|e| Failure {
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
    let kink = (evaluator.role() == Role::Derivative)
        .then(|| {
            let x = in_format.to_f64(input.bits);
            evaluator
                .function()
                .kinks(evaluator.constants())
                .into_iter()
                .find(|k| k.at as f64 == x)
        })
        .flatten();
    let exact = exact_digits(evaluator, in_format, input.bits);
    let params: serde_json::Map<String, serde_json::Value> = evaluator
        .constants()
        .entries()
        .iter()
        .map(|(name, value)| {
            let text = match value {
                crate::reference::Real::Exact(q) => q.to_string(),
                crate::reference::Real::Irrational(name, _) => name.to_string(),
            };
            (name.to_string(), json!(text))
        })
        .collect();
    let role = if derivative { "derivative" } else { "forward" };
    if args.json {
        let kink_json = kink.as_ref().map(|k| {
            json!({"at": k.at, "left": k.left.to_f64(), "right": k.right.to_f64(), "convention": "right"})
        });
        let report = json!({
            "function": evaluator.function().name(),
            "role": role,
            "format": format.name(),
            "input_format": in_format.name(),
            "params": params,
            "param_rounding": args.function_args.param_rounding,
            "input": BitsValue::new(in_format, input.bits),
            "input_rounded_from": input.rounded_from,
            "exact": exact,
            "rounded": BitsValue::new(format, out),
            "neighbours": {
                "below": below.map(|b| BitsValue::new(format, b)),
                "above": above.map(|b| BitsValue::new(format, b)),
            },
            "ulp": ulp,
            "rounding_error_ulp": rounding_error,
            "kink": kink_json,
        });
        sayln!("{}", serde_json::to_string_pretty(&report).expect("json"));
        return Ok(0);
    }
    let show = |bits: u32| format!("{} = {}", hex(format, bits), display_value(format, bits));
    let show_in = |bits: u32| {
        format!(
            "{} = {}",
            hex(in_format, bits),
            display_value(in_format, bits)
        )
    };
    if in_format.name() == format.name() {
        sayln!(
            "{} {} in {}",
            evaluator.function().name(),
            role,
            format.name()
        );
    } else {
        sayln!(
            "{} {} from {} into {}",
            evaluator.function().name(),
            role,
            in_format.name(),
            format.name()
        );
    }
    if !params.is_empty() {
        let list: Vec<_> = params
            .iter()
            .map(|(k, v)| format!("{k}={}", v.as_str().unwrap_or("")))
            .collect();
        sayln!(
            "  constants  {} ({:?})",
            list.join(", "),
            args.function_args.param_rounding
        );
    }
    match &input.rounded_from {
        Some(text) => sayln!(
            "  input      {}  (rounded from {text})",
            show_in(input.bits)
        ),
        None => sayln!("  input      {}", show_in(input.bits)),
    }
    rounded.say(exact.as_deref(), &show);
    if let Some(k) = kink {
        sayln!(
            "  kink       f' jumps at {}: left {}, right {}; eval gives the right-hand value",
            k.at,
            k.left.to_f64(),
            k.right.to_f64()
        );
    }
    Ok(0)
}

#[cfg(test)]
mod tests {
    use super::plain_decimal;

    #[test]
    fn plain_decimals() {
        assert_eq!(plain_decimal("7.25e-1"), "0.725");
        assert_eq!(plain_decimal("-1.5e2"), "-150");
        assert_eq!(plain_decimal("1.25e0"), "1.25");
        assert_eq!(plain_decimal("3.0e-3"), "0.0030");
        assert_eq!(plain_decimal("7.6e-23"), "7.6e-23");
        assert_eq!(plain_decimal("0"), "0");
    }
}

/// A reference rounded into the output format, with what `eval` shows beside it.
#[derive(Clone, Copy)]
pub(super) struct Rounded {
    pub out: u32,
    pub below: Option<u32>,
    pub above: Option<u32>,
    pub ulp: Option<f64>,
    pub rounding_error: Option<f64>,
}

impl Rounded {
    /// The neighbours, the ulp and |RN(y) − y| of a reference (none for NaN or ±∞ outputs).
    pub fn of(format: &dyn Format, reference: &crate::reference::Reference) -> Rounded {
        let out = reference.bits;
        let finite_out = !matches!(format.classify(out), Class::Nan | Class::Infinite);
        Rounded {
            out,
            below: finite_out.then(|| format.next_down(out)),
            above: finite_out.then(|| format.next_up(out)),
            ulp: reference.exact.map(|e| e.ulp(format)),
            rounding_error: reference
                .exact
                .filter(|_| finite_out)
                .map(|e| crate::format::ulp_error(format, out, &e)),
        }
    }

    /// The terminal lines from the exact digits down to |RN(y) − y|.
    pub fn say(&self, exact: Option<&str>, show: &dyn Fn(u32) -> String) {
        if let Some(digits) = exact {
            sayln!("  exact      {digits}");
        }
        sayln!("  rounded    {}", show(self.out));
        if let (Some(b), Some(a)) = (self.below, self.above) {
            sayln!("  neighbours {}  |  {}", show(b), show(a));
        }
        if let Some(u) = self.ulp {
            sayln!("  ulp        {u:e}");
        }
        if let Some(e) = self.rounding_error {
            sayln!("  |RN(y)-y|  {e:.6} ulp");
        }
    }
}
