//! Softplus ln(1 + e^x) = max(x, 0) + ln(1 + e^(−|x|)); its derivative is σ(x), which the
//! engine evaluates exactly as sigmoid's forward role (same tails, same 1 − σ(−x) form), so
//! [`super::logistic::sigmoid`] decides it.
//!
//! With u = e^(−|x|) from [`decay`] and ln(1 + u) from [`log1p`]: x > 0 gives x + ln(1 + u), a
//! base x plus a positive delta; x < 0 gives ln(1 + u) alone, 2^k·m·(1 + O(u)) when u is below
//! 2^−898 (the dropped relative u/2 is far below [`DROPPED`]).

use super::common::{decay, near_side, widen, DROPPED, TAIL, TWO_M53};
use super::dd::{constant, Dd, Ev};
use super::decide::{engine_beside, engine_tiny, Outcome};
use super::log::log1p;
use super::logistic;
use super::series::horner;
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

/// Inputs with |x| below 2^−4 take [`band`].
pub const BAND: f64 = 0.0625;

/// ln 2 as a double-word constant (relative 2^−104).
fn ln2() -> Ev {
    static LN2: std::sync::OnceLock<Ev> = std::sync::OnceLock::new();
    *LN2.get_or_init(|| constant(&rug::Float::with_val(300, rug::float::Constant::Log2)))
}

/// ln cosh u = Σ_(n≥1) c_n·w^n, w = u²: c_2 … c_6 (−1/12, 1/45, −17/2520, 31/14175,
/// −691/935550; sympy's `series` of log(cosh(u)), each checked against mpmath's `taylor` at 60
/// digits), c_1 = 1/2 being added exactly apart.  In general c_n = 2^(2n)(2^(2n) − 1)·B_(2n)/
/// (2n·(2n)!) (ln cosh′ = tanh) = (−1)^(n+1)·2(2^(2n) − 1)·ζ(2n)/(2n·π^(2n)), so the signs
/// alternate and |c_(n+1)/c_n| = (4 + 3/(2^(2n) − 1))·ζ(2n + 2)/ζ(2n)·n/((n + 1)·π²) ≤ 5/π² <
/// 0.51 for every n ≥ 1 (ζ decreasing).
const LN_COSH: [f64; 5] = [
    -1.0 / 12.0,
    1.0 / 45.0,
    -17.0 / 2520.0,
    31.0 / 14175.0,
    -691.0 / 935550.0,
];

/// |c_7| = 10922/42567525, the first coefficient [`LN_COSH`] leaves out.
#[cfg(test)]
const LN_COSH_NEXT: f64 = 10922.0 / 42567525.0;

/// Relative bound of [`band`] per w = (x/2)²: 1.4·2^−53.
const BAND_REL: f64 = 1.4 * TWO_M53;

/// softplus(s·x) = ln 2 + u + ln cosh u with u = s·x/2, s = ±1, for 0 < |x| < 2^−4, with its
/// bound; used by log-sigmoid with s = −1 (ln σ(x) = −softplus(−x)).  ln 2 + u + w/2 + w²·p(w)
/// is summed in double-word, p = Σ_(k=2..6) c_k·w^(k−2) by Horner in binary64.
///
/// Exactness.  The fast path admits formats of precision ≤ 24 and emin ≥ −300 only (see
/// [`super::FastEvaluator::new`]), so x has at most 24 significant bits and |x| ≥ 2^−323: u =
/// x/2 is exact, w = u·u (at most 48 significant bits, ≥ 2^−648) is exact and normal, and w/2
/// is exact.
///
/// Truncation.  The series alternates with ratios ≤ 0.51·w < 2^−10 (w < 2^−10), so the part
/// left out is below |c_7|·w⁷.
///
/// Rounding of the rest.  Over w ≤ 2^−10, Σ|c_k|·w^(k−2) ≤ 1.00053·|p| (`band_constants`
/// below).  Horner of degree 4 (Higham, Accuracy and Stability of Numerical Algorithms, eq.
/// 5.3: γ_8; remembered) plus the coefficients' own roundings (one each) err by ≤ 9.001u·
/// 1.00053·|p|, u = 2^−53; RN(w·w) and the product by p̂ add one rounding each: the computed
/// rest is within 11.006u of w²·p, and |w²·p| ≤ 1.00027·w²/12.
///
/// Relative to the value V = ln 2 + u + ln cosh u ≥ ln 2 − 2^−5 > 0.6618 (ln cosh ≥ 0),
/// the rest's rounding is ≤ 1.3863u·w² and the truncation ≤ |c_7|·w⁷/0.6618 ≤ 0.0032u·w²
/// (w⁵ ≤ 2^−50): recorded as [`BAND_REL`]·w² = 1.4u·w² (constants from mpmath at 50 digits,
/// rechecked by `band_constants`).  The three DWPlusFP additions and ln 2's own 2^−104 are
/// carried by [`Ev::add_f`] (each partial sum is ≥ ln 2 − 2^−5, so none cancels).  Where w² or
/// the rest would be subnormal (only for |x| < 2^−254, below every binary32 input), the error
/// of those roundings is ≤ 2^−1074, relative ≤ 2^−1073, inside [`DROPPED`]; TwoSum stays exact
/// and the other roundings act on parts of V's low word, far above the subnormals.
#[inline(always)]
pub fn band(x: f64, sign: f64) -> Ev {
    let u = sign * x * 0.5;
    let w = u * u;
    let rest = w * w * horner(&LN_COSH, w);
    let v = ln2().add_f(u).add_f(w * 0.5).add_f(rest);
    widen(v, BAND_REL * (w * w) + DROPPED)
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

#[cfg(test)]
mod tests {
    use super::*;
    use rug::Float;

    /// The figures [`band`]'s bound quotes, at the band's edge w = 2^−10 (each grows with w):
    /// Σ|c_k|·w^(k−2) over |p| and over |c_2|, the rest's rounding and the truncation relative
    /// to V ≥ 0.6618, and the ratio bound 5/π² of the coefficients, checked on the table.
    #[test]
    fn band_constants() {
        let w = 2f64.powi(-10);
        let tail: f64 = (1..LN_COSH.len())
            .map(|k| LN_COSH[k].abs() * w.powi(k as i32))
            .sum();
        let c2 = LN_COSH[0].abs();
        assert!((c2 + tail) / (c2 - tail) <= 1.00053);
        assert!((c2 + tail) / c2 <= 1.00027);
        let u = TWO_M53;
        let rest = (1.0 + 9.001 * u * 1.00053) * (1.0 + u) * (1.0 + u) - 1.0;
        assert!(rest <= 11.006 * u * (1.0 + 1e-9));
        let v = std::f64::consts::LN_2 - 2f64.powi(-5);
        assert!(v > 0.6618);
        let rounding = 11.006 * 1.00027 / 12.0 / 0.6618;
        let truncation = LN_COSH_NEXT * w.powi(5) / 0.6618 / u;
        assert!(rounding <= 1.3863 && truncation <= 0.0032);
        assert!(rounding + truncation <= 1.4);
        let mut previous = 0.5;
        for (k, &c) in LN_COSH.iter().chain([LN_COSH_NEXT].iter()).enumerate() {
            assert!(c.abs() <= 0.51 * previous, "c_{}", k + 2);
            assert!((c < 0.0) == (k % 2 == 0), "sign of c_{}", k + 2);
            previous = c.abs();
        }
        let pi = std::hint::black_box(std::f64::consts::PI);
        assert!(5.0 / (pi * pi) < 0.51);
    }

    /// [`band`] against MPFR's ln(1 + e^(s·x)) at 400 bits: random binary32 inputs spread over
    /// every binade of 0 < |x| < 2^−4 (and its edge), both signs and both s, the error within
    /// the recorded bound.
    #[test]
    fn band_within_bound() {
        let mut state = 0x9e37_79b9_7f4a_7c15u64;
        let mut next = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            state >> 11
        };
        let mut inputs = vec![f32::from_bits(1), BAND as f32 * (1.0 - f32::EPSILON / 2.0)];
        for _ in 0..20_000 {
            // Binades 2^−149 … 2^−5, uniform significands.
            let e = -149 + (next() % 145) as i32;
            let m = 1.0 + (next() % (1 << 23)) as f64 / (1 << 23) as f64;
            inputs.push((m * 2f64.powi(e)) as f32);
        }
        let mut worst = 0.0f64;
        for x in inputs {
            let x = x as f64;
            assert!(x > 0.0 && x < BAND);
            for (x, sign) in [(x, 1.0), (-x, 1.0), (x, -1.0), (-x, -1.0)] {
                let b = band(x, sign);
                let exact = Float::with_val(400, sign * x).exp().ln_1p();
                let got = Float::with_val(400, b.v.hi) + b.v.lo;
                let err = Float::with_val(400, (got - &exact) / &exact).abs().to_f64();
                assert!(
                    err <= b.r,
                    "x = {x:e}, s = {sign}: error {err:e} > bound {:e}",
                    b.r
                );
                worst = worst.max(err / b.r);
            }
        }
        eprintln!("band: largest error / bound {worst:.3}");
    }
}
