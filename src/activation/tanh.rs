//! Hyperbolic tangent.

use super::common::{self, above, below, one, tiny};
use super::{Activation, Constants, Ctx, Facts, Limit, Role, Value};
use crate::reference::Ival;
use rug::Float;

/// tanh.
pub struct Tanh;

impl Activation for Tanh {
    fn name(&self) -> &'static str {
        "tanh"
    }
    fn definition(&self) -> &'static str {
        "(exp(x) - exp(-x))/(exp(x) + exp(-x))"
    }
    fn derivative_definition(&self) -> &'static str {
        "1 - tanh(x)^2 = sech(x)^2; peaks at 1 at x = 0"
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: true,
            bounded_above: true,
            keeps_negative_zero: true,
            continuous: true,
        }
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Finite(one()),
            (Role::Forward, false) => Limit::Finite(-one()),
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
                    above(&-one())
                }
            }
            // 1 − tanh|x| = 2σ(−2|x|), kept apart from 1 for |x| ≥ 1.
            Role::Forward if x.clone().abs() >= 1 => {
                let twice_abs = Ival::point(&Float::with_val(x.prec(), x.abs_ref())).scale2(1);
                let gap = common::sigmoid(&twice_abs.neg(), prec).scale2(1);
                if *x > 0 {
                    common::near(one(), gap.neg())
                } else {
                    common::near(-one(), gap)
                }
            }
            Role::Forward => Value::Enclosed(common::point(x).tanh(prec)),
            Role::Derivative if common::in_tail(x) => tiny(false),
            Role::Derivative => {
                let magnitude = Ival::point(&Float::with_val(x.prec(), x.abs_ref()));
                Value::Enclosed(magnitude.sech_nonneg(prec).square(prec))
            }
        }
    }
}
