//! Softplus: ln(1 + e^x).

use super::common::{self, above, below, one, tiny};
use super::{Activation, Constants, Ctx, Facts, Limit, Role, Value};
use rug::Float;

/// Softplus.
pub struct Softplus;

impl Activation for Softplus {
    fn name(&self) -> &'static str {
        "softplus"
    }
    fn definition(&self) -> &'static str {
        "ln(1 + exp(x)) = max(x, 0) + log1p(exp(-|x|))"
    }
    fn derivative_definition(&self) -> &'static str {
        "sigmoid(x)"
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
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Infinite { negative: false },
            (Role::Derivative, true) => Limit::Finite(one()),
            _ => Limit::Zero { negative: false },
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        let prec = ctx.prec;
        let tail = common::in_tail(x);
        match role {
            Role::Forward if tail => {
                if *x > 0 {
                    above(&common::rational(x))
                } else {
                    tiny(false)
                }
            }
            Role::Forward => Value::Enclosed(common::softplus_point(x, prec)),
            Role::Derivative if tail => {
                if *x > 0 {
                    below(&one())
                } else {
                    tiny(false)
                }
            }
            Role::Derivative => common::sigmoid_value(x, prec),
        }
    }
}
