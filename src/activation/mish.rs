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
        let xi = common::point(x);
        if *x >= 1 {
            // 1 − tanh(sp) = 2σ(−2sp) and sech²(sp) = 4σ(2sp)σ(−2sp), so
            // f = x − 2x·σ(−2sp) and f′ = 1 + σ(−2sp)·(4x·σ(2sp)·σ(x) − 2).
            let two_sp = sp.scale2(1);
            let s_neg = common::sigmoid(&two_sp.neg(), prec);
            return match role {
                Role::Forward => {
                    common::near(common::rational(x), s_neg.mul(&xi, prec).scale2(1).neg())
                }
                Role::Derivative => {
                    let s_pos = common::sigmoid(&two_sp, prec);
                    let sx = common::sigmoid(&xi, prec);
                    let inner = xi
                        .mul(&s_pos, prec)
                        .mul(&sx, prec)
                        .scale2(2)
                        .sub(&Ival::int(2), prec);
                    common::near(one(), s_neg.mul(&inner, prec))
                }
            };
        }
        let t = sp.tanh(prec);
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
