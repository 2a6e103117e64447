//! Heaviside step: 1 for x ≥ 0 (so step(−0) = 1), 0 for x < 0.

use super::common::{self, one};
use super::{Activation, Constants, Ctx, Facts, Limit, Role, Value};
use rug::{Float, Rational};

/// The unit step.
pub struct Step;

impl Activation for Step {
    fn name(&self) -> &'static str {
        "step"
    }
    fn definition(&self) -> &'static str {
        "1 if x >= 0 (including -0), 0 if x < 0"
    }
    fn derivative_definition(&self) -> &'static str {
        "0 for x != 0; at 0 both one-sided limits of f' are 0 (the jump itself has no finite derivative)"
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: true,
            bounded_above: true,
            keeps_negative_zero: false,
            continuous: false,
        }
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Finite(one()),
            _ => Limit::Zero { negative: false },
        }
    }
    fn eval(&self, x: &Float, role: Role, _ctx: &Ctx) -> Value {
        let _ = common::TAIL_LOG2;
        match role {
            Role::Forward if x.is_zero() || *x > 0 => Value::Exact(one()),
            _ => Value::Exact(Rational::new()),
        }
    }
    fn eval_rational(&self, x: &Rational, role: Role, _ctx: &Ctx) -> Option<Rational> {
        Some(match role {
            Role::Forward if *x >= 0 => one(),
            _ => Rational::new(),
        })
    }
}
