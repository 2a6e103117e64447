//! Exact binary numbers m·2^e with a 128-bit integer significand, and their round-to-nearest
//! (ties to even) into a target format and into binary64, in integer arithmetic: the per-pair
//! work of the prepared pair reference, where the MPFR engine would allocate.

use crate::format::Layout;
use rug::{Float, Integer, Rational};

/// Significant bits kept of a prepared act(a): 104 + 24 (a binary32 b) = 128, so the product
/// with any b of a format up to binary32 is exact in a `u128`.
pub const SIGNIFICAND_BITS: u32 = 104;

/// A positive number m·2^e (m > 0).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Dyadic {
    /// The integer significand.
    pub m: u128,
    /// The exponent of its last bit.
    pub e: i32,
}

impl Dyadic {
    /// |v| of a finite nonzero MPFR number rounded to [`SIGNIFICAND_BITS`] bits, towards zero
    /// (`up` false) or away from zero (`up` true): an outward end of an enclosure.
    pub fn from_float(v: &Float, up: bool) -> Option<Dyadic> {
        if !v.is_finite() || v.is_zero() {
            return None;
        }
        let round = if up {
            rug::float::Round::Up
        } else {
            rug::float::Round::Down
        };
        let (r, _) = Float::with_val_round(SIGNIFICAND_BITS, &*v.as_abs(), round);
        let (m, e) = r.to_integer_exp()?;
        Some(Dyadic { m: m.to_u128()?, e })
    }

    /// |q| of a nonzero rational when it is exactly m·2^e with m of at most
    /// [`SIGNIFICAND_BITS`] bits, else `None`.
    pub fn from_rational(q: &Rational) -> Option<Dyadic> {
        let den = q.denom();
        if q.cmp0().is_eq() || !den.is_power_of_two() {
            return None;
        }
        let num = Integer::from(q.numer().abs_ref());
        let zeros = num.find_one(0)?;
        let m = Integer::from(&num >> zeros);
        if m.significant_bits() > SIGNIFICAND_BITS {
            return None;
        }
        let e = i32::try_from(zeros as i64 - (den.significant_bits() as i64 - 1)).ok()?;
        Some(Dyadic { m: m.to_u128()?, e })
    }

    /// The exact product with k·2^f (k > 0), `None` when it needs more than 128 bits.
    #[inline]
    pub fn times(self, k: u64, f: i32) -> Option<Dyadic> {
        let m = self.m.checked_mul(k as u128)?;
        Some(Dyadic { m, e: self.e + f })
    }

    /// (self + other)/2 exactly, `None` when the aligned sum needs more than 128 bits.
    pub fn midpoint(self, other: Dyadic) -> Option<Dyadic> {
        let (x, y) = (self.odd(), other.odd());
        let e = x.e.min(y.e);
        let (sx, sy) = ((x.e - e) as u32, (y.e - e) as u32);
        if sx > x.m.leading_zeros() || sy > y.m.leading_zeros() {
            return None;
        }
        let m = (x.m << sx).checked_add(y.m << sy)?;
        Some(Dyadic { m, e: e - 1 })
    }

    /// The same number with an odd significand.
    fn odd(self) -> Dyadic {
        let zeros = self.m.trailing_zeros();
        Dyadic {
            m: self.m >> zeros,
            e: self.e + zeros as i32,
        }
    }

    /// ⌊log2 v⌋.
    #[inline]
    pub fn floor_log2(self) -> i32 {
        self.e + 127 - self.m.leading_zeros() as i32
    }

    /// v / 2^q rounded to an integer, ties to even; `None` when it does not fit a `u64`.
    #[inline]
    fn round_at(self, q: i32) -> Option<u64> {
        let shift = q as i64 - self.e as i64;
        if shift <= 0 {
            let up = (-shift) as u32;
            if up + (128 - self.m.leading_zeros()) > 64 {
                return None;
            }
            return Some((self.m << up) as u64);
        }
        if shift > 128 {
            // v < 2^(e + 128) ≤ 2^(q − 1): below half the quantum.
            return Some(0);
        }
        let s = shift as u32;
        let (floor, rest, half) = if s == 128 {
            (0, self.m, 1u128 << 127)
        } else {
            (self.m >> s, self.m & ((1u128 << s) - 1), 1u128 << (s - 1))
        };
        let up = rest > half || (rest == half && floor & 1 == 1);
        u64::try_from(floor + up as u128).ok()
    }

    /// RN(±v) in a format's layout, as the engine's `round_float` rounds: beyond emax's
    /// binade the overflow pattern, else the significand rounded at the binade's quantum.
    #[inline]
    pub fn round_into(self, layout: Layout, negative: bool) -> Option<u32> {
        let binade = self.floor_log2();
        if binade > layout.emax() {
            return Some(layout.overflow(negative));
        }
        let q = binade.max(layout.emin()) - layout.precision() as i32 + 1;
        Some(layout.encode(negative, self.round_at(q)?, q))
    }

    /// RN_binary64(±v) (IEEE 754-2019 §4.3.1, subnormals at their reduced precision);
    /// `None` when it overflows.
    #[inline]
    pub fn nearest_f64(self, negative: bool) -> Option<f64> {
        let binade = self.floor_log2();
        if binade > 1023 {
            return None;
        }
        let q = binade.max(-1022) - 52;
        let k = self.round_at(q)?;
        // k ≤ 2^53 and k·2^q is a binary64 number (or 2^1024): the product is exact.
        let v = k as f64 * pow2(q);
        if v.is_infinite() {
            return None;
        }
        Some(if negative { -v } else { v })
    }
}

/// 2^e for −1074 ≤ e ≤ 1023, exactly.
#[inline]
fn pow2(e: i32) -> f64 {
    if e >= -1022 {
        f64::from_bits(((e + 1023) as u64) << 52)
    } else {
        f64::from_bits(1u64 << (e + 1074))
    }
}

/// A finite nonzero binary64 as (sign, k, f) with |x| = k·2^f and k odd.
#[inline]
pub fn odd_significand(x: f64) -> Option<(bool, u64, i32)> {
    if !x.is_finite() || x == 0.0 {
        return None;
    }
    let bits = x.to_bits();
    let field = ((bits >> 52) & 0x7ff) as i32;
    let frac = bits & ((1u64 << 52) - 1);
    let (k, f) = if field == 0 {
        (frac, -1074)
    } else {
        (frac | 1u64 << 52, field - 1075)
    };
    let zeros = k.trailing_zeros();
    Some((x.is_sign_negative(), k >> zeros, f + zeros as i32))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::{Binary16, Format};
    use crate::reference::round::{round_float, round_rational};

    #[test]
    fn rounding_agrees_with_mpfr_and_rationals() {
        let l = Binary16.layout();
        // 65520 = 65504 + 16 is the binary16 overflow threshold (IEEE 754-2019 §7.4: ties to
        // even round it up to ∞); one 2^-30 below it rounds to 65504 (0x7bff).
        let just_below = Dyadic {
            m: (65520u128 << 30) - 1,
            e: -30,
        };
        assert_eq!(just_below.round_into(l, false), Some(0x7bff));
        assert_eq!(Dyadic { m: 65520, e: 0 }.round_into(l, true), Some(0xfc00));
        // 2^-25 is half the smallest subnormal 2^-24: ties to even give +0; a hair more, 2^-24.
        assert_eq!(Dyadic { m: 1, e: -25 }.round_into(l, false), Some(0));
        assert_eq!(Dyadic { m: 3, e: -26 }.round_into(l, false), Some(0x0001));
        // Against the MPFR rounding and binary64 for many values of all magnitudes.
        let mut z = 1u64;
        for i in 0..20_000u64 {
            z = z
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            let m = ((z as u128) << 40 | (i as u128)) >> (z % 90);
            let m = m.max(1);
            let e = (z >> 50) as i32 % 200 - 160;
            let d = Dyadic { m, e };
            let q = Rational::from(Integer::from(m)) << e;
            let v = Float::with_val(256, &q);
            assert_eq!(d.round_into(l, false), Some(round_float(&v, &Binary16)));
            assert_eq!(
                d.round_into(l, true),
                Some(round_rational(&-q.clone(), false, &Binary16))
            );
            assert_eq!(d.nearest_f64(false), Some(v.to_f64()), "{m} {e}");
            assert_eq!(d.floor_log2(), crate::reference::floor_log2(&v));
        }
        // Binary64 subnormals round at their own quantum 2^-1074: 3·2^-1076 = 0.75·2^-1074 → 2^-1074.
        let tiny = Dyadic { m: 3, e: -1076 };
        assert_eq!(tiny.nearest_f64(true), Some(-f64::from_bits(1)));
    }

    #[test]
    fn midpoints_are_exact() {
        // (3·2^-4 + 1·2^2)/2 = (3 + 64)·2^-5 = 67·2^-5.
        let m = Dyadic { m: 3, e: -4 }.midpoint(Dyadic { m: 4, e: 0 });
        assert_eq!(m, Some(Dyadic { m: 67, e: -5 }));
        // Too far apart for 128 bits.
        let far = Dyadic { m: 3, e: -200 }.midpoint(Dyadic { m: 3, e: 0 });
        assert_eq!(far, None);
    }

    #[test]
    fn exact_conversions() {
        let q = Rational::from((-3, 8));
        assert_eq!(Dyadic::from_rational(&q), Some(Dyadic { m: 3, e: -3 }));
        assert_eq!(Dyadic::from_rational(&Rational::from((1, 3))), None);
        assert_eq!(odd_significand(-0.375), Some((true, 3, -3)));
        assert_eq!(odd_significand(f64::from_bits(1)), Some((false, 1, -1074)));
        let v = Float::with_val(128, 1) / 3u32;
        let lo = Dyadic::from_float(&v, false).unwrap();
        let hi = Dyadic::from_float(&v, true).unwrap();
        assert_eq!(hi.m, lo.m + 1);
        assert_eq!(lo.m.leading_zeros(), 128 - SIGNIFICAND_BITS);
    }
}
