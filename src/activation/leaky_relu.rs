//! Leaky ReLU: x for x ≥ 0, alpha·x for x < 0.

use super::common::{self, one};
use super::{Activation, Constants, Ctx, Facts, Kink, Limit, Role, Value};
use super::{Domain, ParamSpec};
use rug::{Float, Rational};

/// Leaky ReLU with slope alpha on the left.
pub struct LeakyRelu;

const PARAMS: [ParamSpec; 1] = [ParamSpec {
    name: "alpha",
    default: "0.01",
    domain: Domain::Any,
    doc: "slope for x < 0",
}];

impl Activation for LeakyRelu {
    fn name(&self) -> &'static str {
        "leaky-relu"
    }
    fn definition(&self) -> &'static str {
        "x if x >= 0, alpha*x if x < 0"
    }
    fn derivative_definition(&self) -> &'static str {
        "alpha for x < 0, 1 for x > 0; at 0: left alpha, right 1 (eval gives 1)"
    }
    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: false,
            bounded_above: false,
            keeps_negative_zero: true,
            continuous: true,
        }
    }
    fn kinks(&self, c: &Constants) -> Vec<Kink> {
        let alpha = c.rational("alpha");
        if alpha == 1 {
            return Vec::new();
        }
        vec![Kink {
            at: 0,
            left: alpha,
            right: one(),
        }]
    }
    fn limit(&self, role: Role, positive: bool, c: &Constants) -> Limit {
        let alpha = c.rational("alpha");
        match (role, positive) {
            (Role::Forward, true) => Limit::Infinite { negative: false },
            (Role::Forward, false) if alpha.is_zero() => Limit::Zero { negative: false },
            (Role::Forward, false) => Limit::Infinite {
                negative: alpha.cmp0().is_gt(),
            },
            (Role::Derivative, true) => Limit::Finite(one()),
            (Role::Derivative, false) => common::limit_of(alpha),
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        common::exact_from_rational(self, x, role, ctx)
    }
    fn eval_rational(&self, x: &Rational, role: Role, ctx: &Ctx) -> Option<Rational> {
        let left = *x < 0;
        let alpha = ctx.exact("alpha");
        Some(match (role, left) {
            (Role::Forward, false) => x.clone(),
            (Role::Forward, true) => Rational::from(x * alpha),
            (Role::Derivative, false) => one(),
            (Role::Derivative, true) => alpha.clone(),
        })
    }
}
