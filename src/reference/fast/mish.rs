//! Mish x·tanh(softplus(x)) and its derivative tanh(sp) + x·sech²(sp)·σ(x), written without
//! any logarithm: with t = e^x, (1 + t)² = e^(2·sp), so tanh(sp) = P/(P + 2), P = t(t + 2), and
//! sech²(sp)·σ(x) = 4t(1 + t)/(P + 2)²·… — in terms of u = e^(−|x|):
//! * x > 0 (t = 1/u, multiply through by u²): n = 1 + 2u, D = 1 + 2u + 2u² (sums of positives),
//!   mish = x·n/D = x − x·2u²/D, mish′ = (n·D + 4x·u²(1 + u))/D² = 1 + 2u²·(2x(1 + u) − D)/D²
//!   (2x(1 + u) − D ≥ 2x − 1 − 2u² > 0.7 for x ≥ 1);
//! * x < 0 (t = u = 2^k·m): mish = x·u(u + 2)/(P + 2), mish′ = u·((u + 2)(P + 2) + 4x(1 + u))/
//!   (P + 2)², whose cancellation near mish′'s zero (x ≈ −1.19) [`Ev::add`] bounds.
//!
//! For x ≥ 1 both roles are a base (x, 1) plus a delta computed without cancellation.  When
//! u < 2^−898 (x < −623), mish = x·u·(1 + O(u)) and mish′ = u·(1 + x)·(1 + O(u)) (|x|/|1 + x| ≈ 1),
//! the dropped relative terms far below [`DROPPED`].  Bounds compose through [`Ev`].

use super::common::{decay, near_constant, near_side, widen, DROPPED, TAIL};
use super::dd::{Dd, Ev};
use super::decide::{engine_tiny, rectifier_tail, Outcome};
use crate::activation::Role;
use crate::format::Layout;

/// Mish or Mish′ where a closed form decides it (x finite, nonzero, |x| < TAIL; logarithms from
/// mpmath, 50 digits).
///
/// Forward, x > 20: x − y = x·2u²/D < 2x·e^(−2x) and 2e^(−40) = 2^(−56.71); x < 2^(e+1),
/// e = ilogb(x), so x − y < 2^(e−55.7) < 2^(e−54): just below x.
/// Derivative, x > 22: y − 1 = 2u²(2x(1 + u) − D)/D² > 0 (2x(1 + u) − D ≥ 44 − 1.01), and
/// < 4x·u²·(1 + u) (D ≥ 1) ≤ 4·22·e^(−44)·(1 + e^(−22)) = 2^(−57.01) < 2^−54 (x·e^(−2x)
/// decreases for x > 1/2): just above 1.
/// x < −753, u = e^x: forward |y| ≤ |x|·u(u + 2)/2 ≤ 1.0001·|x|·u; derivative: (u + 2)(P + 2)
/// < 4.1 < 4|x|(1 + u), so y < 0 and |y| ≤ u·4|x|(1 + u)/(P + 2)² ≤ 1.0001·|x|·u; and
/// |x|·e^x ≤ 753·e^(−753) = 2^(−1076.79) for x ≤ −753 (decreasing for x < −1): both roles
/// round to the engine's −0.
#[inline(always)]
fn closed(format: Layout, x: f64, role: Role) -> Option<Outcome> {
    match role {
        Role::Forward if x > 20.0 => Some(near_side(x, false)),
        Role::Derivative if x > 22.0 => Some(near_constant(1.0, true)),
        _ if x < -753.0 => Some(Outcome::Fixed(engine_tiny(format, true))),
        _ => None,
    }
}

/// mish(x) or mish′(x).
#[inline(always)]
pub fn mish(format: Layout, x: f64, role: Role) -> Outcome {
    let a = x.abs();
    if a >= TAIL {
        return rectifier_tail(format, x, role);
    }
    if let Some(o) = closed(format, x, role) {
        return o;
    }
    let xe = Ev::exact(Dd::new(x));
    let t = decay(Dd::new(a));
    let u = match t.plain {
        Some(u) => u,
        None => {
            // x < −623: mish = x·u·(1 + O(u)), mish′ = u·(1 + x)·(1 + O(u)).
            let v = match role {
                Role::Forward => xe.mul(t.m),
                Role::Derivative => t.m.mul(xe.add_f(1.0)),
            };
            return Outcome::Value(widen(v, DROPPED), t.k);
        }
    };
    let u1 = u.add_f(1.0);
    if x > 0.0 {
        let u2 = u.mul(u).mul_f(2.0);
        let d = u.mul(u1).mul_f(2.0).add_f(1.0);
        return match role {
            Role::Forward if x >= 1.0 => Outcome::Near(x, xe.mul(u2).div(d).neg()),
            Role::Forward => Outcome::Value(xe.mul(u.mul_f(2.0).add_f(1.0)).div(d), 0),
            Role::Derivative if x >= 1.0 => {
                let inner = xe.mul(u1).mul_f(2.0).add(d.neg());
                Outcome::Near(1.0, u2.mul(inner).div(d.mul(d)))
            }
            Role::Derivative => {
                let n = u.mul_f(2.0).add_f(1.0);
                let num = n.mul(d).add(xe.mul(u2).mul(u1).mul_f(2.0));
                Outcome::Value(num.div(d.mul(d)), 0)
            }
        };
    }
    let u2p = u.add_f(2.0);
    let p2 = u.mul(u2p).add_f(2.0);
    match role {
        Role::Forward => Outcome::Value(xe.mul(t.m).mul(u2p).div(p2), t.k),
        Role::Derivative => {
            let inner = u2p.mul(p2).add(xe.mul(u1).mul_f(4.0));
            Outcome::Value(t.m.mul(inner).div(p2.mul(p2)), t.k)
        }
    }
}
