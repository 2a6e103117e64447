//! Special-value rules: NaN in → NaN out, limits at ±∞, signed zero, subnormal inputs and
//! outputs (flush-to-zero named as such).

use super::{is_finite, Point};
use crate::format::{step_distance, ulp_error, Class, Format};
use crate::report::BitsValue;
use serde::Serialize;
use std::collections::HashMap;

/// One checked rule at one input.
#[derive(Clone, Debug, Serialize)]
pub struct SpecialRule {
    /// The input.
    pub input: BitsValue,
    /// What the rule expects (RN of the reference; any NaN for NaN rules).
    pub expected: BitsValue,
    /// The kernel's output (`null` if it crashed).
    pub output: Option<BitsValue>,
    /// Whether the rule holds.
    pub passed: bool,
    /// The rule, in words.
    pub rule: String,
    /// What went in, what came out and what the rule expects, in a sentence.
    pub message: String,
}

/// Context of the rules.
pub struct RuleContext {
    /// f(−0) = −0 is required (forward role of a function that keeps the sign of zero).
    pub keeps_negative_zero: bool,
    /// Largest ulp error accepted for a finite expected value (1 = faithful, or --max-ulp).
    pub tolerance: f64,
}

/// Whether `out` matches the reference (or, at a kink, either one-sided reference).
fn close(format: &dyn Format, p: &Point, out: u32, tolerance: f64) -> bool {
    close_to(format, &p.reference, out, tolerance)
        || p.left
            .as_ref()
            .is_some_and(|l| close_to(format, l, out, tolerance))
}

fn close_to(
    format: &dyn Format,
    r: &crate::reference::Reference,
    out: u32,
    tolerance: f64,
) -> bool {
    if !is_finite(format, r.bits) || !is_finite(format, out) {
        return format.classify(out) == format.classify(r.bits)
            && (format.classify(out) == Class::Nan || out == r.bits);
    }
    step_distance(format, out, r.bits) == 0
        || r.exact
            .is_some_and(|e| ulp_error(format, out, &e) <= tolerance)
}

/// Checks the rules at the probes and at the measured points whose reference is subnormal
/// (the first and last such input of each sign). `input`: the inputs' format, `format` the
/// outputs'.
pub fn special_values(
    input: &dyn Format,
    format: &dyn Format,
    probes: &[Point],
    measured: &[Point],
    ctx: &RuleContext,
) -> Vec<SpecialRule> {
    let by_input: HashMap<u32, &Point> = probes
        .iter()
        .chain(measured)
        .map(|p| (p.input, p))
        .collect();
    let sign = input.infinity(true) & !input.infinity(false);
    let mut rules = Vec::new();
    let mut push = |p: &Point, expected: u32, passed: bool, rule: String| {
        // The error against the nearer reference (either side at a kink).
        let ulp = p.output.filter(|&o| is_finite(format, o)).and_then(|o| {
            let error = |r: &crate::reference::Reference| r.exact.map(|e| ulp_error(format, o, &e));
            let right = error(&p.reference);
            let left = p.left.as_ref().and_then(error);
            match (right, left) {
                (Some(r), Some(l)) => Some(r.min(l)),
                (r, l) => r.or(l),
            }
        });
        let message = crate::report::sentence::special(
            input,
            format,
            p.input,
            p.output,
            expected,
            passed,
            &rule,
            ulp,
            ctx.tolerance,
        );
        rules.push(SpecialRule {
            input: BitsValue::new(input, p.input),
            expected: BitsValue::new(format, expected),
            output: p.output.map(|o| BitsValue::new(format, o)),
            passed,
            rule,
            message,
        })
    };
    let mut sorted: Vec<&Point> = probes.iter().collect();
    sorted.sort_by_key(|p| p.input);
    for p in sorted {
        let out = p.output;
        let expected = p.reference.bits;
        match input.classify(p.input) {
            Class::Nan => {
                let passed = out.is_some_and(|o| format.classify(o) == Class::Nan);
                push(p, expected, passed, "NaN in -> NaN out".into());
            }
            Class::Infinite => {
                let passed = out.is_some_and(|o| close(format, p, o, ctx.tolerance));
                let side = if input.is_sign_negative(p.input) {
                    "-inf"
                } else {
                    "+inf"
                };
                push(p, expected, passed, format!("limit at {side}"));
            }
            Class::Zero => {
                let negative_in = input.is_sign_negative(p.input);
                let zero_expected = format.classify(expected) == Class::Zero;
                let sign_matters = zero_expected && negative_in && ctx.keeps_negative_zero;
                let passed = out.is_some_and(|o| {
                    close(format, p, o, ctx.tolerance) && (!sign_matters || o == expected)
                });
                let rule = match (negative_in, sign_matters, zero_expected) {
                    (true, true, _) => "signed zero: f(-0) = -0",
                    (_, false, true) => "signed zero: f(±0) is a zero (either sign accepted)",
                    (true, _, false) => "signed zero: f(-0) = f(0)",
                    (false, _, _) => "signed zero: f(+0)",
                };
                push(p, expected, passed, rule.into());
            }
            Class::Subnormal => {
                let passed = out.is_some_and(|o| close(format, p, o, ctx.tolerance));
                // The output a kernel that treats x as zero would give.
                let zero = by_input.get(&(p.input & sign)).and_then(|z| z.output);
                let flushed = !passed && out.is_some() && out == zero;
                let rule = if flushed {
                    "subnormal input: flushed to zero (flush-to-zero / denormals-are-zero)"
                } else {
                    "subnormal input"
                };
                push(p, expected, passed, rule.into());
            }
            Class::Normal => {
                let passed = out.is_some_and(|o| close(format, p, o, ctx.tolerance));
                push(p, expected, passed, "special value".into());
            }
        }
    }
    let mut subnormal_outputs: Vec<&Point> = measured
        .iter()
        .filter(|p| {
            is_finite(input, p.input) && format.classify(p.reference.bits) == Class::Subnormal
        })
        .collect();
    subnormal_outputs.sort_by_key(|p| p.input);
    for negative in [false, true] {
        let side: Vec<&&Point> = subnormal_outputs
            .iter()
            .filter(|p| input.is_sign_negative(p.input) == negative)
            .collect();
        let ends = [side.first(), side.last()];
        for (k, p) in ends.into_iter().flatten().enumerate() {
            if k == 1 && side.len() == 1 {
                break;
            }
            let out = p.output;
            let passed = out.is_some_and(|o| close(format, p, o, ctx.tolerance));
            let flushed = out.is_some_and(|o| format.classify(o) == Class::Zero);
            let rule = if flushed {
                "subnormal output: flushed to zero (flush-to-zero)"
            } else {
                "subnormal output"
            };
            push(p, p.reference.bits, passed, rule.into());
        }
    }
    rules
}
