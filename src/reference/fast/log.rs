//! ln(1 + t) for a double-word t ∈ (0, 1.01] known up to a relative error, with a proven
//! relative bound (softplus, log-sigmoid).
//!
//! Input error.  For t > 0, d ln(1 + t)/dt · t/ln(1 + t) = t/((1 + t)·ln(1 + t)) ≤ 1, since
//! ln(1 + t) ≥ t/(1 + t); so a relative error r_t of t moves ln(1 + t) by a relative r_t at most
//! (up to second-order terms, covered by [`SLACK`]).  [`log1p`] computes ln(1 + T) for the
//! double-word value T itself and adds t.r at the end.
//!
//! Small T (T.hi < 2^−30): ln(1 + T) = T·(1 − T/2 + T²/3 − …), an alternating series with
//! decreasing terms: the factor is g = 1 + c, c = h·(−1/2 + h·RN(1/3)) in f64 (h = T.hi), added
//! to 1 exactly by TwoSum.  Left out or rounded: the series from T³/4 on (< 2^−92), the use of h
//! for T (|T − h| ≤ 2^−53·h moves T/2 by ≤ 2^−84), and c's three roundings and RN(1/3)
//! (≤ 4·2^−53·|c| ≤ 2^−82, |c| ≤ 2^−31): g is within 2^−81.5 of the factor, relative (g ≥
//! 1 − 2^−31), and the product T·g adds OP ([`Ev::mul`]).
//!
//! Other T: j = RN(64·h) ∈ {0, …, 65}, c_j = 1 + j/64 (exact), d = T − j/64 (DWPlusFP, relative
//! error ≤ OP), |d| ≤ 1/128 + 2^−52.  Then ln(1 + T) = ln c_j + ln(1 + d/c_j) and ln(1 + d/c_j) =
//! 2·atanh(s), s = d/(2c_j + d) (since (1 + s)/(1 − s) = 1 + d/c_j), computed with one DWPlusFP
//! and one DWDivDW2: |s| ≤ (2^−7 + 2^−52)/(2 − 2^−7 − 2^−52) < 2^−7.99, w = s² < 2^−15.9.
//! * s as a function of d has relative sensitivity 2c_j/(2c_j + d) ≤ 1.01, so the computed s is
//!   within (1.01 + 2)·OP·SLACK of the exact one; atanh(s) has relative sensitivity
//!   s/((1 − s²)·atanh s) ≤ 1/(1 − s²) ≤ 1.0001: 3.02·OP.
//! * 2·atanh(s) = 2s·P(w), P(w) = Σ_(n≥0) wⁿ/(2n + 1).  The terms from w²/5 on are summed in
//!   f64 as f = 1/5 + w/7 + … + w⁴/13 (Horner, positive terms: ≤ 12 roundings including the
//!   coefficients and the use of w.hi, relative error ≤ 12·2^−53 < 2^−49.4), entering P with
//!   weight w² ≤ 2^−31.8: ≤ 2^−49.4·2^−31.8/5 < 2^−83.5 of P ≥ 1.  The series left out is
//!   ≤ w⁷/15/(1 − w) < 2^−114.  P = 1 + w·(1/3 + w·f) in double-word: the inner sum ≈ 1/3 has
//!   relative error ≤ 1.3·OP (one product, one addition, 1/3 within 2^−104), damped by
//!   w/3 < 2^−17 in P, plus one final addition OP: ≤ 1.01·OP; errors of w itself (≤ 7.1·OP)
//!   enter damped by 2^−17 as well.  The product 2s·P adds OP.
//!
//! Altogether ln(1 + d/c_j) has relative error ≤ 5.1·OP + 2^−83.5 + 2^−114 < 2^−83, recorded
//! as [`CORE`] = 2^−82.  ln c_j is a double-word constant (2^−104, [`super::dd::constant`]);
//! the sum ln c_j + ln(1 + d/c_j) goes through [`Ev::add`], which bounds the cancellation when
//! d < 0 (|ln(1 + d/c_j)| < 0.0079 < ln c_j/1.9 for j ≥ 1).  For j = 0 the sum is the core alone.

use super::dd::{constant, Dd, Ev, SLACK};
use super::series::horner;
use rug::Float;
use std::sync::OnceLock;

/// Relative bound of ln(1 + d/c_j) (see the module comment).
const CORE: f64 = 2.0679515313825692e-25; // 2^-82

/// Relative bound of the small-argument factor g (see the module comment).
const SERIES: f64 = 4.1359030627651384e-25; // 2^-81

/// Below this the short series is used: 2^−30.
const SMALL: f64 = 9.313225746154785e-10;

/// 1/5, 1/7, …, 1/13: the f64 tail of P(w).
const TAIL: [f64; 5] = [1.0 / 5.0, 1.0 / 7.0, 1.0 / 9.0, 1.0 / 11.0, 1.0 / 13.0];

/// ln(1 + j/64) for j = 0..=65 and 1/3, as double-word constants computed with MPFR.
struct Tables {
    ln: [Ev; 66],
    third: Dd,
}

#[inline(always)]
fn tables() -> &'static Tables {
    static T: OnceLock<Tables> = OnceLock::new();
    T.get_or_init(|| {
        let prec = 300;
        let mut ln = [Ev::exact(Dd::new(0.0)); 66];
        for (j, slot) in ln.iter_mut().enumerate().skip(1) {
            let c = Float::with_val(prec, Float::with_val(prec, j) / 64u32 + 1u32).ln();
            *slot = constant(&c);
        }
        let third = constant(&Float::with_val(prec, Float::with_val(prec, 1) / 3u32)).v;
        Tables { ln, third }
    })
}

/// ln(1 + t) for t ∈ (0, 1.01] with t.v.hi ≥ 2^−900 (bound in the module comment).
#[inline(always)]
pub fn log1p(t: Ev) -> Ev {
    let h = t.v.hi;
    if h < SMALL {
        let c = h * (-0.5 + h * (1.0 / 3.0));
        let g = Ev {
            v: Dd::sum(1.0, c),
            r: SERIES,
        };
        return t.mul(g);
    }
    let tb = tables();
    let j = (h * 64.0).round_ties_even();
    let d = t.v.add_f(-j * 0.015625);
    let s = d.div(d.add_f(2.0 + j * 0.03125));
    let w = s.mul(s);
    let f = horner(&TAIL, w.hi);
    let p = Dd::new(f).mul(w).add(tb.third).mul(w).add_f(1.0);
    let core = Ev {
        v: s.mul(p).scale2(1),
        r: CORE,
    };
    let sum = if j == 0.0 {
        core
    } else {
        tb.ln[j as usize].add(core)
    };
    Ev {
        v: sum.v,
        r: (sum.r + t.r) * SLACK,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn log1p_matches_mpfr() {
        for &t in &[
            1e-300, 1e-20, 9e-10, 1e-9, 0.003, 0.0078125, 0.0079, 0.3, 0.5, 0.75, 0.99, 1.0,
        ] {
            let e = log1p(Ev::exact(Dd::new(t)));
            let want = Float::with_val(200, t).ln_1p();
            let got = Float::with_val(200, e.v.hi) + e.v.lo;
            let rel = (Float::with_val(200, &got - &want) / &want).abs().to_f64();
            assert!(rel <= e.r, "log1p({t}): rel {rel:e} > bound {:e}", e.r);
            assert!(e.r < 1e-23, "bound too loose at {t}: {:e}", e.r);
        }
    }
}
