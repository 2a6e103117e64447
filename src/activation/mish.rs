//! Mish: x·tanh(softplus(x)).

use super::common::{self, above, below, one, tiny};
use super::{Activation, Constants, Ctx, Facts, Limit, Role, Value};
use crate::reference::Ival;
use rug::Float;

/// Mish.
pub struct Mish;

impl Activation for Mish {
    fn name(&self) -> &'static str {
        "mish"
    }
    fn definition(&self) -> &'static str {
        "x*tanh(ln(1 + exp(x)))"
    }
    fn derivative_definition(&self) -> &'static str {
        "tanh(sp) + x*sech(sp)^2*sigmoid(x), sp = softplus(x)"
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: false,
            bounded_below: true,
            bounded_above: false,
            keeps_negative_zero: true,
            continuous: true,
        }
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Infinite { negative: false },
            (Role::Derivative, true) => Limit::Finite(one()),
            (_, false) => Limit::Zero { negative: true },
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        let prec = ctx.prec;
        if common::in_tail(x) {
            // x ≥ 2^12: tanh(sp) = 1 − O(e^−2x), and f′ = 1 + (4x − 2)e^−2x + … > 1.
            // x ≤ −2^12: sp ≈ e^x, f ≈ x·e^x and f′ ≈ (1 + x)e^x, tiny negatives.
            return match (role, *x > 0) {
                (Role::Forward, true) => below(&common::rational(x)),
                (Role::Derivative, true) => above(&one()),
                (_, false) => tiny(true),
            };
        }
        let sp = common::softplus_point(x, prec);
        let t = sp.tanh(prec);
        let xi = common::point(x);
        match role {
            Role::Forward => Value::Enclosed(t.mul(&xi, prec)),
            Role::Derivative => {
                let sech2 = sp.sech_nonneg(prec).square(prec);
                let s = common::sigmoid(&xi, prec);
                Value::Enclosed(t.add(&xi.mul(&sech2, prec).mul(&s, prec), prec))
            }
        }
    }
}
