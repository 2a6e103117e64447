//! Leading-term bands: near zero each function is an exactly known leading part (1/2 + x/4,
//! x, x/2 + βx²/4, …, added exactly by TwoSum) plus a small rest, summed in plain binary64
//! from its Taylor series and decided by [`Outcome::Leading`] — no exp, no double-word
//! polynomial.  Where the leading part sits exactly on a rounding boundary, the rest's sign
//! decides, as in the engine.
//!
//! Bound of a rest.  Every series used alternates in sign with terms decreasing in magnitude
//! (ratios given beside each table), so the truncation error is below the first omitted term.
//! The kept part is a polynomial Σ c_k w^k in w = (argument)² ≥ 0 with |c_(k+1)|·w ≤
//! |c_k|·2^−10 in every band (w ≤ 2^−12 and coefficient ratios at most 0.6), so Σ|c_k|w^k and
//! |Σ c_k w^k| are within a factor 1 ± 2^−9 of |c_0| (ELU's series runs in x rather than x²,
//! with the same ratio bound).  Horner in binary64 with at most seven steps errs by
//! γ_14·Σ|c_k|w^k (Higham, Accuracy and Stability of Numerical Algorithms, eq. 5.3;
//! remembered), the coefficients, each rounded once from its rational value, by u·Σ|c_k|w^k
//! more, u = 2^−53: together below 16u·|p|·1.01.  At most four more roundings
//! (the power of the argument, the products with it, a dropped low word of βx) bring the
//! computed rest within [`REST_REL`] = 32u of its exact value; a rest that is a sum of two
//! such parts takes the bound on the sum of their magnitudes.

use super::common::TWO_M53;
use super::dd::{two_sum, Dd, SLACK};
use super::decide::Outcome;

/// Relative bound of a rest computed as described in the module comment: 32·2^−53.
pub const REST_REL: f64 = 32.0 * TWO_M53;

/// Bands end at |argument| < 2^−6 (w ≤ 2^−12 for every polynomial below).
pub const BAND_LIMIT: f64 = 0.015625;

/// tanh u = u + u³·Σ_(n≥1) T_n·u^(2n−2): T_1 … T_6 (rational, from the Bernoulli numbers:
/// −1/3, 2/15, −17/315, 62/2835, −1382/155925, 21844/6081075; checked with mpmath's taylor).
/// Ratios |T_(n+1)/T_n| increase towards 4/π² ≈ 0.405 and stay below 0.41.
pub const TANH: [f64; 6] = [
    -1.0 / 3.0,
    2.0 / 15.0,
    -17.0 / 315.0,
    62.0 / 2835.0,
    -1382.0 / 155925.0,
    21844.0 / 6081075.0,
];

/// sech² u = tanh′ u = 1 − u² + u⁴·Σ_(n≥2) S_n·u^(2n−4), S_n = (2n + 1)·T_n: S_2 … S_7
/// (2/3, −17/45, 62/315, −1382/14175, 21844/467775, −929569/42567525).  Ratios below 0.6.
pub const SECH2: [f64; 6] = [
    2.0 / 3.0,
    -17.0 / 45.0,
    62.0 / 315.0,
    -1382.0 / 14175.0,
    21844.0 / 467775.0,
    -929569.0 / 42567525.0,
];

/// Σ_(n≥1) (n + 1)·T_n·v^(2n−2), the odd part of swish′ in v = βx/2 past its linear term:
/// 2T_1 … 6T_5 (−2/3, 2/5, −68/315, 62/567, −2764/51975).  Ratios at most 0.6.
pub const SWISH_SLOPE: [f64; 5] = [
    -2.0 / 3.0,
    2.0 / 5.0,
    -68.0 / 315.0,
    62.0 / 567.0,
    -2764.0 / 51975.0,
];

/// Φ(x) − 1/2 = φ(0)·x·Σ_(n≥0) (−1)ⁿ·wⁿ/(2ⁿ·n!·(2n + 1)), w = x² (integrating e^(−t²/2) term
/// by term): the coefficients of w¹ … w⁶ (−1/6, 1/40, −1/336, 1/3456, −1/42240, 1/599040).
/// Ratios (2n + 1)/(2(n + 1)(2n + 3)) ≤ 1/6.
pub const NORMAL_CDF: [f64; 6] = [
    -1.0 / 6.0,
    1.0 / 40.0,
    -1.0 / 336.0,
    1.0 / 3456.0,
    -1.0 / 42240.0,
    1.0 / 599040.0,
];

/// Φ(x) + x·φ(x) − 1/2 = φ(0)·x·Σ_(n≥0) (−1)ⁿ·(2n + 2)·wⁿ/(2ⁿ·n!·(2n + 1)) (the two series
/// added termwise): the coefficients of w¹ … w⁶ (−2/3, 3/20, −1/42, 5/1728, −1/3520, 7/299520).
/// Ratios at most 1/3.
pub const NORMAL_SLOPE: [f64; 6] = [
    -2.0 / 3.0,
    3.0 / 20.0,
    -1.0 / 42.0,
    5.0 / 1728.0,
    -1.0 / 3520.0,
    7.0 / 299520.0,
];

/// e^x − 1 − x − x²/2 = x³·Σ_(k≥0) x^k/(k + 3)!: 1/3! … 1/10!.  For x < 0 the terms
/// alternate; ratios |x|/(k + 4) ≤ 2^−10 for |x| ≤ 2^−8.
pub const EXPM1_CUBIC: [f64; 8] = [
    1.0 / 6.0,
    1.0 / 24.0,
    1.0 / 120.0,
    1.0 / 720.0,
    1.0 / 5040.0,
    1.0 / 40320.0,
    1.0 / 362880.0,
    1.0 / 3628800.0,
];

/// Σ c_k·w^k by Horner in plain binary64.
#[inline(always)]
pub fn horner(c: &[f64], w: f64) -> f64 {
    let mut p = 0.0;
    for &k in c.iter().rev() {
        p = p * w + k;
    }
    p
}

/// [`Outcome::Leading`] for y = lead + rest with lead = a + b (added exactly), rest computed
/// within `REST_REL`·`magnitude` plus `truncation`.
#[inline(always)]
pub fn leading(a: f64, b: f64, rest: f64, magnitude: f64, truncation: f64) -> Outcome {
    let (hi, lo) = two_sum(a, b);
    let bound = (magnitude * REST_REL + truncation) * SLACK;
    Outcome::Leading(Dd { hi, lo }, rest, bound)
}
