//! GELU, the exact (erf) form: x·Φ(x) with Φ the standard normal distribution function.

use super::common::{self, above, below, one, tiny};
use super::{Activation, Constants, Ctx, Facts, Limit, Role, Value};
use crate::reference::Ival;
use rug::Float;

/// GELU (erf form).
pub struct Gelu;

/// erfc(s·x/√2)/2 for a point x and a sign s: Φ(x) with s = −1, Q(x) = 1 − Φ(x) with s = +1.
fn half_erfc(x: &Float, negate: bool, prec: u32) -> Ival {
    let xi = if negate {
        common::point(x).neg()
    } else {
        common::point(x)
    };
    let sqrt2 = Ival::int(2).sqrt(prec);
    xi.div(&sqrt2, prec).erfc(prec).scale2(-1)
}

/// x·φ(x) = x·e^(−x²/2)/√(2π), for a point x.
fn x_density(x: &Float, prec: u32) -> Ival {
    let xi = common::point(x);
    let sqrt_2pi = Ival::pi(prec).scale2(1).sqrt(prec);
    let density = xi
        .square(prec)
        .scale2(-1)
        .neg()
        .exp(prec)
        .div(&sqrt_2pi, prec);
    density.mul(&xi, prec)
}

impl Activation for Gelu {
    fn name(&self) -> &'static str {
        "gelu"
    }
    fn definition(&self) -> &'static str {
        "x*Phi(x) = (x/2)*erfc(-x/sqrt(2))"
    }
    fn derivative_definition(&self) -> &'static str {
        "Phi(x) + x*phi(x), phi(x) = exp(-x^2/2)/sqrt(2*pi)"
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
            // |x| ≥ 2^12: Q(|x|) and φ(x) are below e^(−2^23), so x·Φ(x) = x − x·Q(x) sits just
            // below x (x > 0) or is a tiny negative (x < 0); Φ + xφ = 1 + xφ − Q > 1 for x > 0
            // (Mills: Q(x) < φ(x)/x) and ≈ −|x|φ(x) < 0 for x < 0.
            return match (role, *x > 0) {
                (Role::Forward, true) => below(&common::rational(x)),
                (Role::Derivative, true) => above(&one()),
                (_, false) => tiny(true),
            };
        }
        let xi = common::point(x);
        if *x >= 1 {
            // x·Φ(x) = x − x·Q(x) and Φ + xφ = 1 + (xφ − Q), with Q(x) = erfc(x/√2)/2
            // computed directly (no cancellation).
            let q = half_erfc(x, false, prec);
            return match role {
                Role::Forward => common::near(common::rational(x), q.mul(&xi, prec).neg()),
                Role::Derivative => common::near(one(), x_density(x, prec).sub(&q, prec)),
            };
        }
        let cdf = half_erfc(x, true, prec);
        match role {
            Role::Forward => Value::Enclosed(cdf.mul(&xi, prec)),
            Role::Derivative => Value::Enclosed(cdf.add(&x_density(x, prec), prec)),
        }
    }
}
