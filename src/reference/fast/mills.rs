//! The Mills ratio R(a) = Q(a)/φ(a) for 2^−6 ≤ a < 64 from a table of Taylor expansions, each
//! cell built with MPFR the first time an input falls in it, with a per-cell error bound.
//!
//! R(a) = ∫₀^∞ e^(−at − t²/2) dt (Laplace transform form of Q(a)/φ(a)), so R′ = aR − 1 and,
//! by Leibniz, the Taylor coefficients T_k = R^(k)(c)/k! at a centre c satisfy T_1 = c·T_0 − 1
//! and (k + 1)·T_(k+1) = c·T_k + T_(k−1).  Also |R^(k)(ξ)|/k! = (1/k!)∫ t^k e^(−ξt − t²/2) dt
//! decreases in ξ and is at most min(1/ξ^(k+1), G_k), G_k = (1/k!)∫₀^∞ t^k e^(−t²/2) dt =
//! 2^((k−1)/2)·Γ((k + 1)/2)/k!; and R is convex and decreasing, so R ≥ T_0 − |T_1|·δ on the
//! cell.
//!
//! Cells: each binade [2^e, 2^(e+1)) of a is cut into 2^10 cells of width 2^(e−10), centre c
//! (the cell's midpoint, 12 significant bits), half-width δ = 2^(e−11), so h = a − c is exact
//! (a has at most 24 significant bits) and so is h².  R(a) = (T_0 + T_1·h) + h²·Σ_(k=2..8)
//! T_k·h^(k−2): the first two terms in double-word arithmetic, the rest in binary64 Horner.
//! The error of one cell's evaluation is at most, with S = Σ_(k≥2) |T_k|·δ^k:
//! * 4·OP·(|T_0| + |T_1|δ + S) for the double-word product and two sums, and 2^−104 of
//!   |T_0| + |T_1|δ for their coefficients' rounding (see [`super::dd::constant`]);
//! * 16u·S for the Horner part (γ_14 over six steps on Σ|T_k||h|^k, u for each coefficient's
//!   rounding to binary64, u for the product by h²; u = 2^−53);
//! * δ⁹·min(1/(c − δ)^10, G_9) for the truncation after T_8 (Lagrange's remainder);
//! * Σ E_k·δ^k for MPFR's own errors, E_k tracked through the recurrence at 160 bits: R(c)
//!   for c < 4 from erfc(c/√2)·√(π/2)·e^(c²/2) within 2^−140 relative (eleven correctly
//!   rounded operations, the erfc's argument error amplified by at most c² < 16), for c ≥ 4
//!   from the bracketed continued fraction of [`continued_fraction`]; then each step
//!   E_(k+1) ≤ (c·E_k + E_(k−1))/(k + 1) plus its own roundings.  The recurrence cancels
//!   (T_k alternate in sign), but an error in T_0 propagates as a multiple of the homogeneous
//!   solution e^(a²/2), which grows by at most e^(cδ) across a cell: the tracked Σ E_k·δ^k
//!   stays near E_0.
//!
//! Divided by the lower bound of R on the cell, that is the cell's relative bound.

use super::dd::{ilogb, pow2, Dd, Ev, OP, SLACK};
use super::series::horner;
use rug::float::Constant;
use rug::Float;
use std::sync::OnceLock;

/// The first binade of the table, 2^−6.
pub const FIRST: i32 = -6;
/// Binades covered: [2^−6, 2^6).
const BINADES: i32 = 12;
/// log2 of the cells per binade.
const CELL_BITS: u32 = 10;
/// The expansion is kept to T_8.
const ORDER: usize = 8;
/// MPFR precision of a cell's construction.
const PRECISION: u32 = 160;

/// One cell's expansion.
struct Cell {
    t0: Dd,
    t1: Dd,
    /// T_2 … T_8.
    tail: [f64; ORDER - 1],
    /// Relative error bound of an evaluation in the cell.
    rel: f64,
}

fn cells() -> &'static [OnceLock<Cell>] {
    static CELLS: OnceLock<Vec<OnceLock<Cell>>> = OnceLock::new();
    CELLS.get_or_init(|| {
        (0..(BINADES as usize) << CELL_BITS)
            .map(|_| OnceLock::new())
            .collect()
    })
}

/// Centre and half-width of cell `j` of binade `e`.
#[inline(always)]
fn centre(e: i32, j: usize) -> (f64, f64) {
    let width = pow2(e - CELL_BITS as i32);
    (pow2(e) + (j as f64 + 0.5) * width, width * 0.5)
}

/// A double-word from an MPFR number (nearest hi, nearest lo).
fn double_word(v: &Float) -> Dd {
    let hi = v.to_f64();
    let lo = Float::with_val(v.prec(), v - hi).to_f64();
    Dd { hi, lo }
}

/// R(c) for c ≥ 4 and a bound on its absolute error, by Laplace's continued fraction
/// R = 1/(c + 1/(c + 2/(c + …))) at [`PRECISION`] bits: its partial numerators and denominators
/// are positive, so the backward recurrences t_(k−1) = k/(c + t_k) from t_N = 0 and from
/// t_N = N/c + 1 > N/c bracket R (the tail t_N lies in (0, N/c)); each step errs by at most
/// two roundings relative, so the error is below the bracket's width plus (4N + 4)·2^−P·R.
/// N doubles from 32 until the width is below 2^(20−P)·R.  (MPFR's erfc is slow out there.)
fn continued_fraction(c: &Float) -> (Float, f64) {
    let p = PRECISION;
    let eval = |n: u32, tail: f64| {
        let mut t = Float::with_val(p, tail);
        for k in (1..=n).rev() {
            t = Float::with_val(p, k) / Float::with_val(p, c + &t);
        }
        Float::with_val(p, c + &t).recip()
    };
    let mut n = 32u32;
    loop {
        let c64 = c.to_f64();
        let low = eval(n, 0.0);
        let high = eval(n, n as f64 / c64 + 1.0);
        let width = Float::with_val(p, &low - &high).abs().to_f64();
        let r = low.to_f64();
        if width < r * pow2(20 - p as i32) || n >= 1 << 16 {
            let error = width + r * (4 * n + 4) as f64 * pow2(-(p as i32)) * 1.01;
            return (low, error);
        }
        n *= 2;
    }
}

/// Builds cell `j` of binade `e` (see the module comment for the bound).
fn build(e: i32, j: usize) -> Cell {
    let (c, delta) = centre(e, j);
    let p = PRECISION;
    let u = f64::EPSILON * 0.5;
    let eps = pow2(-(p as i32));
    let cf = Float::with_val(p, c);
    let (r0, e0) = if c < 4.0 {
        let sqrt2 = Float::with_val(p, 2u32).sqrt();
        let erfc = Float::with_val(p, &cf / &sqrt2).erfc();
        let half_pi = Float::with_val(p, Constant::Pi) / 2u32;
        let gauss = Float::with_val(p, Float::with_val(p, &cf * &cf) / 2u32).exp();
        let r0 = erfc * half_pi.sqrt() * gauss;
        let e0 = r0.to_f64() * pow2(20 - p as i32);
        (r0, e0)
    } else {
        continued_fraction(&cf)
    };
    let mut t = vec![r0.clone(), Float::with_val(p, &cf * &r0) - 1u32];
    let mut err = vec![e0];
    err.push(c * err[0] + 2.0 * eps * (c * t[0].to_f64() + 1.0));
    for k in 1..=ORDER {
        let next = (Float::with_val(p, &cf * &t[k]) + &t[k - 1]) / (k as u32 + 1);
        let (tk, tk1) = (t[k].to_f64().abs(), t[k - 1].to_f64().abs());
        let e_next = (c * err[k] + err[k - 1] + 2.0 * eps * (c * tk + tk1)) / (k as f64 + 1.0)
            + eps * next.to_f64().abs();
        err.push(e_next * (1.0 + 1e-10));
        t.push(next);
    }
    let mag: Vec<f64> = t.iter().map(|v| v.to_f64().abs()).collect();
    let powers: Vec<f64> = (0..=ORDER + 1).map(|k| delta.powi(k as i32)).collect();
    let series: f64 = (2..=ORDER).map(|k| mag[k] * powers[k]).sum();
    let lead = mag[0] + mag[1] * delta;
    let g9 = 16.0 * 24.0 / 362_880.0; // 2^4·Γ(5)/9!
    let truncation = powers[ORDER + 1] * (1.0 / (c - delta).powi(ORDER as i32 + 2)).min(g9);
    let mpfr: f64 = (0..=ORDER).map(|k| err[k] * powers[k]).sum();
    let error = 4.0 * OP * (lead + series)
        + 4.930380657631324e-32 * lead
        + 16.0 * u * series
        + truncation
        + mpfr;
    let low = (mag[0] - mag[1] * delta) * (1.0 - 1e-12);
    let mut tail = [0.0; ORDER - 1];
    for (slot, v) in tail.iter_mut().zip(&t[2..=ORDER]) {
        *slot = v.to_f64();
    }
    Cell {
        t0: double_word(&t[0]),
        t1: double_word(&t[1]),
        tail,
        rel: error / low * SLACK,
    }
}

/// R(a) with its relative bound, for 2^−6 ≤ a < 2^6 (None outside).
#[inline(always)]
pub fn ratio(a: f64) -> Option<Ev> {
    let e = ilogb(a);
    if !(FIRST..FIRST + BINADES).contains(&e) {
        return None;
    }
    let j = ((a.to_bits() >> (52 - CELL_BITS)) & ((1 << CELL_BITS) - 1)) as usize;
    let index = ((e - FIRST) as usize) << CELL_BITS | j;
    let cell = cells()[index].get_or_init(|| build(e, j));
    let (c, _) = centre(e, j);
    let h = a - c;
    let rest = horner(&cell.tail, h) * (h * h);
    let v = cell.t0.add(cell.t1.mul_f(h)).add_f(rest);
    Some(Ev { v, r: cell.rel })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// R(a) = erfc(a/√2)·√(π/2)·e^(a²/2) at 400 bits (MPFR's erfc, independent of the cells'
    /// recurrence and continued fraction).
    fn reference(a: f64) -> Float {
        let p = 400;
        let x = Float::with_val(p, a);
        let erfc = Float::with_val(p, &x / Float::with_val(p, 2u32).sqrt()).erfc();
        let half_pi = Float::with_val(p, Constant::Pi) / 2u32;
        let gauss = Float::with_val(p, Float::with_val(p, &x * &x) / 2u32).exp();
        erfc * half_pi.sqrt() * gauss
    }

    /// Every binade, cells at both ends and inside, points at the cell edges and centres: the
    /// evaluation lies within its bound of the 400-bit value, and the bound is below 2^−70.
    #[test]
    fn ratio_within_its_bound() {
        let mut worst = 0.0f64;
        for e in FIRST..FIRST + BINADES {
            for j in [0usize, 1, 333, 512, 1022, 1023] {
                let (c, delta) = centre(e, j);
                for a in [
                    c - delta,
                    c - delta * 0.37,
                    c,
                    c + delta * 0.81,
                    c + delta * 0.999,
                ] {
                    let a = a as f32 as f64;
                    let Some(r) = ratio(a) else { continue };
                    let exact = reference(a);
                    let got = Float::with_val(400, r.v.hi) + r.v.lo;
                    let error = Float::with_val(400, &got - &exact).abs().to_f64();
                    let bound = r.r * exact.to_f64();
                    assert!(
                        error <= bound,
                        "a = {a}: error {error:e} over bound {bound:e}"
                    );
                    worst = worst.max(error / bound);
                    assert!(r.r < pow2(-70), "a = {a}: bound {:e}", r.r);
                }
            }
        }
        assert!(ratio(pow2(FIRST) * 0.99).is_none() && ratio(64.0).is_none());
        eprintln!("largest error / bound: {worst:.3e}");
    }
}
