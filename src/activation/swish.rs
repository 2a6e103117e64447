//! Swish: x·σ(beta·x); `silu` is swish with beta fixed at 1.

use super::common::{self, above, below, one, tiny};
use super::{Activation, Constants, Ctx, Domain, Facts, Limit, ParamSpec, Role, Value};
use crate::reference::Ival;
use rug::{Float, Rational};

/// Swish, or SiLU when `fixed_beta` (beta = 1, no parameter).
pub struct Swish {
    /// SiLU: beta is 1 and not a parameter.
    pub fixed_beta: bool,
}

const PARAMS: [ParamSpec; 1] = [ParamSpec {
    name: "beta",
    default: "1",
    domain: Domain::Positive,
    doc: "slope inside the sigmoid",
}];

impl Activation for Swish {
    fn name(&self) -> &'static str {
        if self.fixed_beta {
            "silu"
        } else {
            "swish"
        }
    }
    fn definition(&self) -> &'static str {
        if self.fixed_beta {
            "x*sigmoid(x) (swish with beta = 1)"
        } else {
            "x*sigmoid(beta*x)"
        }
    }
    fn derivative_definition(&self) -> &'static str {
        "sigmoid(z)*(1 + z*sigmoid(-z)) with z = beta*x"
    }
    fn params(&self) -> &'static [ParamSpec] {
        if self.fixed_beta {
            &[]
        } else {
            &PARAMS
        }
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
        let q = common::rational(x);
        let z = if self.fixed_beta {
            q.clone()
        } else {
            Rational::from(&q * ctx.exact("beta"))
        };
        // Tail: |z| ≥ 2^12 so σ(−|z|) < 2^−5900, times |x| ≤ 2^128: below 2^−5700.
        if z.clone().abs() >= (1i64 << common::TAIL_LOG2) {
            let positive = z.cmp0().is_gt();
            return match (role, positive) {
                (Role::Forward, true) => below(&q),
                (Role::Forward, false) => tiny(true),
                // σ(z)(1 + zσ(−z)) = 1 + (z − 1)e^−z + O(z e^−2z) > 1.
                (Role::Derivative, true) => above(&one()),
                // ≈ (1 + z)e^z < 0.
                (Role::Derivative, false) => tiny(true),
            };
        }
        let zi = Ival::rational(&z, prec.max(64));
        let s = common::sigmoid(&zi, prec);
        if z >= 1 {
            // x·σ(z) = x − x·σ(−z); f′ = 1 + σ(−z)·(z·σ(z) − 1).
            let s_neg = common::sigmoid(&zi.neg(), prec);
            return match role {
                Role::Forward => common::near(q, s_neg.mul(&common::point(x), prec).neg()),
                Role::Derivative => {
                    let inner = zi.mul(&s, prec).sub(&Ival::int(1), prec);
                    common::near(one(), s_neg.mul(&inner, prec))
                }
            };
        }
        match role {
            Role::Forward => Value::Enclosed(s.mul(&common::point(x), prec)),
            Role::Derivative => {
                let s_neg = common::sigmoid(&zi.neg(), prec);
                let inner = Ival::int(1).add(&zi.mul(&s_neg, prec), prec);
                Value::Enclosed(s.mul(&inner, prec))
            }
        }
    }
}
