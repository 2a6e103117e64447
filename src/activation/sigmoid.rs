//! Logistic sigmoid: 1/(1 + e^−x).

use super::common::{self, below, one, tiny};
use super::{Activation, Constants, Ctx, Facts, Limit, Role, Value};
use crate::reference::Ival;
use rug::Float;

/// The logistic function.
pub struct Sigmoid;

impl Activation for Sigmoid {
    fn name(&self) -> &'static str {
        "sigmoid"
    }
    fn definition(&self) -> &'static str {
        "1/(1 + exp(-x))"
    }
    fn derivative_definition(&self) -> &'static str {
        "sigmoid(x)*(1 - sigmoid(x)) = exp(-|x|)/(1 + exp(-|x|))^2; peaks at 1/4 at x = 0"
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: true,
            bounded_above: true,
            keeps_negative_zero: false,
            continuous: true,
        }
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Finite(one()),
            _ => Limit::Zero { negative: false },
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        let prec = ctx.prec;
        match role {
            Role::Forward if common::in_tail(x) => {
                if *x > 0 {
                    below(&one())
                } else {
                    tiny(false)
                }
            }
            Role::Forward => common::sigmoid_value(x, prec),
            Role::Derivative if common::in_tail(x) => tiny(false),
            Role::Derivative => Value::Enclosed(logistic_density(x, prec)),
        }
    }
}

/// σ′(x) = t/(1 + t)² with t = e^−|x| (no cancellation).
pub fn logistic_density(x: &Float, prec: u32) -> Ival {
    let t = Ival::point(&Float::with_val(
        x.prec(),
        -Float::with_val(x.prec(), x.abs_ref()),
    ))
    .exp(prec);
    let denominator = Ival::int(1).add(&t, prec).square(prec);
    t.div(&denominator, prec)
}
