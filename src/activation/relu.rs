//! Rectified linear unit: max(x, 0).

use super::common::{self, one};
use super::{Activation, Constants, Ctx, Facts, Kink, Limit, Role, Value};
use rug::{Float, Rational};

/// ReLU.
pub struct Relu;

impl Activation for Relu {
    fn name(&self) -> &'static str {
        "relu"
    }
    fn definition(&self) -> &'static str {
        "max(x, 0); relu(-0) = +0"
    }
    fn derivative_definition(&self) -> &'static str {
        "0 for x < 0, 1 for x > 0; at 0: left 0, right 1 (eval gives the right value, 1)"
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: true,
            bounded_above: false,
            keeps_negative_zero: false,
            continuous: true,
        }
    }
    fn kinks(&self, _c: &Constants) -> Vec<Kink> {
        vec![Kink {
            at: 0,
            left: Rational::new(),
            right: one(),
        }]
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Infinite { negative: false },
            (Role::Derivative, true) => Limit::Finite(one()),
            _ => Limit::Zero { negative: false },
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        common::exact_from_rational(self, x, role, ctx)
    }
    fn eval_rational(&self, x: &Rational, role: Role, _ctx: &Ctx) -> Option<Rational> {
        Some(match role {
            Role::Forward if *x > 0 => x.clone(),
            Role::Forward => Rational::new(),
            Role::Derivative if *x >= 0 => one(),
            Role::Derivative => Rational::new(),
        })
    }
}
