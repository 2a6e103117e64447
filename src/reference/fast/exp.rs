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

use super::dd::{constant, two_prod, two_sum, Dd, Ev, SLACK};
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
