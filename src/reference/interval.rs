//! Closed intervals of MPFR numbers with outward rounding.
//!
//! Every operation rounds its lower end towards −∞ and its upper end towards +∞, and MPFR's
//! functions are correctly rounded in both directions, so the true value of any formula built
//! from these operations lies inside the interval it returns — including after MPFR overflow
//! (+∞ upward, largest finite downward) and underflow (0 downward, smallest positive upward).
//! This is what makes the Ziv loop in [`super::engine`] rigorous without a hand-derived error
//! bound per formula: the bound is carried along with the value.

use rug::float::{Constant, Round};
use rug::{Float, Rational};
use std::cmp::Ordering;

/// An interval [lo, hi] known to contain a real number.
#[derive(Clone, Debug)]
pub struct Ival {
    /// Lower end.
    pub lo: Float,
    /// Upper end.
    pub hi: Float,
}

fn down<T>(prec: u32, value: T) -> Float
where
    Float: rug::ops::AssignRound<T, Round = Round, Ordering = Ordering>,
{
    Float::with_val_round(prec, value, Round::Down).0
}

fn up<T>(prec: u32, value: T) -> Float
where
    Float: rug::ops::AssignRound<T, Round = Round, Ordering = Ordering>,
{
    Float::with_val_round(prec, value, Round::Up).0
}

fn min(a: Float, b: Float) -> Float {
    if b < a {
        b
    } else {
        a
    }
}

fn max(a: Float, b: Float) -> Float {
    if b > a {
        b
    } else {
        a
    }
}

impl Ival {
    /// The exact point `x` (kept at its own precision, so nothing is rounded).
    pub fn point(x: &Float) -> Ival {
        Ival {
            lo: x.clone(),
            hi: x.clone(),
        }
    }
    /// The smallest interval of `prec`-bit numbers around a rational.
    pub fn rational(q: &Rational, prec: u32) -> Ival {
        Ival {
            lo: down(prec, q),
            hi: up(prec, q),
        }
    }
    /// The point `n` (an integer, exact).
    pub fn int(n: i32) -> Ival {
        Ival::point(&Float::with_val(64, n))
    }
    /// An enclosure of π.
    pub fn pi(prec: u32) -> Ival {
        Ival {
            lo: down(prec, Constant::Pi),
            hi: up(prec, Constant::Pi),
        }
    }
    /// [lo, hi] from two ends; the caller guarantees lo ≤ hi.
    pub fn new(lo: Float, hi: Float) -> Ival {
        debug_assert!(
            lo.partial_cmp(&hi) != Some(Ordering::Greater),
            "inverted interval [{lo}, {hi}]"
        );
        Ival { lo, hi }
    }
    /// Whether the interval is a single point (±0 count as one point).
    pub fn is_point(&self) -> bool {
        self.lo == self.hi
    }
    /// Whether every element is > 0.
    pub fn is_positive(&self) -> bool {
        self.lo > 0
    }
    /// Whether every element is < 0.
    pub fn is_negative(&self) -> bool {
        self.hi < 0
    }
    /// −self.
    pub fn neg(&self) -> Ival {
        Ival::new(
            Float::with_val(self.hi.prec(), -&self.hi),
            Float::with_val(self.lo.prec(), -&self.lo),
        )
    }
    /// self + other.
    pub fn add(&self, other: &Ival, prec: u32) -> Ival {
        Ival::new(
            down(prec, &self.lo + &other.lo),
            up(prec, &self.hi + &other.hi),
        )
    }
    /// self − other.
    pub fn sub(&self, other: &Ival, prec: u32) -> Ival {
        Ival::new(
            down(prec, &self.lo - &other.hi),
            up(prec, &self.hi - &other.lo),
        )
    }
    /// self · other (all four end products; 0·∞ is avoided by callers).
    pub fn mul(&self, other: &Ival, prec: u32) -> Ival {
        if self.lo >= 0 && other.lo >= 0 {
            return Ival::new(
                down(prec, &self.lo * &other.lo),
                up(prec, &self.hi * &other.hi),
            );
        }
        let pairs = [
            (&self.lo, &other.lo),
            (&self.lo, &other.hi),
            (&self.hi, &other.lo),
            (&self.hi, &other.hi),
        ];
        let lo = pairs
            .iter()
            .map(|(a, b)| down(prec, *a * *b))
            .reduce(min)
            .unwrap();
        let hi = pairs
            .iter()
            .map(|(a, b)| up(prec, *a * *b))
            .reduce(max)
            .unwrap();
        Ival::new(lo, hi)
    }
    /// self / other; `other` must not contain 0 (an interval containing 0 gives (−∞, +∞)).
    pub fn div(&self, other: &Ival, prec: u32) -> Ival {
        if !(other.lo > 0 || other.hi < 0) {
            return Ival::new(
                Float::with_val(prec, f64::NEG_INFINITY),
                Float::with_val(prec, f64::INFINITY),
            );
        }
        let pairs = [
            (&self.lo, &other.lo),
            (&self.lo, &other.hi),
            (&self.hi, &other.lo),
            (&self.hi, &other.hi),
        ];
        let lo = pairs
            .iter()
            .map(|(a, b)| down(prec, *a / *b))
            .reduce(min)
            .unwrap();
        let hi = pairs
            .iter()
            .map(|(a, b)| up(prec, *a / *b))
            .reduce(max)
            .unwrap();
        Ival::new(lo, hi)
    }
    /// self · q for an exact rational q.
    pub fn mul_rational(&self, q: &Rational, prec: u32) -> Ival {
        match q.cmp0() {
            Ordering::Equal => Ival::int(0),
            Ordering::Greater => Ival::new(down(prec, &self.lo * q), up(prec, &self.hi * q)),
            Ordering::Less => Ival::new(down(prec, &self.hi * q), up(prec, &self.lo * q)),
        }
    }
    /// self · 2^k, exact.
    pub fn scale2(&self, k: i32) -> Ival {
        Ival::new(
            Float::with_val(self.lo.prec(), &self.lo << k),
            Float::with_val(self.hi.prec(), &self.hi << k),
        )
    }
    /// An increasing function applied to both ends.
    fn increasing<'a, F, T>(&'a self, prec: u32, f: F) -> Ival
    where
        F: Fn(&'a Float) -> T,
        Float: rug::ops::AssignRound<T, Round = Round, Ordering = Ordering>,
    {
        Ival::new(down(prec, f(&self.lo)), up(prec, f(&self.hi)))
    }
    /// A decreasing function applied to both ends.
    fn decreasing<'a, F, T>(&'a self, prec: u32, f: F) -> Ival
    where
        F: Fn(&'a Float) -> T,
        Float: rug::ops::AssignRound<T, Round = Round, Ordering = Ordering>,
    {
        Ival::new(down(prec, f(&self.hi)), up(prec, f(&self.lo)))
    }
    /// e^self.
    pub fn exp(&self, prec: u32) -> Ival {
        self.increasing(prec, |x| x.exp_ref())
    }
    /// e^self − 1.
    pub fn exp_m1(&self, prec: u32) -> Ival {
        self.increasing(prec, |x| x.exp_m1_ref())
    }
    /// ln(1 + self), for self > −1.
    pub fn ln_1p(&self, prec: u32) -> Ival {
        self.increasing(prec, |x| x.ln_1p_ref())
    }
    /// ln(self), for self > 0.
    pub fn ln(&self, prec: u32) -> Ival {
        self.increasing(prec, |x| x.ln_ref())
    }
    /// tanh(self).
    pub fn tanh(&self, prec: u32) -> Ival {
        self.increasing(prec, |x| x.tanh_ref())
    }
    /// erf(self).
    pub fn erf(&self, prec: u32) -> Ival {
        self.increasing(prec, |x| x.erf_ref())
    }
    /// erfc(self) = 1 − erf(self), accurate where erf is close to 1.
    pub fn erfc(&self, prec: u32) -> Ival {
        self.decreasing(prec, |x| x.erfc_ref())
    }
    /// √self, for self ≥ 0.
    pub fn sqrt(&self, prec: u32) -> Ival {
        self.increasing(prec, |x| x.sqrt_ref())
    }
    /// sech(self) = 1/cosh(self), for self ≥ 0 (decreasing there).
    pub fn sech_nonneg(&self, prec: u32) -> Ival {
        debug_assert!(self.lo >= 0);
        self.decreasing(prec, |x| x.sech_ref())
    }
    /// self².
    pub fn square(&self, prec: u32) -> Ival {
        if self.lo >= 0 {
            Ival::new(
                down(prec, self.lo.square_ref()),
                up(prec, self.hi.square_ref()),
            )
        } else if self.hi <= 0 {
            Ival::new(
                down(prec, self.hi.square_ref()),
                up(prec, self.lo.square_ref()),
            )
        } else {
            let top = max(
                up(prec, self.lo.square_ref()),
                up(prec, self.hi.square_ref()),
            );
            Ival::new(Float::with_val(prec, 0), top)
        }
    }
    /// Midpoint approximation rounded to the nearest binary64.
    pub fn approx_f64(&self) -> f64 {
        let mid =
            Float::with_val(self.lo.prec().max(self.hi.prec()) + 1, &self.lo + &self.hi) / 2u32;
        mid.to_f64()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn operations_enclose_the_true_value() {
        let x = Ival::rational(&Rational::from((1, 3)), 64);
        assert!(x.lo < x.hi);
        let y = x.mul(&Ival::int(3), 64);
        assert!(y.lo <= 1 && y.hi >= 1);
        let e = Ival::int(1).exp(64);
        let reference = Float::with_val(256, 1).exp();
        assert!(e.lo <= reference && e.hi >= reference);
        let neg = Ival::int(-2).mul(&x, 64);
        assert!(neg.hi < 0 && neg.lo < neg.hi);
        let q = Ival::int(1).div(
            &Ival::new(Float::with_val(8, -1), Float::with_val(8, 1)),
            64,
        );
        assert!(q.lo.is_infinite() && q.hi.is_infinite());
    }

    #[test]
    fn underflow_and_overflow_stay_bounds() {
        let big = Ival::point(&Float::with_val(64, 1e30));
        let e = big.neg().exp(64);
        assert!(e.lo.is_zero() && e.hi > 0);
        let e = big.exp(64);
        assert!(e.lo.is_finite() && e.hi.is_infinite());
    }
}
