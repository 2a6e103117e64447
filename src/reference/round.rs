//! Rounding an exact value once, directly into a target format: round-to-nearest, ties to
//! even, subnormals rounded at their own (reduced) precision, overflow to ±∞ from
//! max + ulp(max)/2 on (IEEE 754-2019 §4.3.1 and §7.4) — or to what the format's OFP8
//! conversion mode gives instead (NaN in E4M3, ±max when saturating; `Layout::overflow`).

use crate::format::Format;
use rug::float::Round;
use rug::{Float, Integer, Rational};
use std::cmp::Ordering;

/// ⌊log2 |v|⌋ of a nonzero finite MPFR number.
pub fn floor_log2(v: &Float) -> i32 {
    // MPFR writes v = m·2^e with 1/2 ≤ |m| < 1.
    v.get_exp().expect("floor_log2 of zero or non-finite") - 1
}

/// ⌊log2 |q|⌋ of a nonzero rational.
pub fn floor_log2_rational(q: &Rational) -> i32 {
    // Truncation towards zero never carries into the next binade.
    let truncated = Float::with_val_round(64, q, Round::Zero).0;
    floor_log2(&truncated)
}

/// Exponent of the quantum (the ulp) of values whose ⌊log2⌋ is `binade` in `format`.
fn quantum_exp(format: &dyn Format, binade: i32) -> i32 {
    binade.max(format.emin()) - format.precision() as i32 + 1
}

/// Rounds a finite nonzero integer-scaled value k (given as an MPFR number equal to
/// v / 2^quantum) to an integer, ties to even.
fn round_even_to_u64(scaled: Float) -> u64 {
    let k = scaled.round_even().abs();
    k.to_integer()
        .and_then(|i| i.to_u64())
        .expect("rounded significand fits in u64")
}

/// RN of an exact MPFR number into `format` (its bit pattern). NaN maps to the canonical quiet
/// NaN; zeros keep their sign; an inexact tiny value keeps its sign when it rounds to zero.
pub fn round_float(v: &Float, format: &dyn Format) -> u32 {
    if v.is_nan() {
        return format.quiet_nan();
    }
    let negative = v.is_sign_negative();
    if v.is_infinite() {
        return format.layout().overflow(negative);
    }
    if v.is_zero() {
        return format.encode(negative, 0, 0);
    }
    let binade = floor_log2(v);
    if binade > format.emax() {
        return format.layout().overflow(negative);
    }
    let q = quantum_exp(format, binade);
    // v·2^−q is exact: only the exponent changes.
    let scaled = Float::with_val(v.prec(), v >> q);
    format.encode(negative, round_even_to_u64(scaled), q)
}

/// RN of an exact rational into `format`; an exact zero takes the sign `negative_zero` asks for.
pub fn round_rational(value: &Rational, negative_zero: bool, format: &dyn Format) -> u32 {
    let negative = match value.cmp0() {
        Ordering::Equal => return format.encode(negative_zero, 0, 0),
        Ordering::Less => true,
        Ordering::Greater => false,
    };
    let binade = floor_log2_rational(value);
    if binade > format.emax() {
        return format.layout().overflow(negative);
    }
    let q = quantum_exp(format, binade);
    let scaled = Rational::from(value.abs_ref()) >> q;
    let (fraction, floor) = scaled.fract_floor(Integer::new());
    let k = match fraction.cmp(&Rational::from((1, 2))) {
        Ordering::Less => floor,
        Ordering::Greater => floor + 1u32,
        Ordering::Equal if floor.is_even() => floor,
        Ordering::Equal => floor + 1u32,
    };
    format.encode(
        negative,
        k.to_u64().expect("rounded significand fits in u64"),
        q,
    )
}
