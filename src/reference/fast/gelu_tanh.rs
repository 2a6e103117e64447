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
use super::dd::{double_word, Dd, Ev};
use super::decide::{engine_tiny, rectifier_tail, Outcome};
use super::exp::expm1;
use super::Kind;
use crate::activation::{Constants, Role};
use crate::format::Layout;

/// The fast-path kind for the resolved constants: c within [0.79, 0.80] and k within
/// [0.044, 0.046], the ranges the closed-form thresholds below are proved for (the default
/// constants and their binary32, binary16 and bfloat16 roundings lie inside).
pub(super) fn kind(c: &Constants) -> Option<Kind> {
    let cc = double_word(c.get("c"))?;
    let kk = double_word(c.get("k"))?;
    let ok = (0.79..=0.80).contains(&cc.v.hi) && (0.044..=0.046).contains(&kk.v.hi);
    ok.then_some(Kind::GeluTanh(cc, kk))
}

/// 2^−56.
const TWO_M56: f64 = 1.3877787807814457e-17;

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

/// gelu_tanh(x) or its derivative.
#[inline(always)]
pub fn gelu_tanh(format: Layout, x: f64, c: Ev, k: Ev, role: Role) -> Outcome {
    if x.abs() >= TAIL {
        return rectifier_tail(format, x, role);
    }
    if let Some(o) = closed(format, x, role) {
        return o;
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
