//! Log-sigmoid ln σ(x) = −softplus(−x) = min(x, 0) − ln(1 + e^(−|x|)); its derivative is
//! σ(−x), which the engine evaluates as sigmoid's forward role at −x (same tails, same
//! 1 − σ(x) form for −x ≥ 1), so [`super::logistic::sigmoid`] at −x decides it.
//!
//! With u = e^(−|x|) and ln(1 + u) from [`log1p`]: x < 0 gives x − ln(1 + u), a base x with a
//! negative delta; x > 0 gives −ln(1 + u), −2^k·m·(1 + O(u)) when u < 2^−898.

use super::common::{decay, near_side, widen, DROPPED, TAIL};
use super::dd::Dd;
use super::decide::{engine_beside, engine_tiny, Outcome};
use super::log::log1p;
use super::logistic;
use super::softplus::{band, BAND};
use crate::activation::Role;
use crate::format::Layout;

/// Log-sigmoid where a closed form decides it (x finite, nonzero, |x| < TAIL; see
/// [`super::softplus`], mirrored: y(x) = −softplus(−x)).
///
/// x < −38: x − y = ln(1 + e^x) ∈ (0, e^(−38)), e^(−38) = 2^(−54.82) < 2^(ilogb(x) − 54): just
/// below x.
/// x > 745.2: −2^−1075 < −e^(−x) < y < 0: the engine's −0.
#[inline(always)]
fn closed(format: Layout, x: f64) -> Option<Outcome> {
    if x < -38.0 {
        Some(near_side(x, false))
    } else if x > 745.2 {
        Some(Outcome::Fixed(engine_tiny(format, true)))
    } else {
        None
    }
}

/// ln σ(x) or its derivative σ(−x).
#[inline(always)]
pub fn log_sigmoid(format: Layout, x: f64, role: Role) -> Outcome {
    if role == Role::Derivative {
        return logistic::sigmoid(format, -x, Role::Forward);
    }
    let a = x.abs();
    if a >= TAIL {
        return if x < 0.0 {
            engine_beside(format, x, false).map_or(Outcome::Decline, Outcome::Fixed)
        } else {
            Outcome::Fixed(engine_tiny(format, true))
        };
    }
    if let Some(o) = closed(format, x) {
        return o;
    }
    if a < BAND {
        // ln σ(x) = −softplus(−x) = −(ln 2 − x/2 + ln cosh(x/2)).
        return Outcome::Value(band(x, -1.0).neg(), 0);
    }
    let t = decay(Dd::new(a));
    match t.plain {
        Some(u) if x < 0.0 => Outcome::Near(x, log1p(u).neg()),
        Some(u) => Outcome::Value(log1p(u).neg(), 0),
        // u < 2^−898 only for x > 623 here: −ln(1 + u) = −u·(1 − u/2 + …).
        None => Outcome::Value(widen(t.m, DROPPED).neg(), t.k),
    }
}
