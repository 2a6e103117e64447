//! Double-double ("double-word") arithmetic with the error bounds of Joldes, Muller and Popescu,
//! "Tight and rigorous error bounds for basic building blocks of double-word arithmetic",
//! ACM TOMS 44(2), 2017 (JMP below; constants quoted from that paper, from memory).
//!
//! With u = 2^−53 (binary64, round to nearest, no underflow or overflow), JMP prove relative
//! error bounds of 3u² + 13u³ for AccurateDWPlusDW (their Algorithm 6), 2u² for DWPlusFP
//! (Algorithm 4), 2u² for DWTimesFP3 (Algorithm 9), 5u² for DWTimesDW3 (Algorithm 12, later
//! lowered to 4u²) and 15u² + 56u³ for DWDivDW2 (Algorithm 17).  We use one uniform bound
//! [`OP`] = 2^−100 = 64u² for every operation, far above each of them, so that a slip in a
//! remembered constant cannot break a proof.  "No underflow" is ensured by the callers: every
//! double-word value they form has magnitude ≥ 2^−900 or is exactly zero, so low parts and the
//! error terms of TwoSum/TwoProd (≥ 2^−900·2^−106) stay normal.

// Named methods rather than operator traits: each call is a rounding with a proven bound,
// and keeping them explicit keeps every one visible in the proofs.
#![allow(clippy::should_implement_trait)]

use crate::reference::Real;
use rug::Float;

/// Uniform relative error bound of one double-word operation (see the module comment).
pub const OP: f64 = 7.888609052210118e-31; // 2^-100

/// A double-word number hi + lo with |lo| ≤ ulp(hi)/2.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Dd {
    /// Leading part, RN(hi + lo).
    pub hi: f64,
    /// Trailing part.
    pub lo: f64,
}

/// s + e = a + b exactly, s = RN(a + b) (Knuth's TwoSum; exact without underflow issues).
#[inline(always)]
pub fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    let e = (a - (s - bb)) + (b - bb);
    (s, e)
}

/// s + e = a + b exactly when |a| ≥ |b| or a = 0 (Dekker's FastTwoSum).
#[inline(always)]
pub(super) fn fast_two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let e = b - (s - a);
    (s, e)
}

/// p + e = a·b exactly (fused multiply-add; exact when the product's error term is normal).
#[inline(always)]
pub fn two_prod(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    (p, a.mul_add(b, -p))
}

impl Dd {
    /// An exact f64.
    #[inline(always)]
    pub const fn new(x: f64) -> Dd {
        Dd { hi: x, lo: 0.0 }
    }
    /// The exact product of two f64 as a double-word.
    #[inline(always)]
    pub fn prod(a: f64, b: f64) -> Dd {
        let (hi, lo) = two_prod(a, b);
        Dd { hi, lo }
    }
    /// The exact sum of two f64 as a double-word.
    #[inline(always)]
    pub fn sum(a: f64, b: f64) -> Dd {
        let (hi, lo) = two_sum(a, b);
        Dd { hi, lo }
    }
    /// −self (exact).
    #[inline(always)]
    pub fn neg(self) -> Dd {
        Dd {
            hi: -self.hi,
            lo: -self.lo,
        }
    }
    /// |self| (exact).
    #[inline(always)]
    pub fn abs(self) -> Dd {
        if self.hi < 0.0 {
            self.neg()
        } else {
            self
        }
    }
    /// self·2^k (exact while the result stays normal).
    #[inline(always)]
    pub fn scale2(self, k: i32) -> Dd {
        let s = pow2(k);
        Dd {
            hi: self.hi * s,
            lo: self.lo * s,
        }
    }
    /// AccurateDWPlusDW (JMP Algorithm 6): relative error ≤ 3u² + 13u³ ≤ OP.
    #[inline(always)]
    pub fn add(self, b: Dd) -> Dd {
        let (sh, sl) = two_sum(self.hi, b.hi);
        let (th, tl) = two_sum(self.lo, b.lo);
        let c = sl + th;
        let (vh, vl) = fast_two_sum(sh, c);
        let w = tl + vl;
        let (hi, lo) = fast_two_sum(vh, w);
        Dd { hi, lo }
    }
    /// self − b, as [`Dd::add`].
    #[inline(always)]
    pub fn sub(self, b: Dd) -> Dd {
        self.add(b.neg())
    }
    /// DWPlusFP (JMP Algorithm 4): relative error ≤ 2u² ≤ OP.
    #[inline(always)]
    pub fn add_f(self, b: f64) -> Dd {
        let (sh, sl) = two_sum(self.hi, b);
        let v = self.lo + sl;
        let (hi, lo) = fast_two_sum(sh, v);
        Dd { hi, lo }
    }
    /// DWTimesDW3 (JMP Algorithm 12): relative error ≤ 5u² ≤ OP.
    #[inline(always)]
    pub fn mul(self, b: Dd) -> Dd {
        let (ch, cl1) = two_prod(self.hi, b.hi);
        let tl0 = self.lo * b.lo;
        let tl1 = self.hi.mul_add(b.lo, tl0);
        let cl2 = self.lo.mul_add(b.hi, tl1);
        let cl3 = cl1 + cl2;
        let (hi, lo) = fast_two_sum(ch, cl3);
        Dd { hi, lo }
    }
    /// DWTimesFP3 (JMP Algorithm 9): relative error ≤ 2u² ≤ OP.
    #[inline(always)]
    pub fn mul_f(self, b: f64) -> Dd {
        let (ch, cl1) = two_prod(self.hi, b);
        let cl3 = self.lo.mul_add(b, cl1);
        let (hi, lo) = fast_two_sum(ch, cl3);
        Dd { hi, lo }
    }
    /// DWDivDW2 (JMP Algorithm 17): relative error ≤ 15u² + 56u³ ≤ OP.
    #[inline(always)]
    pub fn div(self, b: Dd) -> Dd {
        let th = self.hi / b.hi;
        let r = b.mul_f(th);
        let ph = self.hi - r.hi;
        let dl = self.lo - r.lo;
        let d = ph + dl;
        let tl = d / b.hi;
        let (hi, lo) = fast_two_sum(th, tl);
        Dd { hi, lo }
    }
}

/// 2^k as an f64 for −1022 ≤ k ≤ 1023.
#[inline(always)]
pub fn pow2(k: i32) -> f64 {
    debug_assert!((-1022..=1023).contains(&k));
    f64::from_bits(((k + 1023) as u64) << 52)
}

/// ⌊log2 |x|⌋ of a normal nonzero f64.
#[inline(always)]
pub fn ilogb(x: f64) -> i32 {
    ((x.to_bits() >> 52) & 0x7ff) as i32 - 1023
}

/// Whether |x| is a power of two (x normal).
#[inline(always)]
pub fn is_pow2(x: f64) -> bool {
    x.to_bits() & ((1u64 << 52) - 1) == 0
}

/// The next f64 below x (x finite).
#[inline(always)]
pub fn next_down(x: f64) -> f64 {
    if x == 0.0 {
        return -f64::from_bits(1);
    }
    let b = x.to_bits();
    f64::from_bits(if x > 0.0 { b - 1 } else { b + 1 })
}

/// The next f64 above x (x finite).
#[inline(always)]
pub fn next_up(x: f64) -> f64 {
    -next_down(-x)
}

/// A value known up to a relative error: v = y·(1 + θ) with |θ| ≤ r for the exact y.
///
/// Composition rules (all r kept ≤ 2^−40 by the callers, so second-order terms r_a·r_b and
/// the rounding of the bound arithmetic itself — a few f64 operations, relative error ≤ 2^−50
/// together — are covered by the factor [`SLACK`] = 1 + 2^−38):
/// * product and quotient: r ≤ (r_a + r_b + OP)·SLACK, since (1+θa)(1+θb)(1+δ) and
///   (1+θa)/(1+θb)·(1+δ) differ from 1 by at most r_a + r_b + OP + O(r²);
/// * sum: |error| ≤ r_a|a| + r_b|b| + OP|a + b|, so r ≤ (r_a|a| + r_b|b|)/|a + b| + OP, with the
///   magnitudes taken from the computed values (off by a relative 2^−40 at most, in SLACK).
#[derive(Clone, Copy, Debug)]
pub struct Ev {
    /// The computed value.
    pub v: Dd,
    /// Bound on its relative error.
    pub r: f64,
}

/// Covers second-order terms and the rounding of the bound computations (see [`Ev`]).
pub const SLACK: f64 = 1.0 + 3.637978807091713e-12; // 1 + 2^-38

impl Ev {
    /// An exact value.
    #[inline(always)]
    pub fn exact(v: Dd) -> Ev {
        Ev { v, r: 0.0 }
    }
    /// Product.
    #[inline(always)]
    pub fn mul(self, b: Ev) -> Ev {
        Ev {
            v: self.v.mul(b.v),
            r: (self.r + b.r + OP) * SLACK,
        }
    }
    /// Product by an exact f64.
    #[inline(always)]
    pub fn mul_f(self, b: f64) -> Ev {
        Ev {
            v: self.v.mul_f(b),
            r: (self.r + OP) * SLACK,
        }
    }
    /// Quotient.
    #[inline(always)]
    pub fn div(self, b: Ev) -> Ev {
        Ev {
            v: self.v.div(b.v),
            r: (self.r + b.r + OP) * SLACK,
        }
    }
    /// Sum (any signs; cancellation shows up in r).
    #[inline(always)]
    pub fn add(self, b: Ev) -> Ev {
        let v = self.v.add(b.v);
        let num = self.r * self.v.hi.abs() + b.r * b.v.hi.abs();
        let r = if num == 0.0 {
            OP
        } else if v.hi == 0.0 {
            f64::INFINITY
        } else {
            (num / v.hi.abs() + OP) * SLACK
        };
        Ev { v, r }
    }
    /// Sum with an exact f64.
    #[inline(always)]
    pub fn add_f(self, b: f64) -> Ev {
        let v = self.v.add_f(b);
        let r = if self.r == 0.0 {
            OP
        } else if v.hi == 0.0 {
            f64::INFINITY
        } else {
            (self.r * self.v.hi.abs() / v.hi.abs() + OP) * SLACK
        };
        Ev { v, r }
    }
    /// −self.
    #[inline(always)]
    pub fn neg(self) -> Ev {
        Ev {
            v: self.v.neg(),
            r: self.r,
        }
    }
}

/// A real constant as a double-word: hi = RN(c), lo = RN(c − hi), so |c − hi − lo| ≤
/// 2^−53·|lo| ≤ 2^−106·|c|·(1 + 2^−52); we record r = 2^−104.
pub fn constant(c: &Float) -> Ev {
    let hi = c.to_f64();
    let lo = Float::with_val(c.prec(), c - hi).to_f64();
    Ev {
        v: Dd { hi, lo },
        r: 4.930380657631324e-32, // 2^-104
    }
}

/// A constant of the engine as a double-word within a relative 2^−103: the midpoint m of a
/// 300-bit enclosure no wider than 2^−200·|m| is within 2^−200 of it, and [`constant`] rounds
/// m within 2^−104 (1 + 2^−52).
pub fn double_word(value: &Real) -> Option<Ev> {
    let iv = value.enclose(300);
    let mid = Float::with_val(320, &iv.lo + &iv.hi) / 2u32;
    let width = Float::with_val(320, &iv.hi - &iv.lo);
    let limit = Float::with_val(320, mid.abs_ref()) >> 200u32;
    if !mid.is_normal() || width > limit {
        return None;
    }
    let e = constant(&mid);
    Some(Ev {
        v: e.v,
        r: 9.860761315262648e-32, // 2^-103
    })
}
