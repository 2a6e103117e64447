//! e^a and e^a − 1 for a double-word a, with proven relative error bounds.
//!
//! Range reduction: k = round(a·64/ln 2), a = k·(ln 2)/64 + r, e^a = 2^(k div 64)·2^((k mod
//! 64)/64)·e^r.  (ln 2)/64 is split as C1 + C2 + C3 (+ ρ): C1 has 22 significant bits, so k·C1 is
//! exact for |k| < 2^31; k·C2 is formed exactly by TwoProd; k·C3 is one f64 product (error ≤
//! 2^−53·|k·C3|); the residual |ρ| ≤ [`Tables::rho`] is bounded at start-up with MPFR.  The
//! sums forming r are double-word additions, each in error by at most OP times the sum of its
//! operands' magnitudes.  So |r_computed − r| ≤ ε_r, computed at run time as
//! 2^−98·(|a.hi − kC1| + |a.lo| + |kC2| + |kC3|) + 2^−52·|kC3| + |k|·ρ (2^−98 > 3·OP covers the
//! three additions, relative to the operands' sum; 2^−52·|kC3| the rounding of k·C3), and
//! e^(r_computed) = e^r·(1 + θ) with |θ| ≤ e^ε_r − 1 ≤ 1.01·ε_r.
//!
//! e^r, |r| ≤ (ln 2)/128 + ε_r < 0.00542: Taylor polynomial of degree 11; the remainder is
//! ≤ |r|^12/12!·e^|r| < 2^−119.  Degrees 6..11 are summed in f64 as q (≈ 1/720): Horner with
//! positive coefficients and |r| tiny has relative error ≤ 2^−47 (γ_12 plus coefficient
//! roundings plus using r.hi for r), and enters multiplied by r^6/720 < 2^−54, i.e. ≤ 2^−101.
//! Degrees 0..5 run in double-word Horner: each step h_i = c_i + r·h_(i+1) (one fused step,
//! within OP; see [`step`]) damps the inner relative error by |r·h_(i+1)/h_i| ≤ 0.01, so the
//! total is ≤ 1.02·(2·OP + 2^−104) < 2^−98.
//! The table values 2^(j/64) carry 2^−104 (see [`super::dd::constant`]) and one more product
//! OP.  Altogether [`exp`] returns a relative bound EXP_BASE + 1.01·ε_r, EXP_BASE = 2^−96 ≥
//! 2^−98 + 2^−101 + 2^−119 + 2^−104 + OP (with slack).

use super::dd::{constant, fast_two_sum, two_prod, two_sum, Dd, Ev, SLACK};
use rug::float::Constant;
use rug::Float;
use std::sync::OnceLock;

/// Base relative error of [`exp`] before the reduction error (see the module comment).
const EXP_BASE: f64 = 1.262177448353619e-29; // 2^-96

/// Constants computed once with MPFR at 300 bits.
pub struct Tables {
    /// 2^(j/64), j = 0..63.
    pub pow: [Dd; 64],
    /// (ln 2)/64 = C1 + C2 + C3 + ρ.
    c1: f64,
    c2: f64,
    c3: f64,
    /// Upper bound on |ρ|.
    rho: f64,
    /// 64/ln 2 (any approximation: it only picks k).
    inv: f64,
    /// 1/n! for n = 0..=24 (double-word, relative error ≤ 2^−104 each).
    pub fact_inv: [Dd; 25],
    /// 1/√(2π).
    pub inv_sqrt_2pi: Ev,
}

/// The shared tables.
#[inline(always)]
pub fn tables() -> &'static Tables {
    static T: OnceLock<Tables> = OnceLock::new();
    T.get_or_init(|| {
        let prec = 300;
        let mut pow = [Dd::new(0.0); 64];
        for (j, slot) in pow.iter_mut().enumerate() {
            let v = Float::with_val(prec, Float::with_val(prec, j) / 64u32).exp2();
            *slot = constant(&v).v;
        }
        let l = Float::with_val(prec, Constant::Log2) / 64u32;
        // C1: l truncated to 22 significant bits.
        let c1 =
            Float::with_val(22, Float::with_val_round(22, &l, rug::float::Round::Zero).0).to_f64();
        let rest = Float::with_val(prec, &l - c1);
        let c2 = rest.to_f64();
        let rest = Float::with_val(prec, &rest - c2);
        let c3 = rest.to_f64();
        let rest = Float::with_val(prec, &rest - c3);
        let rho = rest.abs().to_f64() * 2.0 + f64::MIN_POSITIVE;
        let mut fact_inv = [Dd::new(0.0); 25];
        let mut f = Float::with_val(prec, 1);
        for (n, slot) in fact_inv.iter_mut().enumerate() {
            if n > 0 {
                f *= n as u32;
            }
            *slot = constant(&Float::with_val(prec, f.clone().recip())).v;
        }
        let pi2 = Float::with_val(prec, Constant::Pi) * 2u32;
        Tables {
            pow,
            c1,
            c2,
            c3,
            rho,
            inv: 64.0 / std::f64::consts::LN_2,
            fact_inv,
            inv_sqrt_2pi: constant(&pi2.sqrt().recip()),
        }
    })
}

/// e^a = 2^k·m for a double-word a with |a.hi| ≤ 2^24: returns (m with its relative bound, k),
/// m ∈ [0.99, 2.01].  Callers scale m by 2^k themselves.
#[inline(always)]
pub fn exp(a: Dd) -> (Ev, i32) {
    let t = tables();
    let kf = (a.hi * t.inv).round_ties_even();
    let k = kf as i64;
    // a.hi − k·C1: k·C1 is exact (22 + 31 bits), the difference is formed exactly by TwoSum.
    let (s1h, s1l) = two_sum(a.hi, -(kf * t.c1));
    let p2 = two_prod(kf, t.c2);
    let p3 = kf * t.c3;
    let r = Dd { hi: s1h, lo: s1l }
        .add_f(a.lo)
        .sub(Dd { hi: p2.0, lo: p2.1 })
        .add_f(-p3);
    let eps_r = 3.155443620884047e-30 // 2^-98
        * (s1h.abs() + a.lo.abs() + p2.0.abs() + p3.abs())
        + p3.abs() * 2.220446049250313e-16 // the rounding of k·C3 (2^-52 ≥ u)
        + kf.abs() * t.rho;
    let er = exp_small(r);
    let j = k.rem_euclid(64) as usize;
    let e = k.div_euclid(64) as i32;
    let m = er.mul(t.pow[j]);
    (
        Ev {
            v: m,
            r: (EXP_BASE + 1.01 * eps_r) * SLACK,
        },
        e,
    )
}

/// Relative bound of [`exp_quick`] (2^−63.4, its comment's total 2^−63.6 rounded up).
pub const QUICK_EXP_REL: f64 = 8.37e-20;

/// e^w = 2^e·(h + l)·(1 + θ), |θ| ≤ [`QUICK_EXP_REL`], for a double-word w (|w.lo| ≤
/// ulp(w.hi)/2) with |w.hi| < 64: a first stage of about 66 bits, for callers that only
/// need to place y between binary64 midpoints and fall back to [`exp`] otherwise.  Returns
/// (h, l, e) with h ∈ [0.98, 2.02], |l| ≤ 2^−13.2·h (not normalized).
///
/// Bound, with u = 2^−53 and the reduction of the module comment (|k| ≤ 64·64/ln 2 + 1 < 2^13):
/// * k·C1 is exact (22 + 13 bits) and TwoSum(w_h, −k·C1) = r_h + s_l exactly; |r_h| ≤ (ln 2)/128
///   + |k|·|C2 + C3 + ρ| < 0.0055 (|C2| < 2^−28, the 22-bit truncation's remainder).
/// * r_l = RN(−k·C2 + RN(−k·C3 + RN(s_l + w_l))): |s_l + w_l| ≤ u·0.0055 + u·64 < 2^−46.9,
///   |k·C3| < 2^13·2^−81, |k·C2| < 2^−15, so |r_l| < 2^−14.9 and the three roundings err by
///   ≤ u·(2^−46.8 + 2^−46.8 + 2^−14.9) < 2^−67.8; with |k|·ρ < 2^−120 the computed r_h + r_l is
///   within ε_1 = 2^−67.7 of r = w − k·(ln 2)/64, so e^(r_h + r_l) = e^r·(1 + θ_1), |θ_1| ≤
///   1.01·ε_1 < 2^−67.6.
/// * e^r = 1 + r_h + r_l + ρ2 with ρ2 = r²·Q(r), Q(r) = Σ_(n≥0) r^n/(n + 2)!.  It is evaluated
///   at r_s = RN(r_h + r_l) (|r_s − r| ≤ u·0.0056 + ε_1 < 2^−60.4; d(r²Q)/dr = e^r − 1 ≤ 0.0057,
///   so ≤ 2^−67.8 moved), Q kept to 1/7! (the rest ≤ 1.01·|r|^6/8! < 2^−75.1 relative to ρ2's
///   scale, ≤ 2^−75 absolute), Horner in f64 with coefficients rounded once and terms
///   shrinking by |r|/3 < 0.002 per step (≤ 2.1u relative), r_s² and the product (≤ 3.2u
///   relative of |ρ2| < 2^−15.9: ≤ 2^−67.2), and t = RN(ρ2 + r_l), |t| < 2^−14.3, rounds by
///   ≤ 2^−67.3.  So e^r = 1 + r_h + t + δ_2, |δ_2| ≤ 2^−67.8 + 2^−75 + 2^−67.2 + 2^−67.3 <
///   2^−65.8.
/// * The table T = T_h + T_l = 2^(j/64)·(1 + θ_T), |θ_T| ≤ 2^−104, T_h ∈ [1, 2).  T·(1 + r_h + t)
///   = T_h + T_h·r_h + [T_l + T_l·r_h + T_h·t] + T_l·t: TwoProd(T_h, r_h) = p_h + p_l exactly;
///   FastTwoSum(T_h, p_h) = h + l_0 exactly (|p_h| ≤ 0.011 < T_h); the bracket with p_l is
///   formed by RN(p_l + T_l), an FMA with T_l·r_h and an FMA with T_h·t (errors ≤ u·2^−51,
///   u·2^−51 and u·2^−13.2: < 2^−66.1), and l = RN(l_0 + it) errs by ≤ u·2^−13.2 = 2^−66.2;
///   the dropped T_l·t ≤ 2^−52·2^−14.3 = 2^−66.3.  Relative to h + l ≥ 0.98: ≤ 2^−64.1.
///
/// Altogether, relative to e^w: 2^−67.6 + 2^−65.8/0.994 + 2^−64.1 + 2^−104 < 2^−63.6.
#[inline(always)]
pub fn exp_quick(w: Dd) -> (f64, f64, i32) {
    let t = tables();
    let kf = (w.hi * t.inv).round_ties_even();
    let k = kf as i64;
    let (rh, sl) = two_sum(w.hi, -(kf * t.c1));
    let rl = (-kf).mul_add(t.c2, (-kf).mul_add(t.c3, sl + w.lo));
    let rs = rh + rl;
    let f = &t.fact_inv;
    let mut q = f[7].hi;
    for n in (2..7).rev() {
        q = q.mul_add(rs, f[n].hi);
    }
    let tail = (rs * rs).mul_add(q, rl);
    let table = t.pow[k.rem_euclid(64) as usize];
    let (ph, pl) = two_prod(table.hi, rh);
    let rest = table.hi.mul_add(tail, table.lo.mul_add(rh, pl + table.lo));
    let (h, l0) = fast_two_sum(table.hi, ph);
    (h, l0 + rest, k.div_euclid(64) as i32)
}

/// e^a as a plain double-word when 2^k stays in [2^−900, 2^900]; None otherwise.
#[inline(always)]
pub fn exp_plain(a: Dd) -> Option<Ev> {
    let (m, k) = exp(a);
    if !(-900..=900).contains(&k) {
        return None;
    }
    Some(Ev {
        v: m.v.scale2(k),
        r: m.r,
    })
}

/// e^r for |r| < 0.0055 (bound in the module comment, included in EXP_BASE).
#[inline(always)]
fn exp_small(r: Dd) -> Dd {
    let t = tables();
    let x = r.hi;
    // q = Σ_{n=6}^{11} x^(n−6)/n!, in f64.
    let mut q = t.fact_inv[11].hi;
    for n in (6..11).rev() {
        q = q.mul_add(x, t.fact_inv[n].hi);
    }
    let mut h = Dd::new(q);
    for n in (0..6).rev() {
        h = step(h, r, t.fact_inv[n]);
    }
    h
}

/// One double-word Horner step c + h·r for c > 0 with |h·r| ≤ c/100 (every step of
/// [`exp_small`]: |r·h_(n+1)| ≤ 1.01·|r|/(n + 1)·c_n ≤ 0.0056·c_n), fused and cheaper than
/// [`Dd::mul`] then [`Dd::add`], within a relative 3.2u² ≤ OP (u = 2^−53), the bound the module
/// comment charges per step:
/// * product P = h·r: TwoProd(h_h, r_h) = p + e exactly; t = RN(h_l·r_h + RN(h_h·r_l + e)) (two
///   FMAs rounding ≤ 2.01u²·|P| and ≤ 3.02u²·|P|, |t| ≤ 3.03u·|P|) and the dropped h_l·r_l ≤
///   u²·|P|: p + t = P + δ, |δ| ≤ 6.1u²·|P|;
/// * sum: |c_h| ≥ |p| (|P| ≤ c/100), so FastTwoSum(c_h, p) = s + σ exactly; w = RN(t + c_l) errs
///   by ≤ u·(3.04u·|P| + 1.0001u·c), v = RN(σ + w) by ≤ u·(|σ| + |w|) ≤ u²·(2.01·c + 4.1·|P|),
///   and FastTwoSum(s, v) is exact (|v| ≤ 4u·|s|);
/// * total ≤ u²·(13.2·|P| + 3.01·c) ≤ 3.15u²·c against a result ≥ 0.99·c: ≤ 3.2u² relative —
///   within OP = 64u² with room.  Products that underflow (a tiny r) err by ≤ 2^−1074, negligible
///   against c ≥ 1/120.
#[inline(always)]
fn step(h: Dd, r: Dd, c: Dd) -> Dd {
    let (p, e) = two_prod(h.hi, r.hi);
    let t = h.lo.mul_add(r.hi, h.hi.mul_add(r.lo, e));
    let s = c.hi + p;
    let sigma = p - (s - c.hi);
    let v = sigma + (t + c.lo);
    let hi = s + v;
    Dd {
        hi,
        lo: v - (hi - s),
    }
}

/// e^a − 1 for a double-word a with −600 ≤ a.hi ≤ 600.
///
/// |a| < 1/16: Σ_{n≥1} a^n/n! = a·Σ_{n≥0} a^n/(n+1)!, Horner over the first N terms, N the
/// least with |a|^N/(N+1)! ≤ 2^−110; the remainder is ≤ 2·|a|^N/(N+1)! (ratio of successive
/// terms ≤ 1/32).  The terms from the M-th on, M the least with |a|^M/(M+1)! ≤ 2^−52, are
/// summed in f64 (Horner with |a|·c_(n+1)/c_n ≤ 1/32, coefficients and a.hi each within 2^−53:
/// relative error < 2^−48) and enter with weight ≤ 2^−52·(32/31)/(1 − 1/32) relative to the
/// sum, i.e. ≤ 2^−99.8; the first M run in double-word Horner, which damps inner errors by
/// |a|·c_(n+1)/c_n ≤ 1/32.  So the relative error is ≤ (32/31)·(2·OP + 2^−104) + 2^−109 + OP
/// (final product) + 2^−99.8 < 2^−97.
/// |a| ≥ 1/16: e^a − 1 from [`exp`], a sum tracked by [`Ev::add_f`] (e^a/|e^a − 1| ≤ 17).
#[inline(always)]
pub fn expm1(a: Dd) -> Ev {
    if a.hi.abs() >= 0.0625 {
        let e = exp_plain(a).expect("exp of a moderate argument");
        return e.add_f(-1.0);
    }
    let t = tables();
    let m = a.hi.abs();
    // Number of terms: |a|^N/(N+1)! ≤ 2^−110.
    let mut n = 1usize;
    let mut term = m / 2.0;
    while term > 7.7e-34 && n < 24 {
        n += 1;
        term *= m / (n as f64 + 1.0);
    }
    // Σ_{i≥1} a^(i−1)/i!: the terms from i = split on in f64, the first ones in double-word.
    let mut split = 1usize;
    let mut weight = 1.0;
    while weight > 2.220446049250313e-16 && split < n {
        split += 1;
        weight *= m / split as f64;
    }
    let mut h = if weight <= 2.220446049250313e-16 {
        let mut q = t.fact_inv[n].hi;
        for i in (split..n).rev() {
            q = q.mul_add(a.hi, t.fact_inv[i].hi);
        }
        Dd::new(q)
    } else {
        // Only for N = 1 (|a| ≤ 2^−109): the single term stays double-word.
        t.fact_inv[n]
    };
    for i in (1..split).rev() {
        h = h.mul(a).add(t.fact_inv[i]);
    }
    Ev {
        v: h.mul(a),
        r: 6.310887241768095e-30, // 2^-97
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exp_matches_mpfr() {
        for &x in &[
            0.0, 1e-300, -0.3, 0.7, 1.5, -20.25, 88.0, -600.0, 1234.5, -7e5,
        ] {
            let (m, k) = exp(Dd::new(x));
            let want = Float::with_val(200, x).exp();
            let got = Float::with_val(200, m.v.hi) + m.v.lo;
            let got = got * Float::with_val(200, Float::i_exp(1, k));
            let rel = (Float::with_val(200, &got - &want) / &want).abs().to_f64();
            assert!(rel <= m.r, "exp({x}): rel {rel:e} > bound {:e}", m.r);
            assert!(m.r < 1e-27, "bound too loose at {x}: {:e}", m.r);
        }
    }

    /// The fused Horner step against MPFR (300 bits) within the 3.2u² its comment proves, on
    /// random double-words with |h·r| ≤ c/100 as in `exp_small` (c one of its 1/n!).
    #[test]
    fn step_within_its_bound() {
        let t = tables();
        let mut state = 0x2545F4914F6CDD1Du64;
        let mut unit = || {
            // xorshift64: a uniform f64 in [−1, 1).
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 * 2f64.powi(-52) - 1.0
        };
        let u2 = 2f64.powi(-106);
        for i in 0..20000 {
            let c = t.fact_inv[i % 6];
            let r = Dd::sum(0.0055 * unit(), 0.0055 * 2f64.powi(-53) * unit());
            let hh = c.hi / ((i % 6) as f64 + 1.0) * (1.0 + 0.01 * unit());
            let h = Dd::sum(hh, hh * 2f64.powi(-53) * unit());
            let got = step(h, r, c);
            let exact = Float::with_val(300, h.hi) + h.lo;
            let exact = exact * (Float::with_val(300, r.hi) + r.lo) + c.hi + c.lo;
            let value = Float::with_val(300, got.hi) + got.lo;
            let rel = (Float::with_val(300, &value - &exact) / &exact)
                .abs()
                .to_f64();
            assert!(rel <= 3.2 * u2, "step {i}: relative {rel:e}");
            assert!(
                got.lo.abs() <= got.hi.abs() * 2f64.powi(-53),
                "step {i}: not normalized"
            );
        }
    }

    /// The first stage against MPFR (300 bits) within QUICK_EXP_REL, on 2·10^5 random
    /// double-words w (|w.hi| < 64, |w.lo| ≤ ulp(w.hi)/2) and the ends of the range.
    #[test]
    fn exp_quick_within_its_bound() {
        let mut state = 0x9E37_79B9_7F4A_7C15u64;
        let mut unit = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 * 2f64.powi(-52) - 1.0
        };
        let mut points: Vec<Dd> = [63.999, -63.999, 0.0, 1e-300, -0.0054, 0.0054]
            .iter()
            .map(|&x| Dd::new(x))
            .collect();
        for i in 0..200_000 {
            let hi = if i % 2 == 0 { 64.0 } else { 0.02 } * unit();
            points.push(Dd::sum(hi, hi * 2f64.powi(-54) * unit()));
        }
        for w in points {
            let (h, l, e) = exp_quick(w);
            let exact = (Float::with_val(300, w.hi) + w.lo).exp();
            let got = (Float::with_val(300, h) + l) * Float::with_val(300, Float::i_exp(1, e));
            let rel = (Float::with_val(300, &got - &exact) / &exact)
                .abs()
                .to_f64();
            assert!(rel <= QUICK_EXP_REL, "exp_quick({w:?}): relative {rel:e}");
            assert!((0.98..=2.02).contains(&h) && l.abs() <= h * 2f64.powi(-13));
        }
    }

    #[test]
    fn expm1_matches_mpfr() {
        for &x in &[1e-300, -1e-20, 0.01, -0.06, 0.0625, -0.5, 3.0, -40.0] {
            let e = expm1(Dd::new(x));
            let want = Float::with_val(200, x).exp_m1();
            let got = Float::with_val(200, e.v.hi) + e.v.lo;
            let rel = (Float::with_val(200, &got - &want) / &want).abs().to_f64();
            assert!(rel <= e.r, "expm1({x}): rel {rel:e} > bound {:e}", e.r);
        }
    }
}
