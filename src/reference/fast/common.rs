//! Pieces the function families share.

use super::dd::{ilogb, pow2, Dd, Ev, SLACK};
use super::decide::Outcome;
use super::exp::exp;

/// Inputs with |x| ≥ 2^12 take the engine's asymptotic tails (see `activation::common`).
pub const TAIL: f64 = 4096.0;

/// e^(−a) for a ≥ 0 as (m, k), y = 2^k·m; `plain` is 2^k·m as an ordinary double-word when
/// k ≥ −900 (None below: then e^(−a) < 2^−898).
pub struct Decay {
    /// Significand part.
    pub m: Ev,
    /// Binary exponent.
    pub k: i32,
    /// 2^k·m when representable without leaving the safe range.
    pub plain: Option<Ev>,
}

/// e^(−a), a a nonnegative double-word.
#[inline(always)]
pub fn decay(a: Dd) -> Decay {
    let (m, k) = exp(a.neg());
    let plain = (k >= -900).then(|| Ev {
        v: m.v.scale2(k),
        r: m.r,
    });
    Decay { m, k, plain }
}

/// A stand-in for a nonzero delta known to be below 2^(ilogb(base) − 54) in magnitude, of the
/// given sign: [`super::decide::finish`] uses only its sign then (and base as approximation).
#[inline(always)]
pub fn beside(base: f64, positive: bool) -> Ev {
    let v = pow2((ilogb(base) - 200).max(-1000));
    Ev {
        v: Dd::new(if positive { v } else { -v }),
        r: 0.25,
    }
}

/// Widens a relative bound by a negligible term dropped from a formula (e.g. 1 + t ≈ 1 when
/// t < 2^−898, which changes the value by a relative 2^−898 at most).
#[inline(always)]
pub fn widen(v: Ev, extra: f64) -> Ev {
    Ev {
        v: v.v,
        r: (v.r + extra) * SLACK,
    }
}

/// Relative bound used for terms dropped when e^(−a) < 2^−898.
pub const DROPPED: f64 = 1.0e-250;

/// y = base + δ with 0 < |δ| < 2^(ilogb(base) − 54), δ > 0 exactly when `up`: decided by the
/// side alone (see [`super::decide::finish`]); the caller proves the bound on |δ|.
#[inline(always)]
pub fn near_side(base: f64, up: bool) -> Outcome {
    Outcome::Near(base, beside(base, up))
}

/// [`near_side`] for a base that stays the same over many inputs (a literal constant or a
/// parameter): the decided reference is kept per thread (see [`Outcome::Beside`]).
#[inline(always)]
pub fn near_constant(base: f64, up: bool) -> Outcome {
    Outcome::Beside(base, up)
}

/// 2^−53.
pub const TWO_M53: f64 = 1.1102230246251565e-16;
/// 2^−54.
pub const TWO_M54: f64 = 5.551115123125783e-17;
/// 2^−55.
pub const TWO_M55: f64 = 2.7755575615628914e-17;
/// 2^−26.
pub const TWO_M26: f64 = 1.4901161193847656e-8;
/// 2^−27.
pub const TWO_M27: f64 = 7.450580596923828e-9;
