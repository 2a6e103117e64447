//! Softplus ln(1 + e^x) = max(x, 0) + ln(1 + e^(−|x|)); its derivative is σ(x), which the
//! engine evaluates exactly as sigmoid's forward role (same tails, same 1 − σ(−x) form), so
//! [`super::logistic::sigmoid`] decides it.
//!
//! With u = e^(−|x|) from [`decay`] and ln(1 + u) from [`log1p`]: x > 0 gives x + ln(1 + u), a
//! base x plus a positive delta; x < 0 gives ln(1 + u) alone, 2^k·m·(1 + O(u)) when u is below
//! 2^−898 (the dropped relative u/2 is far below [`DROPPED`]).

use super::common::{decay, near_side, widen, DROPPED, TAIL};
use super::dd::{constant, Dd, Ev};
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

/// Inputs with |x| below 2^−30 take [`band`].
pub const BAND: f64 = 9.313225746154785e-10;

/// ln 2 as a double-word constant (relative 2^−104).
fn ln2() -> Ev {
    static LN2: std::sync::OnceLock<Ev> = std::sync::OnceLock::new();
    *LN2.get_or_init(|| constant(&rug::Float::with_val(300, rug::float::Constant::Log2)))
}

/// ln 2 + s·x/2 + x²/8 for |x| < 2^−30, s = ±1, with its bound: softplus(x) − x/2 =
/// ln(2·cosh(x/2)) = ln 2 + x²/8 − x⁴/192 + x⁶/2880 − …, an alternating series of even powers
/// with decreasing terms for |x| < 1, so the truncation is below x⁴/192.  x/2 is exact; x²/8
/// is rounded once (2^−53·x²/8), or underflows (absolute 2^−1075) below |x| = 2^−75.  Relative
/// to the value (≥ ln 2 − 2^−31 > 0.69): ≤ x⁴/132 + 2^−55.47·x² + 2^−1070, recorded as
/// 0.008·w² + 2.1·10^−17·w + [`DROPPED`] (w = RN(x²)).  [`Ev::add_f`] carries ln 2's own bound
/// and the two double-word additions.  Used by log-sigmoid with s = −1 (ln σ(x) = −softplus(−x)).
#[inline(always)]
pub fn band(x: f64, sign: f64) -> Ev {
    let w = x * x;
    let v = ln2().add_f(sign * x * 0.5).add_f(w * 0.125);
    widen(v, 0.008 * w * w + 2.1e-17 * w + DROPPED)
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
    if a < BAND {
        return Outcome::Value(band(x, 1.0), 0);
    }
    let t = decay(Dd::new(a));
    match t.plain {
        Some(u) if x > 0.0 => Outcome::Near(x, log1p(u)),
        Some(u) => Outcome::Value(log1p(u), 0),
        // u < 2^−898 only for x < −623 here: ln(1 + u) = u·(1 − u/2 + …).
        None => Outcome::Value(widen(t.m, DROPPED), t.k),
    }
}
