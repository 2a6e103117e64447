//! GELU, tanh form: x·σ(2u), u = c·(x + k·x³), and its derivative s + x·g·s·(1 − s), s = σ(2u),
//! g = 2u′ = 2c·(1 + 3k·x²) (the engine's formulas).  c (√(2/π), irrational unless rounded by
//! `--param-rounding`) and k (0.044715, a decimal) are double-word constants within a relative
//! 2^−103 of the engine's values (computed from the same `Constants` at 300 bits).
//!
//! Bounds.  x² is exact (|x| ≥ 2^−56 has at most 24 significant bits) and x³ = x²·x exactly by
//! TwoProd; x + k·x³ is a sum of terms of one sign; so z = 2u carries a relative bound r_z of a
//! few OP.  e^(−|z|) is then computed from the computed z: e^(−|z|(1 + θ)) = e^(−|z|)·e^(∓|z|θ),
//! a further relative 1.01·|z|·r_z ([`exp`]'s argument), and for |z| < 1 from expm1(−|z|),
//! whose relative sensitivity to its argument is ≤ 1, so 1.01·r_z.  With t = e^(−|z|) and
//! D = 1 + t: σ(|z|) = 1/D, σ(−|z|) = t/D, and
//! * forward, x > 0: x/D, or x − x·t/D for x ≥ 1 (a base and a delta); x < 0: x·t/D;
//! * derivative, x > 0: (D + x·g·t)/D² (positive terms), or 1 + (t/D)·(x·g/D − 1) for x ≥ 1
//!   (x·g/D − 1 ≥ 0.5 there); x < 0: t·(D + x·g)/D², whose cancellation near the zero of the
//!   derivative (x ≈ −0.75) [`Ev::add`] bounds.
//!
//! When t < 2^−898 (x < 0 only), D = 1 up to a relative 2^−898 ([`DROPPED`]).
//!
//! [`exp`]: super::exp::exp

use super::common::{decay, near_constant, near_side, widen, DROPPED, TAIL};
use super::dd::{double_word, two_prod, Dd, Ev};
use super::decide::{engine_tiny, rectifier_tail, Outcome};
use super::exp::expm1;
use super::series::{horner, leading, BAND_LIMIT, SECH2, TANH};
use super::{exact_f64, Kind};
use crate::activation::{Constants, Role};
use crate::format::Layout;

/// The fast-path kind for the resolved constants: c within [0.79, 0.80] and k within
/// [0.044, 0.046], the ranges the closed-form thresholds below are proved for (the default
/// constants and their binary32, binary16 and bfloat16 roundings lie inside).
pub(super) fn kind(c: &Constants) -> Option<Kind> {
    // A constant that is a binary64 number (`--param-rounding`) is taken exactly (r = 0): the
    // tiny-input band's bound carries the constants' r times the leading term, which would
    // otherwise hide rests below 2^−103 of it.
    let word = |name: &str| match exact_f64(c.get(name).exact()) {
        Some(f) => Some(Ev::exact(Dd::new(f))),
        None => double_word(c.get(name)),
    };
    let cc = word("c")?;
    let kk = word("k")?;
    let ok = (0.79..=0.80).contains(&cc.v.hi) && (0.044..=0.046).contains(&kk.v.hi);
    ok.then_some(Kind::GeluTanh(cc, kk))
}

/// 2^−56.
pub(super) const TWO_M56: f64 = 1.3877787807814457e-17;

/// GELU-tanh or its derivative where a closed form decides it (x finite, nonzero, |x| < TAIL;
/// c ∈ [0.79, 0.80], k ∈ [0.044, 0.046]; logarithms from Python's math.log, rounded outwards).
///
/// |x| < 2^−56: u has x's sign and |u| = c|x|(1 + kx²) < 0.81|x| (c ≤ 0.8); 0 < |tanh u| < |u|.
/// * forward y = x/2 + x·tanh(u)/2, the delta positive and < 0.405x²; with e = ilogb(x/2),
///   |x| < 2^(e+2): delta < 1.62·2^e·2^−56 < 2^(e−54): just above x/2;
/// * derivative y − 1/2 = tanh(u)/2 + x·u′·2s(1 − s), both of x's sign, each < 0.405|x| (u′ <
///   0.81, s(1 − s) ≤ 1/4): 0 < |y − 1/2| < 0.81|x| < 2^−55: beside 1/2 on x's side.
///
/// x ≥ 8: 2u ≥ 1.58·(8 + 0.044·512) = 48.23, e^(−48.23) = 2^(−69.58).
/// * forward x − y = x·σ(−2u) < x·e^(−2u) < 2^(ilogb(x) + 1 − 69.5): just below x;
/// * derivative y − 1 = σ(−2u)·(x·g·σ(2u) − 1) > 0 (x·g·σ(2u) ≥ 8·1.58·0.99 > 1) and
///   < e^(−2u)·x·g ≤ 2^(−69.58)·8·1.6·(1 + 3·0.046·64) = 2^(−62.6) < 2^−54 (the bound
///   decreases for x ≥ 8: the derivative of its logarithm is 1/x + 6kx/(1 + 3kx²) − g < 0):
///   just above 1.
///
/// x < −22: 2|u| ≥ 1.58·(22 + 0.044·10648) = 775.0.
/// * forward 0 < |y| = |x|·σ(2u) < |x|·e^(−2|u|) ≤ 22·e^(−775.0) = 2^(−1113.6): −0;
/// * derivative y = s·(1 + x·g·(1 − s)), x·g·(1 − s) < −22·1.58·0.99 < −1, so y < 0 and |y| <
///   s·|x|·g ≤ e^(−775.0)·22·1.6·(1 + 3·0.046·484) = 2^(−1106.9): −0.
///   (Both bounds decrease as x decreases: 2|u| grows like |x|³.)
#[inline(always)]
fn closed(format: Layout, x: f64, role: Role) -> Option<Outcome> {
    if x.abs() < TWO_M56 {
        return Some(match role {
            Role::Forward => near_side(x * 0.5, true),
            Role::Derivative => near_constant(0.5, x > 0.0),
        });
    }
    if x >= 8.0 {
        return Some(match role {
            Role::Forward => near_side(x, false),
            Role::Derivative => near_constant(1.0, true),
        });
    }
    (x < -22.0).then(|| Outcome::Fixed(engine_tiny(format, true)))
}

/// GELU-tanh or its derivative for 2^−56 ≤ |x| < 2^−6 ([`super::series`]), without exp.  With
/// w = x² exact, u = c·x·(1 + k·w), tanh u = u + u³·Σ_(n≥1) T_n·u^(2n−2) ([`TANH`]) and sech² u =
/// 1 − u² + u⁴·Σ_(n≥2) S_n·u^(2n−4) ([`SECH2`]), c̃ = c_h + c_l and k̃ = k_h + k_l the double-word
/// constants:
/// * y = x/2 + (x/2)·tanh u = x/2 + c̃w/2 + c̃k̃w²/2 + (x/2)·u³·Σ T_n·u^(2n−2): w·c_h = p + q
///   exactly (TwoProd; w ≥ 2^−112 keeps q normal), the leading part x/2 + p/2, the rest
///   q/2 + w·c_l/2 + p·k_h·w/2 + (x/2)·ũ³·Σ_(n≤5) T_n·ũ^(2n−2), the first omitted series term
///   |T_6|·|u|¹³·|x|/2;
/// * y′ = 1/2 + tanh(u)/2 + (x/2)·u′·sech² u, u′ = c·(1 + 3k·w): u/2 + x·u′/2 = c·x·(1 + 2k·w),
///   so y′ = 1/2 + c̃x + 2c̃k̃·x·w + (u³/2)·Σ T_n·u^(2n−2) + (x·u′/2)·u²·(−1 + u²·Σ S_n·u^(2n−4));
///   x·c_h = p + q, the leading part 1/2 + p, the rest q + x·c_l + 2p·k_h·w + the two series
///   kept to T_5 and S_6, the first omitted terms |T_6|·|u|¹³/2 and |S_7|·|u|¹⁴·|x·u′|/2.
///
/// Both series alternate with decreasing terms (u² < 2^−12; ratios in [`super::series`]), so
/// each truncation is below its first omitted term, taken at the computed ũ (within a relative
/// 5u, u = 2^−53, of u: its 14th power within 1.01).  The rest, in binary64: ũ = c_h·x·(1 +
/// k_h·w) carries ≤ 4.01u (c_h and k_h against c̃, k̃ count as one rounding each; k·w < 2^−16
/// damps its own), ũ² 9.02u, ũ³ 14.03u, the degree-4 Horner sums 9.02u (γ_8 and the
/// coefficients, Σ|T_n|ũ^(2n) within 1 + 2^−12 of |Σ T_n ũ^(2n)|), so each series term is within
/// 25.05u of itself, p·k_h·w 4.01u, x·c_l u, u′ and −1 + ũ²·Σ S_n… a few u more at most
/// (16.04u for the sech² term); the three or four additions add 4u of the terms' magnitude
/// sum: 29.1u < [`super::series::REST_REL`] of that magnitude.  The constants themselves
/// (relative r_c and r_k of c and k; 0 when exact binary64 numbers): y − x/2 and y′ − 1/2 are
/// sums of terms of x's sign whose relative sensitivity to c or k is ≤ 1 + 2u² ≤ 1.001, and
/// |y − x/2| ≤ 1.001·|p|/2, |y′ − 1/2| ≤ 1.001·|p|: 1.03·(r_c + r_k) times those.
#[inline(always)]
fn band(x: f64, c: Ev, k: Ev, role: Role) -> Outcome {
    let (ch, kh) = (c.v.hi, k.v.hi);
    let w = x * x;
    let u = ch * x * (1.0 + kh * w);
    let v = u * u;
    let cube = u * v;
    let u13 = (cube * v * v * v * v * v).abs();
    let constants = 1.03 * (c.r + k.r);
    match role {
        Role::Forward => {
            let (p, q) = two_prod(w, ch);
            let low = 0.5 * q + 0.5 * (w * c.v.lo);
            let quartic = 0.5 * p * kh * w;
            let series = 0.5 * x * cube * horner(&TANH[..5], v);
            let magnitude = 0.5 * q.abs() + 0.5 * (w * c.v.lo).abs() + quartic.abs() + series.abs();
            let truncation = 1.01 * TANH[5].abs() * u13 * x.abs() * 0.5 + constants * p.abs() * 0.5;
            leading(
                x * 0.5,
                p * 0.5,
                low + quartic + series,
                magnitude,
                truncation,
            )
        }
        Role::Derivative => {
            let (p, q) = two_prod(x, ch);
            let low = x * c.v.lo;
            let cubic = 2.0 * p * kh * w;
            let slope = ch * (1.0 + 3.0 * kh * w);
            let tanh_part = 0.5 * cube * horner(&TANH[..5], v);
            let sech_part = 0.5 * x * slope * v * (v * horner(&SECH2[..5], v) - 1.0);
            let magnitude = q.abs() + low.abs() + cubic.abs() + tanh_part.abs() + sech_part.abs();
            let truncation = 1.01
                * (TANH[5].abs() * u13 * 0.5
                    + SECH2[5].abs() * u13 * u.abs() * (x * slope).abs() * 0.5)
                + constants * p.abs();
            leading(
                0.5,
                p,
                q + low + cubic + tanh_part + sech_part,
                magnitude,
                truncation,
            )
        }
    }
}

/// gelu_tanh(x) or its derivative.
#[inline(always)]
pub fn gelu_tanh(format: Layout, x: f64, c: Ev, k: Ev, role: Role) -> Outcome {
    if x.abs() >= TAIL {
        return rectifier_tail(format, x, role);
    }
    if let Some(o) = closed(format, x, role) {
        return o;
    }
    if x.abs() < BAND_LIMIT {
        return band(x, c, k, role);
    }
    let w = x * x;
    let cube = Dd::prod(w, x);
    let z = k.mul(Ev::exact(cube)).add_f(x).mul(c).mul_f(2.0);
    let za = z.v.abs();
    // t = 2^tk·tm = e^(−|z|), tp = t when representable, d = 1 + t.
    let (tm, tk, tp, d) = if za.hi < 1.0 {
        let em = widen(expm1(za.neg()), 1.01 * z.r);
        let t = em.add_f(1.0);
        (t, 0, Some(t), em.add_f(2.0))
    } else {
        let t = decay(za);
        let input = 1.01 * za.hi * z.r;
        let tm = widen(t.m, input);
        match t.plain {
            Some(tp) => {
                let tp = widen(tp, input);
                (tm, t.k, Some(tp), tp.add_f(1.0))
            }
            None => (tm, t.k, None, widen(Ev::exact(Dd::new(1.0)), DROPPED)),
        }
    };
    let xe = Ev::exact(Dd::new(x));
    let slope = || k.mul_f(3.0 * w).add_f(1.0).mul(c).mul_f(2.0);
    match (role, tp) {
        (Role::Forward, Some(tp)) if x >= 1.0 => Outcome::Near(x, xe.mul(tp).div(d).neg()),
        (Role::Forward, _) if x > 0.0 => Outcome::Value(xe.div(d), 0),
        (Role::Forward, _) => Outcome::Value(xe.mul(tm).div(d), tk),
        (Role::Derivative, Some(tp)) if x >= 1.0 => {
            let inner = xe.mul(slope()).div(d).add_f(-1.0);
            Outcome::Near(1.0, tp.div(d).mul(inner))
        }
        (Role::Derivative, Some(tp)) if x > 0.0 => {
            let num = d.add(xe.mul(slope()).mul(tp));
            Outcome::Value(num.div(d.mul(d)), 0)
        }
        (Role::Derivative, _) if x > 0.0 => Outcome::Decline,
        (Role::Derivative, _) => {
            let inner = d.add(xe.mul(slope()));
            Outcome::Value(tm.mul(inner).div(d.mul(d)), tk)
        }
    }
}
