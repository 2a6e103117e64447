//! Pieces shared by several catalog functions.
//!
//! The tails: for |x| ≥ 2^12 every exponential piece is below e^−4096 < 2^−5900, so a function
//! there equals its asymptote a up to a relative 2^−1000 or less, on a known side.  Rounding
//! boundaries of every supported format are at least 2^−150 apart absolutely and 2^−25
//! relatively, so none lies strictly between a and a ± |a|·2^−1000 except possibly a itself:
//! every point of the open interval (a, a + |a|·2^−1000] rounds the same way and lies in the
//! same binade.  [`above`] and [`below`] return a [`Value::Near`] whose offset carries only that
//! sign, which keeps MPFR's exponent range out of reach (e^−(3.4e38) would underflow it).

use super::{Activation, Ctx, Limit, Role, Value};
use crate::reference::Ival;
use rug::{Float, Rational};

/// Inputs with |x| ≥ 2^TAIL_LOG2 use the asymptotic tails.
pub const TAIL_LOG2: i32 = 12;

/// Whether |x| ≥ 2^12.
pub fn in_tail(x: &Float) -> bool {
    x.get_exp().is_some_and(|e| e > TAIL_LOG2)
}

/// x as an exact rational (x is finite).
pub fn rational(x: &Float) -> Rational {
    x.to_rational().expect("finite input")
}

/// `eval` of a function that is rational at every finite input: its
/// [`Activation::eval_rational`] at x, as an exact value.
pub fn exact_from_rational(f: &dyn Activation, x: &Float, role: Role, ctx: &Ctx) -> Value {
    Value::Exact(
        f.eval_rational(&rational(x), role, ctx)
            .expect("rational at every finite input"),
    )
}

/// The exact point x.
pub fn point(x: &Float) -> Ival {
    Ival::point(x)
}

/// A sign-only offset of magnitude far below 2^−1000·|a|: the engine decides by its sign.
fn sign_only(a: &Rational, positive: bool) -> Ival {
    let e = crate::reference::floor_log2_rational(a);
    let small = Float::with_val(64, Float::i_exp(1, e - 2000));
    let large = Float::with_val(64, Float::i_exp(1, e - 1000));
    if positive {
        Ival::new(small, large)
    } else {
        Ival::new(-large, -small)
    }
}

/// A value just above a nonzero rational a: a + δ with 0 < δ < |a|·2^−1000.
pub fn above(a: &Rational) -> Value {
    Value::Near {
        base: a.clone(),
        delta: sign_only(a, true),
    }
}

/// A value just below a nonzero rational a: a − δ with 0 < δ < |a|·2^−1000.
pub fn below(a: &Rational) -> Value {
    Value::Near {
        base: a.clone(),
        delta: sign_only(a, false),
    }
}

/// base + delta (see [`Value::Near`]).
pub fn near(base: Rational, delta: Ival) -> Value {
    Value::Near { base, delta }
}

/// A nonzero value of magnitude below 2^−1000 (below 2^−1080 stated) and of the given sign.
pub fn tiny(negative: bool) -> Value {
    // Below binary64's smallest subnormal (2^−1074), so its approximation is exactly 0.
    let small = Float::with_val(64, Float::i_exp(1, -1100));
    let large = Float::with_val(64, Float::i_exp(1, -1080));
    Value::Enclosed(if negative {
        Ival::new(-large, -small)
    } else {
        Ival::new(small, large)
    })
}

/// σ(z) = 1/(1 + e^−z), without cancellation for any z.
pub fn sigmoid(z: &Ival, prec: u32) -> Ival {
    let t = z.neg().exp(prec);
    Ival::int(1).div(&Ival::int(1).add(&t, prec), prec)
}

/// σ(x) for a point x, as 1 − σ(−x) near its upper asymptote (x ≥ 1).
pub fn sigmoid_value(x: &Float, prec: u32) -> Value {
    if *x >= 1 {
        let minus = Ival::point(&Float::with_val(x.prec(), -x));
        near(one(), sigmoid(&minus, prec).neg())
    } else {
        Value::Enclosed(sigmoid(&point(x), prec))
    }
}

/// softplus(z) = max(z, 0) + ln(1 + e^−|z|) for a point z.
pub fn softplus_point(z: &Float, prec: u32) -> Ival {
    let magnitude = Ival::point(&Float::with_val(z.prec(), z.abs_ref()));
    let correction = magnitude.neg().exp(prec).ln_1p(prec);
    if z.is_sign_positive() && !z.is_zero() {
        correction.add(&Ival::point(z), prec)
    } else {
        correction
    }
}

/// The limit for a rational value: zero becomes +0.
pub fn limit_of(q: Rational) -> Limit {
    if q.is_zero() {
        Limit::Zero { negative: false }
    } else {
        Limit::Finite(q)
    }
}

/// The rational 1.
pub fn one() -> Rational {
    Rational::from(1)
}
