//! CELU: x for x > 0, α·(e^(x/α) − 1) for x ≤ 0; derivative 1 for x > 0, e^(x/α) for x ≤ 0.
//! α is an exact f64 in [2^−100, 2^100].
//!
//! z = x/α is a DWDivDW2 quotient: z_c = z·(1 + θ), |θ| ≤ OP (see [`super::dd`]).  Then
//! * e^(z_c) = e^z·e^(zθ): relative error ≤ 1.01·|z|·OP on top of [`exp`]'s own bound
//!   (|z| < 4096 past the tail);
//! * e^(z_c) − 1 for z < 0: the relative sensitivity of expm1 at z is |z|·e^z/|e^z − 1| =
//!   |z|/(e^|z| − 1) ≤ 1, so ≤ 1.01·OP on top of [`expm1`]'s bound.
//!
//! [`widen`] adds these.  For z ≤ −1 the forward value is −α + α·e^z, an asymptote plus a
//! positive delta; for −1 < z < 0 it is α·expm1(z); the derivative is 1 + expm1(z) near 0 and
//! e^z below.
//!
//! [`exp`]: super::exp::exp

use super::common::{beside, decay, near_constant, near_side, widen, TAIL, TWO_M55};
use super::dd::{Dd, OP};
use super::decide::{engine_beside, engine_tiny, Outcome};
use super::exp::expm1;
use crate::activation::Role;
use crate::format::Layout;

/// α when the fast path covers it: [2^−100, 2^100] keeps z = x/α and its double-word low part
/// normal for every binary32 x (|z| ≥ 2^−249).
pub fn parameter(alpha: f64) -> Option<f64> {
    let range = 7.888609052210118e-31..=1.2676506002282294e30; // 2^-100 ..= 2^100
    range.contains(&alpha).then_some(alpha)
}

/// CELU or CELU′ where a closed form decides it (x < 0, z = x/α > −TAIL as computed: z.hi =
/// RN(z) up to 2^−100 relative, so z.hi > c ⇒ z > c·(1 + 2^−52) and z.hi < c ⇒ z < c·(1 −
/// 2^−52) for c < 0; logarithms from mpmath, 50 digits; e = ilogb of the base).
///
/// Forward, z.hi > −2^−55 (so |z| < 2^−54): y − x = α(e^z − 1 − z) ∈ (0, αz²/2) for z < 0,
/// αz²/2 = |x|·|z|/2 < 2^(e+1)·2^−55 = 2^(e−54): just above x.
/// Forward, z.hi < −38.3 (so z < −38.2): y = −α + αe^z, 0 < αe^z < 2^(e+1)·e^(−38.2) =
/// 2^(e+1−55.11) < 2^(e−54): just above −α.
/// Derivative, z.hi > −2^−55: y = e^z ∈ (1 + z, 1), 1 − y < |z| < 2^−54: just below 1.
/// Derivative, z.hi < −745.3 (so z < −745.2): 0 < y < e^(−745.2) = 2^(−1075.09): the engine's +0.
#[inline(always)]
fn closed(format: Layout, x: f64, alpha: f64, z: f64, role: Role) -> Option<Outcome> {
    match role {
        Role::Forward if z > -TWO_M55 => Some(near_side(x, true)),
        Role::Forward if z < -38.3 => Some(near_constant(-alpha, true)),
        Role::Derivative if z > -TWO_M55 => Some(near_constant(1.0, false)),
        Role::Derivative if z < -745.3 => Some(Outcome::Fixed(engine_tiny(format, false))),
        _ => None,
    }
}

/// celu(x) or celu′(x).
#[inline(always)]
pub fn celu(format: Layout, x: f64, alpha: f64, role: Role) -> Outcome {
    if x > 0.0 {
        return match role {
            Role::Forward => Outcome::Exact(x),
            Role::Derivative => Outcome::Exact(1.0),
        };
    }
    // The engine's tail, x/α ≤ −2^12, compared exactly (4096·α is exact).
    if x <= -TAIL * alpha {
        return match role {
            Role::Forward => {
                engine_beside(format, -alpha, true).map_or(Outcome::Decline, Outcome::Fixed)
            }
            Role::Derivative => Outcome::Fixed(engine_tiny(format, false)),
        };
    }
    let z = Dd::new(x).div(Dd::new(alpha));
    if let Some(o) = closed(format, x, alpha, z.hi, role) {
        return o;
    }
    if z.hi > -1.0 {
        let em = widen(expm1(z), 1.01 * OP);
        return match role {
            Role::Forward => Outcome::Value(em.mul_f(alpha), 0),
            Role::Derivative => Outcome::Near(1.0, em),
        };
    }
    let t = decay(z.neg());
    let input = 1.01 * z.hi.abs() * OP;
    match role {
        Role::Forward => match t.plain {
            Some(tp) => Outcome::Near(-alpha, widen(tp, input).mul_f(alpha)),
            None => Outcome::Near(-alpha, beside(alpha, true)),
        },
        Role::Derivative => Outcome::Value(widen(t.m, input), t.k),
    }
}
