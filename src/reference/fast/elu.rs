//! ELU: x for x > 0, α·(e^x − 1) for x ≤ 0; derivative 1 for x ≥ 0 (the engine's right-hand
//! value at 0), α·e^x for x < 0.  α is an exact f64.
//!
//! For x ≤ −1 the forward value is −α + α·e^x, an asymptote plus a positive delta computed
//! without cancellation; for −1 < x < 0 it is α·expm1(x); the derivative for −1 < x < 0 is
//! α + α·expm1(x) (near α for tiny x) and α·e^x below.  Bounds compose through [`Ev`].

use super::common::{beside, decay, near_constant, TAIL, TWO_M55};
use super::dd::{ilogb, Dd};
use super::decide::{engine_beside, engine_tiny, Outcome};
use super::exp::expm1;
use crate::activation::Role;
use crate::format::Layout;

/// ELU or ELU′ where a closed form decides it (x < 0 finite, x > −TAIL); e = ilogb(α), so
/// α < 2^(e+1).  Logarithms computed with mpmath (50 digits).
///
/// Forward, x < −38.2: y = −α + αe^x, 0 < αe^x < 2^(e+1)·e^(−38.2) = 2^(e+1−55.11) < 2^(e−54):
/// just above −α.
/// Derivative, x > −2^−55: y = α + α(e^x − 1), x < e^x − 1 < 0, so 0 < α − y < α|x| <
/// 2^(e+1−55) = 2^(e−54): just below α.
/// Derivative, x < c = −(1076 + e)·0.6932 (f64 arithmetic; 0.6932 exceeds ln 2 by a relative
/// 5·10^−5, far above the 2^−52 of the two roundings, so x < −(1076 + e)·ln 2): 0 < y = αe^x <
/// 2^(e+1)·2^(−1076−e) = 2^−1075: the engine's +0.
#[inline(always)]
fn elu_closed(format: Layout, x: f64, alpha: f64, role: Role) -> Option<Outcome> {
    match role {
        Role::Forward if x < -38.2 => Some(near_constant(-alpha, true)),
        Role::Derivative if x > -TWO_M55 => Some(near_constant(alpha, false)),
        Role::Derivative if x < -((1076 + ilogb(alpha)) as f64) * 0.6932 => {
            Some(Outcome::Fixed(engine_tiny(format, false)))
        }
        _ => None,
    }
}

/// ELU or its derivative at x.
#[inline(always)]
pub fn elu(format: Layout, x: f64, alpha: f64, role: Role) -> Outcome {
    match role {
        Role::Forward if x > 0.0 => return Outcome::Exact(x),
        Role::Forward if x == 0.0 => return Outcome::Decline,
        Role::Derivative if x >= 0.0 => return Outcome::Exact(1.0),
        _ => {}
    }
    if x <= -TAIL {
        return match role {
            Role::Forward => {
                engine_beside(format, -alpha, true).map_or(Outcome::Decline, Outcome::Fixed)
            }
            Role::Derivative => Outcome::Fixed(engine_tiny(format, false)),
        };
    }
    if let Some(o) = elu_closed(format, x, alpha, role) {
        return o;
    }
    if x > -1.0 {
        let em = expm1(Dd::new(x)).mul_f(alpha);
        return match role {
            Role::Forward => Outcome::Value(em, 0),
            Role::Derivative => Outcome::Near(alpha, em),
        };
    }
    let t = decay(Dd::new(-x));
    match role {
        Role::Forward => match t.plain {
            Some(tp) => Outcome::Near(-alpha, tp.mul_f(alpha)),
            None => Outcome::Near(-alpha, beside(alpha, true)),
        },
        Role::Derivative => Outcome::Value(t.m.mul_f(alpha), t.k),
    }
}
