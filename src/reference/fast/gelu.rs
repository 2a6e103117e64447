//! GELU x·Φ(x) and its derivative Φ(x) + x·φ(x), φ(x) = e^(−x²/2)/√(2π).
//!
//! |x| < 2^−6: [`gelu_band`], an exact leading part plus a binary64 rest from the Taylor series
//! of Φ (see [`super::series`]).
//!
//! 2^−6 ≤ |x| < 38.8: the Mills ratio R(a) = Q(a)/φ(a), a = |x|, from the table of
//! [`super::mills`], with its per-cell relative bound, and φ(a) from the double-word exp.  Then
//! Q(a) = φ(a)·R(a), Φ(x) = Q(a) for x < 0, gelu = x − x·φ·R for x > 0, gelu′ = 1 + φ·(x − R)
//! for x > 0 and φ·(R − a) for x < 0; the cancellations (x − R near 0.75, where gelu′ has its
//! zero for x < 0) are tracked by [`Ev::add`] and [`Ev::add_f`], and decline near the zero.

use super::common::{beside, decay, near_constant, near_side, TAIL, TWO_M53, TWO_M55};
use super::dd::{two_prod, Dd, Ev};
use super::decide::{engine_tiny, rectifier_tail, Outcome};
use super::exp::tables;
use super::mills;
use super::series::{horner, leading, BAND_LIMIT, NORMAL_CDF, NORMAL_SLOPE};
use crate::activation::Role;
use crate::format::Layout;

/// GELU or GELU′ where a closed form decides it (x finite, nonzero, |x| < TAIL; a comparison of
/// x with an f64 constant is exact).  Logarithms computed with mpmath (50 digits); Mills'
/// inequality Q(a) < φ(a)/a for a > 0 (Gordon 1941) is remembered, not derived here.
///
/// |x| < 2^−55: Φ(x) − 1/2 = ∫₀ˣ φ has x's sign and magnitude ≤ |x|·φ(0) = |x|/√(2π) < 0.4|x|.
/// * forward y = x/2 + δ, δ = x(Φ(x) − 1/2) ∈ (0, 0.4x²); with e = ilogb(x/2) ≤ −57 and
///   |x| < 2^(e+2): δ < 6.4·2^(2e) ≤ 6.4·2^(e−57) = 0.8·2^(e−54): just beside x/2, on the
///   positive side;
/// * derivative y = 1/2 + (Φ(x) − 1/2) + xφ(x), both terms of x's sign and ≤ |x|/√(2π), so
///   0 < |y − 1/2| < 0.8|x| < 2^−55 = 2^(ilogb(1/2) − 54).
///
/// x > 9: Q(x) < φ(x)/x < xφ(x), and φ(9) = 2^(−59.75), 9φ(9) = 2^(−56.58) (xφ(x) decreases
/// for x > 1).
/// * forward x − y = xQ(x) ∈ (0, φ(x)), φ(x) < 2^−59 < 2^(ilogb(x) − 54): just below x;
/// * derivative y − 1 = xφ(x) − Q(x) ∈ (0, xφ(x)), xφ(x) < 2^−56 < 2^−54: just above 1.
///
/// x < −38.8, a = −x: forward y = −aQ(a) ∈ (−φ(a), 0), derivative y = Q(a) − aφ(a) ∈
/// (−aφ(a), 0); aφ(a) ≤ 38.8·φ(38.8) = 2^(−1081.99) < 2^−1075: the engine's −0 for both.
#[inline(always)]
fn gelu_closed(format: Layout, x: f64, role: Role) -> Option<Outcome> {
    if x.abs() < TWO_M55 {
        return Some(match role {
            Role::Forward => near_side(x * 0.5, true),
            Role::Derivative => near_constant(0.5, x > 0.0),
        });
    }
    if x > 9.0 {
        return Some(match role {
            Role::Forward => near_side(x, false),
            Role::Derivative => near_constant(1.0, true),
        });
    }
    (x < -38.8).then(|| Outcome::Fixed(engine_tiny(format, true)))
}

/// GELU or GELU′ for |x| < 2^−6 past the closed forms ([`super::series`]), with w = x² exact
/// and φ(0) = 1/√(2π) = c_h + c_l + ε, |ε| ≤ r·φ(0) (the double-word constant):
/// * gelu(x) = x/2 + φ(0)·w·(1 + Σ_(n≥1) P_n·wⁿ) ([`NORMAL_CDF`]): w·c_h = p + q exactly
///   (TwoProd), the leading part x/2 + p, the rest q + w·c_l + p·Σ_(n=1..5) P_n·wⁿ; left out
///   are |P_6|·w⁶·|p| (the series), c_l·w·Σ P_n wⁿ < 2^−53·|p|·w/5, and ε·w·(1 + …) <
///   1.01·r·|p|·(1 + 2^−52);
/// * gelu′(x) = 1/2 + φ(0)·x·(2 + Σ_(n≥1) D_n·wⁿ) ([`NORMAL_SLOPE`]): x·c_h = p + q, the
///   leading part 1/2 + 2p, the rest 2q + 2x·c_l + p·Σ_(n=1..5) D_n·wⁿ; left out are
///   |D_6|·w⁶·|p|, c_l·x·Σ D_n wⁿ < 2^−53·|p|·w, and ε·x·(2 + …) < 2.01·r·|p|·(1 + 2^−52).
#[inline(always)]
fn gelu_band(x: f64, role: Role) -> Outcome {
    let c = tables().inv_sqrt_2pi;
    let w = x * x;
    let w5 = w * w * w * w * w;
    match role {
        Role::Forward => {
            let (p, q) = two_prod(w, c.v.hi);
            let series = p * w * horner(&NORMAL_CDF[..5], w);
            let low = w * c.v.lo;
            let left = p.abs() * (NORMAL_CDF[5].abs() * w5 * w + TWO_M53 * w + 1.02 * c.r);
            leading(
                x * 0.5,
                p,
                q + low + series,
                q.abs() + low.abs() + series.abs(),
                left,
            )
        }
        Role::Derivative => {
            let (p, q) = two_prod(x, c.v.hi);
            let series = p * w * horner(&NORMAL_SLOPE[..5], w);
            let low = 2.0 * x * c.v.lo;
            let left = p.abs() * (NORMAL_SLOPE[5].abs() * w5 * w + TWO_M53 * w + 2.02 * c.r);
            let rest = 2.0 * q + low + series;
            leading(
                0.5,
                2.0 * p,
                rest,
                2.0 * q.abs() + low.abs() + series.abs(),
                left,
            )
        }
    }
}

/// GELU or its derivative at x.
#[inline(always)]
pub fn gelu(format: Layout, x: f64, role: Role) -> Outcome {
    let a = x.abs();
    if a >= TAIL {
        return rectifier_tail(format, x, role);
    }
    if let Some(o) = gelu_closed(format, x, role) {
        return o;
    }
    if a < BAND_LIMIT {
        return gelu_band(x, role);
    }
    let Some(r) = mills::ratio(a) else {
        return Outcome::Decline;
    };
    let tb = tables();
    let xe = Ev::exact(Dd::new(x));
    let e = decay(Dd::prod(x, x).scale2(-1));
    let m = e.m.mul(tb.inv_sqrt_2pi);
    match (role, x > 0.0) {
        (Role::Forward, true) => match e.plain {
            Some(_) => Outcome::Near(x, xe.mul(m).mul(r).neg_scaled(e.k)),
            None => Outcome::Near(x, beside(x, false)),
        },
        (Role::Derivative, true) => match e.plain {
            Some(_) => Outcome::Near(1.0, m.mul(xe.add(r.neg())).scaled(e.k)),
            None => Outcome::Near(1.0, beside(1.0, true)),
        },
        (Role::Forward, false) => Outcome::Value(xe.mul(m).mul(r), e.k),
        (Role::Derivative, false) => Outcome::Value(m.mul(r.add_f(-a)), e.k),
    }
}

trait Scaled {
    fn scaled(self, k: i32) -> Ev;
    fn neg_scaled(self, k: i32) -> Ev;
}

impl Scaled for Ev {
    /// self·2^k, k ≥ −900 (exact).
    #[inline(always)]
    fn scaled(self, k: i32) -> Ev {
        Ev {
            v: self.v.scale2(k),
            r: self.r,
        }
    }
    #[inline(always)]
    fn neg_scaled(self, k: i32) -> Ev {
        self.scaled(k).neg()
    }
}
