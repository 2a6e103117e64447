//! Scaled ELU: λ·x for x > 0, λ·α·(e^x − 1) for x ≤ 0, with the self-normalising constants.

use super::elu::exponential_linear;
use super::{Activation, Constants, Ctx, Facts, Kink, Limit, Role, Value};
use crate::reference::{parse_decimal, Real};
use rug::{Float, Rational};

/// SELU.
pub struct Selu;

/// λ as published by Klambauer et al., "Self-Normalizing Neural Networks" (2017), taken as the
/// exact decimal.
const LAMBDA: &str = "1.0507009873554804934193349852946";
/// α from the same paper.
const ALPHA: &str = "1.6732632423543772848170429916717";

impl Activation for Selu {
    fn name(&self) -> &'static str {
        "selu"
    }
    fn definition(&self) -> &'static str {
        "lambda*x if x > 0, lambda*alpha*expm1(x) if x <= 0 (lambda = 1.0507009873554804934193349852946, alpha = 1.6732632423543772848170429916717)"
    }
    fn derivative_definition(&self) -> &'static str {
        "lambda for x > 0, lambda*alpha*exp(x) for x < 0; at 0: left lambda*alpha, right lambda (eval gives lambda)"
    }
    fn constants(&self) -> Vec<(&'static str, Real)> {
        vec![
            (
                "lambda",
                Real::Exact(parse_decimal(LAMBDA).expect("constant")),
            ),
            (
                "alpha",
                Real::Exact(parse_decimal(ALPHA).expect("constant")),
            ),
        ]
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: true,
            bounded_above: false,
            keeps_negative_zero: true,
            continuous: true,
        }
    }
    fn kinks(&self, c: &Constants) -> Vec<Kink> {
        let lambda = c.rational("lambda");
        vec![Kink {
            at: 0,
            left: Rational::from(&lambda * &c.rational("alpha")),
            right: lambda,
        }]
    }
    fn limit(&self, role: Role, positive: bool, c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Infinite { negative: false },
            (Role::Forward, false) => Limit::Finite(-(c.rational("lambda") * c.rational("alpha"))),
            (Role::Derivative, true) => Limit::Finite(c.rational("lambda")),
            (Role::Derivative, false) => Limit::Zero { negative: false },
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        exponential_linear(x, role, ctx, ctx.exact("lambda"), ctx.exact("alpha"))
    }
    fn eval_rational(&self, x: &Rational, role: Role, ctx: &Ctx) -> Option<Rational> {
        super::elu::linear_piece(x, role, ctx.exact("lambda"))
    }
}
