//! Softplus ln(1 + e^x) = max(x, 0) + ln(1 + e^(−|x|)); its derivative is σ(x), which the
//! engine evaluates exactly as sigmoid's forward role (same tails, same 1 − σ(−x) form), so
//! [`super::logistic::sigmoid`] decides it.
//!
//! With u = e^(−|x|) from [`decay`] and ln(1 + u) from [`log1p`]: x > 0 gives x + ln(1 + u), a
//! base x plus a positive delta; x < 0 gives ln(1 + u) alone, 2^k·m·(1 + O(u)) when u is below
//! 2^−898 (the dropped relative u/2 is far below [`DROPPED`]).

use super::common::{decay, near_side, widen, DROPPED, TAIL};
use super::dd::Dd;
use super::decide::{engine_beside, engine_tiny, Outcome};
use super::log::log1p;
use super::logistic;
use crate::activation::Role;
use crate::format::Layout;

/// Softplus where a closed form decides it (x finite, nonzero, |x| < TAIL; logarithms from
/// mpmath, 50 digits; ln(1 + u) < u for u > 0).
///
/// x > 38: y − x = ln(1 + e^(−x)) ∈ (0, e^(−38)), e^(−38) = 2^(−54.82) < 2^(ilogb(x) − 54)
/// (ilogb(x) ≥ 5): just above x.
/// x < −745.2: 0 < y < e^x < e^(−745.2) = 2^(−1075.09) < 2^−1075: the engine's +0.
#[inline(always)]
fn closed(format: Layout, x: f64) -> Option<Outcome> {
    if x > 38.0 {
        Some(near_side(x, true))
    } else if x < -745.2 {
        Some(Outcome::Fixed(engine_tiny(format, false)))
    } else {
        None
    }
}

/// softplus(x) or softplus′(x) = σ(x).
#[inline(always)]
pub fn softplus(format: Layout, x: f64, role: Role) -> Outcome {
    if role == Role::Derivative {
        return logistic::sigmoid(format, x, Role::Forward);
    }
    let a = x.abs();
    if a >= TAIL {
        return if x > 0.0 {
            engine_beside(format, x, true).map_or(Outcome::Decline, Outcome::Fixed)
        } else {
            Outcome::Fixed(engine_tiny(format, false))
        };
    }
    if let Some(o) = closed(format, x) {
        return o;
    }
    let t = decay(Dd::new(a));
    match t.plain {
        Some(u) if x > 0.0 => Outcome::Near(x, log1p(u)),
        Some(u) => Outcome::Value(log1p(u), 0),
        // u < 2^−898 only for x < −623 here: ln(1 + u) = u·(1 − u/2 + …).
        None => Outcome::Value(widen(t.m, DROPPED), t.k),
    }
}
