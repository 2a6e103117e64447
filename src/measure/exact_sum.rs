//! Order-independent exact sums of binary64 values and of their squares.
//!
//! Every finite binary64 v is k·2^x with an integer |k| < 2^53 and x = (exponent field) − 1075
//! (−1074 for subnormals), so the values sharing one exponent field add exactly as integers:
//! Σk fits an i128 for any count below 2^74, and Σk² (each < 2^106) fits a u128 plus a u64 carry
//! counter for any count below 2^86. The sums are kept per exponent field (no allocation per
//! value) and only [`ExactSum::mean`]/[`ExactSum::rms`] join them into big integers in units of
//! 2^−1074 and 2^−2148: the result is the exact sum whatever the order, the thread or the shard
//! in which values arrive, and the final division rounds once.

use rug::{Integer, Rational};

mod valid;

/// Σk, Σk² of the values with one exponent field.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
struct Slot {
    #[serde(with = "as_text")]
    sum: i128,
    #[serde(with = "as_text")]
    squares_lo: u128,
    squares_carries: u64,
}

/// Serde for 128-bit integers as decimal text: JSON readers (and `serde_json::Value`) hold
/// at most 64-bit integers exactly.
mod as_text {
    use serde::{Deserialize, Deserializer, Serializer};
    use std::fmt::Display;
    use std::str::FromStr;

    pub fn serialize<T: Display, S: Serializer>(v: &T, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(v)
    }

    pub fn deserialize<'de, T: FromStr, D: Deserializer<'de>>(d: D) -> Result<T, D::Error> {
        let text = String::deserialize(d)?;
        text.parse()
            .map_err(|_| serde::de::Error::custom(format!("not an integer: {text}")))
    }
}

/// Exponent fields a first value makes room for: 2^−40 to 2^30.
const TYPICAL: (usize, usize) = (1023 - 40, 1023 + 30);

/// Exact running sums Σv and Σv².
#[derive(Clone, Debug, Default, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct ExactSum {
    /// Slots for exponent fields `base..base + slots.len()`.
    slots: Vec<Slot>,
    base: usize,
    count: u64,
}

/// v = k·2^x with integer k, as (k, exponent field with subnormals at 1).
fn decompose(v: f64) -> (i64, usize) {
    let bits = v.to_bits();
    let field = ((bits >> 52) & 0x7ff) as usize;
    let mant = (bits & ((1u64 << 52) - 1)) as i64;
    let (k, field) = if field == 0 {
        (mant, 1)
    } else {
        (mant | (1i64 << 52), field)
    };
    (if v.is_sign_negative() { -k } else { k }, field)
}

impl Slot {
    #[inline(always)]
    fn add(&mut self, k: i64) {
        self.sum += k as i128;
        let sq = (k.unsigned_abs() as u128) * (k.unsigned_abs() as u128);
        let (lo, carry) = self.squares_lo.overflowing_add(sq);
        self.squares_lo = lo;
        self.squares_carries += carry as u64;
    }
    /// Adds k, n times: Σk grows by k·n (|k·n| < 2^85), Σk² by k²·n (< 2^138: its part above
    /// 2^128 goes to the carry counter).
    fn add_times(&mut self, k: i64, n: u64) {
        self.sum += k as i128 * n as i128;
        let sq = (k.unsigned_abs() as u128) * (k.unsigned_abs() as u128);
        let (high, low) = (sq >> 64, sq & u64::MAX as u128);
        // sq·n = high·n·2^64 + low·n, each product below 2^128.
        let upper = high * n as u128;
        let lower = low * n as u128;
        let (lo, c1) = self.squares_lo.overflowing_add(lower);
        let (lo, c2) = lo.overflowing_add((upper & u64::MAX as u128) << 64);
        self.squares_lo = lo;
        self.squares_carries += (upper >> 64) as u64 + c1 as u64 + c2 as u64;
    }
    fn merge(&mut self, other: &Slot) {
        self.sum += other.sum;
        let (lo, carry) = self.squares_lo.overflowing_add(other.squares_lo);
        self.squares_lo = lo;
        self.squares_carries += other.squares_carries + carry as u64;
    }
}

impl ExactSum {
    /// The slot of an exponent field, made if missing.
    #[inline(always)]
    fn slot(&mut self, field: usize) -> &mut Slot {
        // The common case inline (every value after the first lands in a slot made for it);
        // a field below `base` wraps to an index past the end.
        let i = field.wrapping_sub(self.base);
        if i < self.slots.len() {
            return &mut self.slots[i];
        }
        self.new_slot(field)
    }
    /// [`Self::slot`] for a field without a slot yet: room is made for it.
    #[cold]
    #[inline(never)]
    fn new_slot(&mut self, field: usize) -> &mut Slot {
        if self.slots.is_empty() {
            // Room at once for the exponents ulp errors usually take (2^−40 to 2^30), so
            // that a sum of typical errors never moves its slots.
            let (lo, hi) = (field.min(TYPICAL.0), field.max(TYPICAL.1));
            self.base = lo;
            self.slots = vec![Slot::default(); hi - lo + 1];
        }
        if field < self.base {
            let grow = self.base - field;
            self.slots
                .splice(0..0, std::iter::repeat(Slot::default()).take(grow));
            self.base = field;
        }
        let i = field - self.base;
        if i >= self.slots.len() {
            self.slots.resize(i + 1, Slot::default());
        }
        &mut self.slots[i]
    }
    /// Adds a finite value.
    #[inline(always)]
    pub fn add(&mut self, v: f64) {
        debug_assert!(v.is_finite());
        self.count += 1;
        let (k, field) = decompose(v);
        if k != 0 {
            self.slot(field).add(k);
        }
    }
    /// Adds a finite value n times (the sum of n equal values, exactly).
    pub fn add_times(&mut self, v: f64, n: u64) {
        debug_assert!(v.is_finite());
        self.count += n;
        let (k, field) = decompose(v);
        if k != 0 {
            self.slot(field).add_times(k, n);
        }
    }
    /// Adds another sum.
    pub fn merge(&mut self, other: &ExactSum) {
        for (i, s) in other.slots.iter().enumerate() {
            if *s != Slot::default() {
                self.slot(other.base + i).merge(s);
            }
        }
        self.count += other.count;
    }
    /// Number of values.
    pub fn count(&self) -> u64 {
        self.count
    }
    /// Σv in units of 2^−1074 and Σv² in units of 2^−2148, as big integers.
    pub fn totals(&self) -> (Integer, Integer) {
        let mut sum = Integer::new();
        let mut squares = Integer::new();
        for (i, s) in self.slots.iter().enumerate() {
            // x + 1074 = field − 1 ≥ 0 (subnormals sit at field 1).
            let shift = (self.base + i - 1) as u32;
            sum += Integer::from(s.sum) << shift;
            let sq = (Integer::from(s.squares_carries) << 128u32) + Integer::from(s.squares_lo);
            squares += sq << (2 * shift);
        }
        (sum, squares)
    }
    /// Mean, correctly rounded to binary64 (0 for no values).
    pub fn mean(&self) -> f64 {
        if self.count == 0 {
            return 0.0;
        }
        let (sum, _) = self.totals();
        let mean = Rational::from((sum, Integer::from(self.count))) >> 1074u32;
        // Through a 53-bit MPFR number: rounds to nearest (Rational::to_f64 truncates).
        rug::Float::with_val(53, &mean).to_f64()
    }
    /// Root mean square: the mean of squares is exact, the square root rounds it once more.
    pub fn rms(&self) -> f64 {
        if self.count == 0 {
            return 0.0;
        }
        let (_, squares) = self.totals();
        let mean_sq = Rational::from((squares, Integer::from(self.count))) >> 2148u32;
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

    #[test]
    fn slots_match_big_integer_sums_and_merge() {
        use rug::Integer;
        // Big-integer sums computed directly, value by value, as the reference.
        let values = [
            0.0,
            0.25,
            1.5,
            3.0e-5,
            7.0,
            2f64.powi(-1074),
            2f64.powi(-1022),
            1e300,
            0.1,
            0.1,
        ];
        let (mut sum, mut squares) = (Integer::new(), Integer::new());
        let mut whole = ExactSum::default();
        let (mut left, mut right) = (ExactSum::default(), ExactSum::default());
        for (i, &v) in values.iter().enumerate() {
            let q = rug::Rational::from_f64(v).unwrap();
            sum += Integer::from((q.clone() << 1074u32).numer());
            squares += Integer::from(((q.clone() * &q) << 2148u32).numer());
            whole.add(v);
            if i % 2 == 0 {
                left.add(v)
            } else {
                right.add(v)
            }
        }
        assert_eq!(whole.totals(), (sum, squares));
        right.merge(&left);
        assert_eq!(right.totals(), whole.totals());
        assert_eq!(right.count(), whole.count());
        // Carries of Σk²: 2^23 values of (2^53 − 1)·2^-52 overflow a u128 of squares.
        let mut many = ExactSum::default();
        let v = f64::from_bits(0x3fff_ffff_ffff_ffff);
        for _ in 0..(1u32 << 23) {
            many.add(v);
        }
        let k = Integer::from((1u64 << 53) - 1);
        let shift = 1074 - 52;
        assert_eq!(
            many.totals().1,
            (k.clone() * &k * (1u64 << 23)) << (2 * shift)
        );
        assert_eq!(many.totals().0, (k * (1u64 << 23)) << shift);
        // The same values added at once, and a mix of counts, equal the one-by-one sums.
        let mut at_once = ExactSum::default();
        at_once.add_times(v, 1 << 23);
        assert_eq!(at_once, many);
        let (mut one_by_one, mut batched) = (ExactSum::default(), ExactSum::default());
        for (i, &v) in values.iter().chain(&[-v, v, 1e-310]).enumerate() {
            let n = [1u64, 2, 3, 4095, 70_000, 1 << 32][i % 6];
            batched.add_times(v, n);
            for _ in 0..n.min(70_000) {
                one_by_one.add(v);
            }
            if n > 70_000 {
                let mut rest = ExactSum::default();
                rest.add_times(v, n - 70_000);
                one_by_one.merge(&rest);
            }
        }
        assert_eq!(batched.totals(), one_by_one.totals());
        assert_eq!(batched.count(), one_by_one.count());
    }
}
