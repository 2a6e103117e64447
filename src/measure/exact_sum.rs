//! Order-independent exact sums of binary64 values and of their squares.
//!
//! Every finite binary64 is an integer multiple of 2^−1074, and its square of 2^−2148, so both
//! sums are kept as big integers in those units: addition is exact, the result does not depend
//! on the order (or the thread) in which points arrive, and the final division rounds once.

use rug::{Integer, Rational};

/// Exact running sums Σv and Σv².
#[derive(Clone, Debug, Default)]
pub struct ExactSum {
    sum: Integer,
    squares: Integer,
    count: u64,
}

/// v = k·2^e with integer k, for finite v.
fn decompose(v: f64) -> (i64, i32) {
    let bits = v.to_bits();
    let field = ((bits >> 52) & 0x7ff) as i32;
    let mant = (bits & ((1u64 << 52) - 1)) as i64;
    let (k, e) = if field == 0 {
        (mant, -1074)
    } else {
        (mant | (1i64 << 52), field - 1075)
    };
    (if v.is_sign_negative() { -k } else { k }, e)
}

impl ExactSum {
    /// Adds a finite value.
    pub fn add(&mut self, v: f64) {
        debug_assert!(v.is_finite());
        let (k, e) = decompose(v);
        self.sum += Integer::from(k) << (e + 1074) as u32;
        self.squares += Integer::from(k).square() << (2 * e + 2148) as u32;
        self.count += 1;
    }
    /// Adds another sum.
    pub fn merge(&mut self, other: &ExactSum) {
        self.sum += &other.sum;
        self.squares += &other.squares;
        self.count += other.count;
    }
    /// Number of values.
    pub fn count(&self) -> u64 {
        self.count
    }
    /// Mean, correctly rounded to binary64 (0 for no values).
    pub fn mean(&self) -> f64 {
        if self.count == 0 {
            return 0.0;
        }
        let mean = Rational::from((self.sum.clone(), Integer::from(self.count))) >> 1074u32;
        // Through a 53-bit MPFR number: rounds to nearest (Rational::to_f64 truncates).
        rug::Float::with_val(53, &mean).to_f64()
    }
    /// Root mean square: the mean of squares is exact, the square root rounds it once more.
    pub fn rms(&self) -> f64 {
        if self.count == 0 {
            return 0.0;
        }
        let mean_sq = Rational::from((self.squares.clone(), Integer::from(self.count))) >> 2148u32;
        // The square root of the exact mean of squares at 200 bits, then to 53: the double
        // rounding could only show within 2^−200 relative of a binary64 tie.
        let root = rug::Float::with_val(200, &mean_sq).sqrt();
        rug::Float::with_val(53, &root).to_f64()
    }
}

#[cfg(test)]
mod tests {
    use super::ExactSum;

    #[test]
    fn exact_and_order_independent() {
        let values = [1.0, 1e-300, 0.5, 3.25, 1e300, -1e300, 2f64.powi(-1074)];
        let mut a = ExactSum::default();
        values.iter().for_each(|&v| a.add(v));
        let mut b = ExactSum::default();
        values.iter().rev().for_each(|&v| b.add(v));
        // Exact: 1 + 0.5 + 3.25 = 4.75 with the tiny terms far below half an ulp of 4.75/7.
        assert_eq!(a.mean(), b.mean());
        assert_eq!(a.mean(), (4.75 + 1e-300) / 7.0);
        let mut c = ExactSum::default();
        [3.0, 4.0].iter().for_each(|&v| c.add(v));
        assert_eq!(c.mean(), 3.5);
        // rms of 3 and 4 is sqrt(12.5).
        assert_eq!(c.rms(), 12.5f64.sqrt());
    }
}
