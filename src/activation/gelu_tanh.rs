//! GELU, tanh approximation: 0.5·x·(1 + tanh(√(2/π)·(x + 0.044715·x³))), evaluated as
//! x·σ(2u) with u = √(2/π)·(x + 0.044715·x³) to avoid the cancellation in 1 + tanh(u).

use super::common::{self, above, below, one, tiny};
use super::{Activation, Constants, Ctx, Facts, Limit, Role, Value};
use crate::reference::{parse_decimal, Ival, Real};
use rug::{Float, Rational};

/// GELU (tanh form).
pub struct GeluTanh;

fn sqrt_two_over_pi(prec: u32) -> Ival {
    Ival::int(2).div(&Ival::pi(prec + 8), prec + 8).sqrt(prec)
}

impl Activation for GeluTanh {
    fn name(&self) -> &'static str {
        "gelu-tanh"
    }
    fn definition(&self) -> &'static str {
        "0.5*x*(1 + tanh(c*(x + k*x^3))), c = sqrt(2/pi), k = 0.044715"
    }
    fn derivative_definition(&self) -> &'static str {
        "s + 2*x*u'*s*(1 - s) with s = sigmoid(2u), u = c*(x + k*x^3), u' = c*(1 + 3k*x^2)"
    }
    fn constants(&self) -> Vec<(&'static str, Real)> {
        vec![
            ("c", Real::Irrational("sqrt(2/pi)", sqrt_two_over_pi)),
            (
                "k",
                Real::Exact(parse_decimal("0.044715").expect("constant")),
            ),
        ]
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
            // |x| ≥ 2^12 makes |2u| > 2^32, so σ(−|2u|) < e^(−2^32): the same shape as GELU's
            // tails (the derivative's correction (2xu' − 1)e^(−2u) is positive for x > 0).
            return match (role, *x > 0) {
                (Role::Forward, true) => below(&common::rational(x)),
                (Role::Derivative, true) => above(&one()),
                (_, false) => tiny(true),
            };
        }
        let q = common::rational(x);
        let k = ctx.exact("k");
        let c = ctx.ival("c");
        let cube = Rational::from(q.square_ref()) * &q;
        let inner = Rational::from(&q + &(cube * k));
        let two_u = Ival::rational(&inner, prec + 8).mul(&c, prec).scale2(1);
        let s = common::sigmoid(&two_u, prec);
        let xi = common::point(x);
        if *x >= 1 {
            // x·σ(2u) = x − x·σ(−2u); f′ = 1 + σ(−2u)·(2x·u′·σ(2u) − 1).
            let s_neg = common::sigmoid(&two_u.neg(), prec);
            return match role {
                Role::Forward => common::near(q, s_neg.mul(&xi, prec).neg()),
                Role::Derivative => {
                    let slope_poly =
                        Rational::from(q.square_ref()) * Rational::from(k * 3u32) + 1u32;
                    let two_u_prime = Ival::rational(&slope_poly, prec + 8)
                        .mul(&c, prec)
                        .scale2(1);
                    let inner = xi
                        .mul(&two_u_prime, prec)
                        .mul(&s, prec)
                        .sub(&Ival::int(1), prec);
                    common::near(one(), s_neg.mul(&inner, prec))
                }
            };
        }
        match role {
            Role::Forward => Value::Enclosed(s.mul(&xi, prec)),
            Role::Derivative => {
                let slope_poly = Rational::from(q.square_ref()) * Rational::from(k * 3u32) + 1u32;
                let two_u_prime = Ival::rational(&slope_poly, prec + 8)
                    .mul(&c, prec)
                    .scale2(1);
                let s_neg = common::sigmoid(&two_u.neg(), prec);
                let correction = xi.mul(&two_u_prime, prec).mul(&s_neg, prec);
                Value::Enclosed(s.mul(&Ival::int(1).add(&correction, prec), prec))
            }
        }
    }
}
