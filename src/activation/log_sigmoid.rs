//! Log-sigmoid: ln σ(x) = −softplus(−x).

use super::common::{self, below, one, tiny};
use super::{Activation, Constants, Ctx, Facts, Limit, Role, Value};
use rug::Float;

/// log σ(x).
pub struct LogSigmoid;

impl Activation for LogSigmoid {
    fn name(&self) -> &'static str {
        "log-sigmoid"
    }
    fn definition(&self) -> &'static str {
        "ln(sigmoid(x)) = min(x, 0) - log1p(exp(-|x|))"
    }
    fn derivative_definition(&self) -> &'static str {
        "sigmoid(-x) = 1 - sigmoid(x)"
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: false,
            bounded_above: true,
            keeps_negative_zero: false,
            continuous: true,
        }
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Zero { negative: true },
            (Role::Forward, false) => Limit::Infinite { negative: true },
            (Role::Derivative, true) => Limit::Zero { negative: false },
            (Role::Derivative, false) => Limit::Finite(one()),
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        let prec = ctx.prec;
        let tail = common::in_tail(x);
        let minus_x = Float::with_val(x.prec(), -x);
        match role {
            Role::Forward if tail => {
                if *x > 0 {
                    tiny(true)
                } else {
                    below(&common::rational(x))
                }
            }
            Role::Forward => Value::Enclosed(common::softplus_point(&minus_x, prec).neg()),
            Role::Derivative if tail => {
                if *x > 0 {
                    tiny(false)
                } else {
                    below(&one())
                }
            }
            Role::Derivative => common::sigmoid_value(&minus_x, prec),
        }
    }
}
