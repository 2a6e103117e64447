//! Sigmoid, tanh and swish (SiLU), forward and derivative, from t = e^(−|z|).
//!
//! With D = 1 + t (a sum of positives, relative error ≤ r_t + OP): σ(|z|) = 1/D,
//! σ(−|z|) = t/D.  For |z| < 1 (sigmoid, swish) t comes from em = expm1(−|z|) alone, t = 1 + em
//! and D = 2 + em (em ∈ (−0.64, 0]: no cancellation), which for |z| < 1/16 is expm1's short
//! series and needs no table exp.  Near an asymptote or a constant the value is written base + delta with delta
//! computed without cancellation, so that [`super::decide`] can decide by the sign of a tiny
//! delta the way the engine does:
//! * σ(x) − 1/2 = sign(x)·(1 − t)/(2D), 1 − t = −expm1(−|x|);  σ(x) = 1 − t/D for x ≥ 1;
//! * σ′(x) − 1/4 = −(1 − t)²/(4D²);
//! * tanh|x| = −em/(2 + em), em = expm1(−2|x|) ∈ (−1, 0], so 2 + em > 1 and no cancellation;
//!   tanh|x| = 1 − 2t/D (t = e^(−2|x|)) for |x| ≥ 1;  tanh′ = 1 − tanh², or 4t/D²;
//! * swish′(z) − 1/2 = sign(z)·((1 − t)D + 2|z|t)/(2D²) (swish′ − 1/2 is odd in z; the numerator
//!   is a sum of positives); swish′ − 1 = t(|z| − 1 − t)/D² for z ≥ 1 and swish′ = t(1 + t −
//!   |z|)/D² for z ≤ −1 (the cancellation near |z| ≈ 1.28 is tracked by [`Ev::add`]).
//!
//! Every error bound composes through [`Ev`].  Below |z| = 2^−6, past the closed forms, the
//! leading-term bands (`*_band`, see [`super::series`]) take over without any exp.
//!
//! Closed-form regions (`*_closed`) come first: where the function is within 2^(ilogb(base)−54)
//! of an exact binary64 base on a known side, [`near_side`] decides without any exp (the rule
//! of [`super::decide::finish`]: no rounding boundary of the format, no binary64 midpoint and no
//! power of two lies strictly between), and where |y| < 2^−1075 the engine's own answer is a
//! signed zero, binade emin, approximation RN_binary64(y) = ±0, which is [`engine_tiny`].
//! Each threshold's proof sits beside it; logarithms quoted there were computed with mpmath
//! (50 digits) and are used with at least 0.09 of a binary order of margin.
//! A comparison x > c (x < c) of the f64 input with an f64 constant c is exact.

use super::common::{
    beside, decay, near_constant, near_side, widen, Decay, DROPPED, TAIL, TWO_M26, TWO_M27,
    TWO_M53, TWO_M54,
};
use super::dd::{fast_two_sum, pow2, two_prod, two_sum, Dd, Ev};
use super::decide::{decide_quick, engine_beside, engine_tiny, Outcome};
use super::exp::{exp_quick, expm1};
use super::series::{horner, leading, BAND_LIMIT, SECH2, SWISH_SLOPE, TANH};
use crate::activation::Role;
use crate::format::Layout;

#[inline(always)]
fn one_plus(t: &Decay) -> Ev {
    match t.plain {
        Some(tp) => tp.add_f(1.0),
        None => widen(Ev::exact(Dd::new(1.0)), DROPPED),
    }
}

/// σ(x) or σ′(x) where a closed form decides it (x finite, nonzero, |x| < TAIL).
///
/// Forward, x > 38: 1 − σ(x) = t/(1 + t), t = e^(−x), so 0 < 1 − y < t < e^(−38) = 2^(−54.82)
/// < 2^−54 = 2^(ilogb(1) − 54): just below 1.
/// Forward, x < −745.2: 0 < y = t/(1 + t) < t = e^x < e^(−745.2) = 2^(−1075.09) < 2^−1075: the
/// engine's +0 (every format's smallest subnormal is far above).
/// Forward, |x| < 2^−53: y − 1/2 = tanh(x/2)/2 with 0 < |tanh u| < |u| for u ≠ 0, so
/// 0 < |y − 1/2| < |x|/4 < 2^−55 = 2^(ilogb(1/2) − 54), on the side of x.
/// Derivative, |x| > 745.2: 0 < y = t/(1 + t)² < t = e^(−|x|) < 2^−1075 as above: +0.
/// Derivative, |x| < 2^−26: 1/4 − y = tanh²(x/2)/4 ∈ (0, x²/16), x²/16 < 2^−56 =
/// 2^(ilogb(1/4) − 54): just below 1/4.
#[inline(always)]
fn sigmoid_closed(format: Layout, x: f64, role: Role) -> Option<Outcome> {
    let a = x.abs();
    match role {
        Role::Forward if x > 38.0 => Some(near_constant(1.0, false)),
        Role::Forward if x < -745.2 => Some(Outcome::Fixed(engine_tiny(format, false))),
        Role::Forward if a < TWO_M53 => Some(near_constant(0.5, x > 0.0)),
        Role::Derivative if a > 745.2 => Some(Outcome::Fixed(engine_tiny(format, false))),
        Role::Derivative if a < TWO_M26 => Some(near_constant(0.25, false)),
        _ => None,
    }
}

/// σ(x) or σ′(x) for |x| < 2^−6 past the closed forms ([`super::series`]), with u = x/2 and
/// w = u² both exact (u has at most 24 significant bits):
/// * σ(x) = 1/2 + u/2 + (u³/2)·Σ_(n≥1) T_n·w^(n−1) (σ(x) − 1/2 = tanh(u)/2), kept to T_5,
///   the rest below |T_6|·|u|¹³/2;
/// * σ′(x) = sech²(u)/4 = 1/4 − w/4 + (w²/4)·Σ_(n≥2) S_n·w^(n−2), kept to S_6, the rest
///   below |S_7|·w⁷/4.
#[inline(always)]
fn sigmoid_band(x: f64, role: Role) -> Outcome {
    let u = x * 0.5;
    let w = u * u;
    match role {
        Role::Forward => {
            let cube = u * w;
            let rest = cube * horner(&TANH[..5], w) * 0.5;
            let w5 = w * w * w * w * w;
            leading(
                0.5,
                u * 0.5,
                rest,
                rest.abs(),
                TANH[5].abs() * (cube * w5).abs() * 0.5,
            )
        }
        Role::Derivative => {
            let w2 = w * w;
            let rest = w2 * horner(&SECH2[..5], w) * 0.25;
            let w7 = w2 * w2 * w2 * w;
            leading(
                0.25,
                -w * 0.25,
                rest,
                rest.abs(),
                SECH2[5].abs() * w7 * 0.25,
            )
        }
    }
}

/// σ(x) or σ′(x).
#[inline(always)]
pub fn sigmoid(format: Layout, x: f64, role: Role) -> Outcome {
    let a = x.abs();
    if a >= TAIL {
        return match role {
            Role::Forward if x > 0.0 => {
                engine_beside(format, 1.0, false).map_or(Outcome::Decline, Outcome::Fixed)
            }
            _ => Outcome::Fixed(engine_tiny(format, false)),
        };
    }
    if let Some(o) = sigmoid_closed(format, x, role) {
        return o;
    }
    if a < BAND_LIMIT {
        return sigmoid_band(x, role);
    }
    if a < 1.0 {
        // e^(−a) = 1 + em from expm1 alone (a short series below 1/16, no table exp):
        // D = 1 + t = 2 + em, em ∈ (−0.64, 0], so no cancellation (tracked by Ev::add_f).
        let em = expm1(Dd::new(-a));
        let d = em.add_f(2.0);
        return match role {
            Role::Forward => {
                let g = em.neg().div(d.mul_f(2.0));
                Outcome::Near(0.5, if x > 0.0 { g } else { g.neg() })
            }
            Role::Derivative => {
                let dd = d.mul(d).mul_f(4.0);
                Outcome::Near(0.25, em.mul(em).div(dd).neg())
            }
        };
    }
    let t = decay(Dd::new(a));
    let d = one_plus(&t);
    match role {
        Role::Forward if x > 0.0 => match t.plain {
            Some(tp) => Outcome::Near(1.0, tp.div(d).neg()),
            None => Outcome::Near(1.0, beside(1.0, false)),
        },
        Role::Forward => Outcome::Value(t.m.div(d), t.k),
        Role::Derivative => Outcome::Value(t.m.div(d.mul(d)), t.k),
    }
}

/// tanh(x) or tanh′(x) where a closed form decides it (x finite, nonzero, |x| < TAIL).
///
/// Forward, |x| > 19.5: 1 − tanh|x| = 2t/(1 + t), t = e^(−2|x|), so 0 < 1 − tanh|x| < 2t <
/// 2e^(−39) = 2^(−55.27) < 2^−54: just inside ±1.
/// Forward, |x| < 2^−27: for u > 0, u − u³/3 < tanh u < u (integrate tanh′ = 1 − tanh² from
/// 0: it is below 1 and, since tanh u < u, above 1 − u²), so 0 < |x − y| < |x|³/3, y on the
/// side of x towards zero.  With
/// e = ilogb(x) ≤ −28 and |x| < 2^(e+1): |x|³/3 < 2^(3e+3)/3 = 2^(e−54)·2^(2e+57)/3 ≤
/// 2^(e−54)·2/3 < 2^(e−54).
/// Derivative, |x| > 373.5: 0 < y = 4t/(1 + t)² < 4t ≤ 4e^(−747) = 2^(−1075.69) < 2^−1075: +0.
/// Derivative, |x| < 2^−27: 1 − y = tanh²x ∈ (0, x²), x² < 2^−54: just below 1.
#[inline(always)]
fn tanh_closed(format: Layout, x: f64, role: Role) -> Option<Outcome> {
    let a = x.abs();
    match role {
        Role::Forward if a > 19.5 => Some(near_constant(x.signum(), x < 0.0)),
        Role::Forward if a < TWO_M27 => Some(near_side(x, x < 0.0)),
        Role::Derivative if a > 373.5 => Some(Outcome::Fixed(engine_tiny(format, false))),
        Role::Derivative if a < TWO_M27 => Some(near_constant(1.0, false)),
        _ => None,
    }
}

/// tanh(x) or tanh′(x) for |x| < 2^−6 past the closed forms ([`super::series`]), with
/// w = x² exact:
/// * tanh x = x + x³·Σ_(n≥1) T_n·w^(n−1), kept to T_5, the rest below |T_6|·|x|¹³;
/// * tanh′ x = sech² x = 1 − w + w²·Σ_(n≥2) S_n·w^(n−2), kept to S_6, the rest below |S_7|·w⁷.
#[inline(always)]
fn tanh_band(x: f64, role: Role) -> Outcome {
    let w = x * x;
    match role {
        Role::Forward => {
            let cube = x * w;
            let rest = cube * horner(&TANH[..5], w);
            let w5 = w * w * w * w * w;
            leading(x, 0.0, rest, rest.abs(), TANH[5].abs() * (cube * w5).abs())
        }
        Role::Derivative => {
            let w2 = w * w;
            let rest = w2 * horner(&SECH2[..5], w);
            leading(1.0, -w, rest, rest.abs(), SECH2[5].abs() * w2 * w2 * w2 * w)
        }
    }
}

/// tanh(x) or tanh′(x).
#[inline(always)]
pub fn tanh(format: Layout, x: f64, role: Role) -> Outcome {
    let a = x.abs();
    if a >= TAIL {
        return match role {
            Role::Forward => {
                engine_beside(format, x.signum(), x < 0.0).map_or(Outcome::Decline, Outcome::Fixed)
            }
            Role::Derivative => Outcome::Fixed(engine_tiny(format, false)),
        };
    }
    if let Some(o) = tanh_closed(format, x, role) {
        return o;
    }
    if a < BAND_LIMIT {
        return tanh_band(x, role);
    }
    if a < 1.0 {
        let em = expm1(Dd::new(-2.0 * a));
        let th = em.neg().div(em.add_f(2.0));
        return match role {
            Role::Forward => Outcome::Value(if x > 0.0 { th } else { th.neg() }, 0),
            Role::Derivative => Outcome::Near(1.0, th.mul(th).neg()),
        };
    }
    let t = decay(Dd::new(2.0 * a));
    let d = one_plus(&t);
    match role {
        Role::Forward => {
            let gap = match t.plain {
                Some(tp) => tp.mul_f(2.0).div(d),
                None => beside(1.0, true),
            };
            if x > 0.0 {
                Outcome::Near(1.0, gap.neg())
            } else {
                Outcome::Near(-1.0, gap)
            }
        }
        Role::Derivative => Outcome::Value(t.m.mul_f(4.0).div(d.mul(d)), t.k),
    }
}

/// Whether |z| ≥ 4096 for a normalized double-word z.
#[inline(always)]
pub(super) fn dd_in_tail(z: Dd) -> bool {
    let (h, l) = if z.hi < 0.0 {
        (-z.hi, -z.lo)
    } else {
        (z.hi, z.lo)
    };
    h > TAIL || (h == TAIL && l >= 0.0)
}

/// swish(x) or swish′(x) where a closed form decides it (x finite, nonzero, z = βx with |z| <
/// TAIL; z.hi = RN(βx), so z.hi > c implies βx > c, and z.hi < c implies βx < c, for an f64 c).
///
/// |z| < 2^−54 (z.hi = 0 from underflow included): with σ(z) − 1/2 = tanh(z/2)/2 and
/// 0 < |tanh u| < |u|, and x, z of one sign (β > 0):
/// * forward y = x/2 + δ, δ = (x/2)·tanh(z/2) > 0, δ < |x||z|/4; with e = ilogb(x/2) (x/2 is
///   a normal f64 for every f32 x), |x| < 2^(e+2), so δ < 2^e·|z| < 2^(e−54): y just beside
///   x/2 on the positive side (towards zero for x < 0);
/// * derivative y = σ(z) + z·σ(z)σ(−z) = 1/2 + tanh(z/2)/2 + z·σ(z)σ(−z): both terms have z's
///   sign and are at most |z|/4 (σ(z)σ(−z) ≤ 1/4), so 0 < |y − 1/2| ≤ |z|/2 < 2^−55.
///
/// Forward, z > 39 (so x > 0): x − y = x·t/(1 + t) ∈ (0, x·t), t = e^(−z) < e^(−39) =
/// 2^(−56.27); x < 2^(e+1), e = ilogb(x), so x − y < 2^(e−55.27) < 2^(e−54).
/// Derivative, z > 42: y − 1 = t(z − 1 − t)/(1 + t)² (σ(z)(1 + zσ(−z)) over the common
/// denominator), 0 < z − 1 − t < z, so 0 < y − 1 < z·e^(−z) ≤ 42e^(−42) = 2^(−55.20) < 2^−54
/// (z·e^(−z) decreases for z > 1).
/// Forward, z < −835 (x < 0): |y| = |x|·σ(z) < |x|·e^z < 2^128·e^(−835) = 2^(−1076.65) <
/// 2^−1075 (|x| < 2^128 in every supported format), y < 0: the engine's −0.
/// Derivative, z < −753: y = t(1 + t − |z|)/(1 + t)² < 0, t = e^(−|z|), |y| < |z|·e^(−|z|) ≤
/// 753e^(−753) = 2^(−1076.79) < 2^−1075: −0.
#[inline(always)]
fn swish_closed(format: Layout, x: f64, z: f64, role: Role) -> Option<Outcome> {
    if z.abs() < TWO_M54 {
        return Some(match role {
            Role::Forward => near_side(x * 0.5, true),
            Role::Derivative => near_constant(0.5, x > 0.0),
        });
    }
    match role {
        Role::Forward if z > 39.0 => Some(near_side(x, false)),
        Role::Forward if z < -835.0 => Some(Outcome::Fixed(engine_tiny(format, true))),
        Role::Derivative if z > 42.0 => Some(near_constant(1.0, true)),
        Role::Derivative if z < -753.0 => Some(Outcome::Fixed(engine_tiny(format, true))),
        _ => None,
    }
}

/// swish(x) or swish′(x) for |z| < 2^−6 past the closed forms ([`super::series`]), z = βx =
/// z_h + z_l (TwoProd), v = z/2 taken as z_h/2 (the dropped z_l moves v³ by a relative 3u at
/// most, inside the rest's bound), w = v²:
/// * swish(x) = x/2 + βx²/4 + x·(v³/2)·Σ_(n≥1) T_n·w^(n−1) (σ(z) − 1/2 = tanh(v)/2), with
///   βx² = p + q exactly (x² is exact, then TwoProd): the leading part x/2 + p/4, the rest
///   q/4 plus the series kept to T_5, below |x|·|T_6|·|v|¹³/2 after it;
/// * swish′(x) = σ(z) + z·σ′(z) = 1/2 + v + Σ_(n≥1) (n + 1)·T_n·v^(2n+1) (termwise from
///   σ(z) − 1/2 = Σ T_n v^(2n+1)/2 and z·σ′(z) = Σ (2n + 1)·T_n·v^(2n+1)/2): the leading part
///   1/2 + z_h/2, the rest z_l/2 plus the series kept to 6T_5, below 7|T_6|·|v|¹³ after it.
#[inline(always)]
fn swish_band(x: f64, beta: f64, z: Dd, role: Role) -> Outcome {
    let v = z.hi * 0.5;
    let w = v * v;
    let cube = v * w;
    let v13 = (cube * w * w * w * w * w).abs();
    match role {
        Role::Forward => {
            let (p, q) = two_prod(beta, x * x);
            let series = x * cube * horner(&TANH[..5], w) * 0.5;
            let low = q * 0.25;
            let truncation = x.abs() * TANH[5].abs() * v13 * 0.5;
            leading(
                x * 0.5,
                p * 0.25,
                low + series,
                low.abs() + series.abs(),
                truncation,
            )
        }
        Role::Derivative => {
            let series = cube * horner(&SWISH_SLOPE, w);
            let low = z.lo * 0.5;
            let truncation = 7.0 * TANH[5].abs() * v13;
            leading(0.5, v, low + series, low.abs() + series.abs(), truncation)
        }
    }
}

/// Relative bound of [`swish_quick`]: 2^−63 ≥ QUICK_EXP_REL (2^−63.4) + 2^−66 + 2^−99 (its
/// comment) with room.
const SWISH_QUICK_REL: f64 = 1.0842021724855044e-19;

/// Forward swish for 2^−6 ≤ |z| with −64 < z_h < 32, through [`exp_quick`] and
/// [`decide_quick`]: y = x/D, D = 1 + e^(−z) for either sign of z (σ(z) = 1/(1 + e^(−z))), a
/// sum of positives.  `None` when the ~63-bit enclosure cannot decide (about 2^−8 of the
/// inputs); the double-word path below then runs as before.
///
/// Bound: e^(−z) = E·(1 + θ_E), E = 2^e·(m_h + m_l), |θ_E| ≤ QUICK_EXP_REL; e ∈ [−47, 93], so
/// the scalings are exact (an m_l·2^e below 2^−1022 errs by ≤ 2^−1074, nothing here).
/// TwoSum(1, E_h) = d_h + d_0 exactly and d_l = RN(d_0 + E_l) errs by ≤ u·(u·d_h + 2^−13.2·E_h)
/// < 2^−66·D, and FastTwoSum(d_h, d_l) renormalizes exactly (|d_l| < d_h; the quotient below
/// needs |d_l| ≤ ulp(d_h)/2); E ≤ D, so D_computed = D·(1 + θ_D), |θ_D| ≤ QUICK_EXP_REL +
/// 2^−66.  The quotient: q_h = RN(x/d_h), ρ = x − q_h·d_h exactly (an FMA; the remainder of a
/// rounded quotient is a binary64), ρ' = RN(ρ − q_h·d_l) (|ρ'| ≤ 2^−51·|x|, error ≤
/// 2^−104·|x|), q_l = RN(ρ'/d_h); x/(d_h + d_l) = q_h + ρ''/(d_h + d_l) with ρ'' = x −
/// q_h·(d_h + d_l), and using ρ' and d_h for it errs by ≤ 2^−100·|y|.  So y = (q_h +
/// q_l)·(1 + θ), |θ| ≤ QUICK_EXP_REL + 2^−66 + 2^−99, the products of θs far below the
/// room left.
#[inline(always)]
fn swish_quick(format: Layout, x: f64, z: Dd) -> Option<Outcome> {
    let (mh, ml, e) = exp_quick(z.neg());
    let scale = pow2(e);
    let (dh, d0) = two_sum(1.0, mh * scale);
    let (dh, dl) = fast_two_sum(dh, d0 + ml * scale);
    let qh = x / dh;
    let rho = (-qh).mul_add(dh, x);
    let rho = (-qh).mul_add(dl, rho);
    let ql = rho / dh;
    decide_quick(format, qh, ql, SWISH_QUICK_REL).map(Outcome::Fixed)
}

/// swish(x) = x·σ(βx) or its derivative; β > 0 an f64.
#[inline(always)]
pub fn swish(format: Layout, x: f64, beta: f64, role: Role) -> Outcome {
    let z = Dd::prod(beta, x);
    if dd_in_tail(z) {
        let positive = z.hi > 0.0;
        return match (role, positive) {
            (Role::Forward, true) => {
                engine_beside(format, x, false).map_or(Outcome::Decline, Outcome::Fixed)
            }
            (Role::Derivative, true) => {
                engine_beside(format, 1.0, true).map_or(Outcome::Decline, Outcome::Fixed)
            }
            (_, false) => Outcome::Fixed(engine_tiny(format, true)),
        };
    }
    if let Some(o) = swish_closed(format, x, z.hi, role) {
        return o;
    }
    let a = z.abs();
    if a.hi < 1e-270 {
        // βx so small that TwoProd's error term could be subnormal: not exact any more.
        return Outcome::Decline;
    }
    if a.hi < BAND_LIMIT {
        return swish_band(x, beta, z, role);
    }
    if role == Role::Forward && z.hi > -64.0 && z.hi < 32.0 {
        // Below z = 32 the double-word path never takes decide_beside (x·t/(1 + t) > 2^−47·x),
        // so it decides through decide_interval, whose enclosures here stay within 2^−85·|y|
        // of y (relative bounds ≤ 2^−90 from exp/expm1 and a few OP, widened by 2^−40 of
        // themselves): where swish_quick decides, that path would give the same reference.
        if let Some(o) = swish_quick(format, x, z) {
            return o;
        }
    }
    let xe = Ev::exact(Dd::new(x));
    if a.hi < 1.0 {
        // t = e^(−|z|) = 1 + em from expm1 alone (a short series below 1/16, no table exp);
        // em ∈ (−0.64, 0], so t = 1 + em and D = 2 + em lose nothing (tracked by Ev::add_f).
        let em = expm1(a.neg());
        let tp = em.add_f(1.0);
        let d = em.add_f(2.0);
        return match role {
            Role::Forward if x > 0.0 => Outcome::Value(xe.div(d), 0),
            Role::Forward => Outcome::Value(xe.mul(tp).div(d), 0),
            Role::Derivative => {
                let num = em.neg().mul(d).add(Ev::exact(a).mul(tp).mul_f(2.0));
                let g = num.div(d.mul(d).mul_f(2.0));
                Outcome::Near(0.5, if x > 0.0 { g } else { g.neg() })
            }
        };
    }
    let t = decay(a);
    let d = one_plus(&t);
    match role {
        Role::Forward if x > 0.0 => match t.plain {
            Some(tp) => Outcome::Near(x, xe.mul(tp).div(d).neg()),
            None => Outcome::Near(x, beside(x, false)),
        },
        Role::Forward => Outcome::Value(xe.mul(t.m).div(d), t.k),
        Role::Derivative if x > 0.0 => match t.plain {
            Some(tp) => {
                let inner = Ev::exact(a).add_f(-1.0).add(tp.neg());
                Outcome::Near(1.0, tp.mul(inner).div(d.mul(d)))
            }
            None => Outcome::Near(1.0, beside(1.0, true)),
        },
        Role::Derivative => {
            let inner = match t.plain {
                Some(tp) => tp.add_f(1.0).add(Ev::exact(a).neg()),
                None => widen(Ev::exact(a.neg()).add_f(1.0), DROPPED),
            };
            Outcome::Value(t.m.mul(inner).div(d.mul(d)), t.k)
        }
    }
}
