//! ELU: x for x > 0, α·(e^x − 1) for x ≤ 0; derivative 1 for x ≥ 0 (the engine's right-hand
//! value at 0), α·e^x for x < 0.  α is an exact f64.
//!
//! For x ≤ −1 the forward value is −α + α·e^x, an asymptote plus a positive delta computed
//! without cancellation; for −1 < x < 0 it is α·expm1(x); the derivative for −1 < x < 0 is
//! α + α·expm1(x) (near α for tiny x) and α·e^x below.  Bounds compose through [`Ev`].  Near
//! zero the leading-term bands of [`elu_band`] take over.

use super::common::{beside, decay, near_constant, TAIL, TWO_M55};
use super::dd::{ilogb, two_prod, Dd};
use super::decide::{engine_beside, engine_tiny, Outcome};
use super::exp::expm1;
use super::series::{horner, leading, EXPM1_CUBIC};
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
        Role::Derivative if x < derivative_zero_below(alpha) => {
            Some(Outcome::Fixed(engine_tiny(format, false)))
        }
        _ => None,
    }
}

/// Below this x (and above −TAIL) ELU′ is the engine's +0 (see [`elu_closed`]).
#[inline(always)]
pub(super) fn derivative_zero_below(alpha: f64) -> f64 {
    -((1076 + ilogb(alpha)) as f64) * 0.6932
}

/// Forward inputs −2^−8 ≤ x < 0 take [`elu_band`].
const FORWARD_BAND: f64 = -0.00390625;
/// Derivative inputs −2^−20 ≤ x ≤ −2^−55 take [`elu_band`].
const DERIVATIVE_BAND: f64 = -TWO_M20;
/// 2^−20.
const TWO_M20: f64 = 9.5367431640625e-7;

/// ELU or ELU′ near zero ([`super::series`]), x < 0, w = x² exact, αx = p + q and αw = p₂ + q₂
/// exactly (TwoProd):
/// * elu(x) = α·(e^x − 1) = αx + αw/2 + αx³·Σ_(k≥0) x^k/(k + 3)!: the leading part
///   p + p₂/2, the rest q + q₂/2 plus the series kept to 1/10!, below α|x|¹¹/11! <
///   α|x|³·2^−89 after it (for |x| < 2^−20 the leading part p + q, the rest p₂/2 + q₂/2 plus
///   the series);
/// * elu′(x) = α·e^x = α + αx + αw·(1/2 + x/6 + x²/24 + x³/120): the leading part α + p, the
///   rest q plus the series (|x| ≤ 2^−20), below α·x⁶/720 after it.
#[inline(always)]
fn elu_band(x: f64, alpha: f64, role: Role) -> Outcome {
    let w = x * x;
    let (p, q) = two_prod(alpha, x);
    match role {
        Role::Forward => {
            let (p2, q2) = two_prod(alpha, w);
            let series = alpha * (x * w) * horner(&EXPM1_CUBIC, x);
            // α|x|¹¹/11! ≤ α|x|³·2^−64/11! < α|x|³·2^−89 (|x| ≤ 2^−8), without the subnormal
            // powers x¹¹ would take below 2^−93.
            let truncation = alpha * (x * w).abs() * 1.6155871338926322e-27;
            let (half, half_low) = (p2 * 0.5, q2 * 0.5);
            if x > -TWO_M20 {
                // αw/2 is below 2^−21 of αx: the exact αx leads, so that an αx on a binary64
                // midpoint (q = ±ulp(p)/2) is decided by the sign of the rest.
                let magnitude = half.abs() + half_low.abs() + series.abs();
                leading(p, q, half + half_low + series, magnitude, truncation)
            } else {
                let magnitude = q.abs() + half_low.abs() + series.abs();
                leading(p, half, q + half_low + series, magnitude, truncation)
            }
        }
        Role::Derivative => {
            let series = alpha * w * horner(&[0.5, 1.0 / 6.0, 1.0 / 24.0, 1.0 / 120.0], x);
            let truncation = alpha * w * w * w / 720.0;
            leading(alpha, p, q + series, q.abs() + series.abs(), truncation)
        }
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
    let band = match role {
        Role::Forward => FORWARD_BAND,
        Role::Derivative => DERIVATIVE_BAND,
    };
    if x >= band {
        return elu_band(x, alpha, role);
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
