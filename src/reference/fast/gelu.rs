//! GELU x·Φ(x) and its derivative Φ(x) + x·φ(x), φ(x) = e^(−x²/2)/√(2π).
//!
//! |x| ≤ 4: Φ(x) = 1/2 + φ(x)·x·H(x²), H(w) = Σ_{n≥0} wⁿ/(2n+1)!! (Marsaglia's series; every
//! term positive).  With N terms, N ≥ x² and the N-th term < 2^−112 (estimated in f64 within a
//! relative 2^−40), the ratio of successive omitted terms is x²/(2n+3) ≤ 1/2, so the remainder
//! is < 2^−110 ≤ 2^−110·H.  Double-word Horner over positive terms: each step adds at most
//! 2·OP relative, each coefficient 2^−104 relative to its own term, so r_H ≤ 2N·OP + 2^−104 +
//! 2^−110.  The terms past both n ≥ x² and 2^−53 of the largest earlier term (so, with ratios
//! ≤ 1/2, at most 2^−52 of H together) are summed in f64 first, adding 4N·2^−53·2^−52.  Then gelu = x/2 + φ·x²·H (delta ≥ 0) and gelu′ = 1/2 + φ·x·(H + 1), written as
//! base + delta; the cancellation for x < 0 (gelu′ has a zero near −0.75) is tracked by
//! [`Ev::add_f`].  For |x| < 1/4, e^(−x²/2) = 1 + expm1(−x²/2) comes from expm1's short series
//! (x²/2 < 1/32), without a table exp.
//!
//! |x| > 4: the Mills ratio R(a) = Q(a)/φ(a), a = |x|, by Laplace's continued fraction
//! R = 1/(a + 1/(a + 2/(a + 3/(a + …)))).  All partial numerators and denominators are
//! positive, so R is monotone in the tail t_N = N/(a + t_(N+1)) ∈ (0, N/a): evaluating the
//! backward recurrence t_(k−1) = k/(a + t_k) from t_N = 0 and from t_N = T ≥ N/a brackets R.
//! Rounding: each step is a sum of positives and a quotient, so the relative error grows by at
//! most 2·OP per step (rel(a + t) ≤ rel(t)); r_R ≤ |R_0 − R_T|/R_0 + 2·(2N + 2)·OP.  Then
//! Q(x) = φ·R, Φ(x) = φ(a)·R(a) for x < 0, gelu = x − x·φ·R for x > 0, gelu′ = 1 + φ·(x − R)
//! for x > 0 and φ·(R − a) for x < 0 (no cancellation: R < 1/a < a).

use super::common::{beside, decay, near_constant, near_side, TAIL, TWO_M53, TWO_M55};
use super::dd::{two_prod, Dd, Ev, OP, SLACK};
use super::decide::{engine_beside, engine_tiny, Outcome};
use super::exp::{expm1, tables};
use super::series::{horner, leading, BAND_LIMIT, NORMAL_CDF, NORMAL_SLOPE};
use crate::activation::Role;
use crate::format::Layout;

/// Threshold between the series and the continued fraction.
const SERIES_MAX: f64 = 4.0;

/// H(x²) of the module comment, with its bound.
#[inline(always)]
fn series(x2: Dd) -> Ev {
    let t = tables();
    let w = x2.hi;
    let mut n = 1usize;
    let mut term = w / 3.0;
    while (n as f64) < w || term > 1.9e-34 {
        n += 1;
        term *= w / (2 * n + 1) as f64;
        if n >= 127 {
            break;
        }
    }
    // The terms from index `split` on, each at most 2^−53 of the largest term before them
    // (so their sum is at most 2^−52 of H), go in f64: see [`series`]'s bound below.
    let mut split = 0usize;
    let mut weight = 1.0f64;
    let mut largest = 1.0f64;
    while split + 1 < n && (weight > largest * 1.1102230246251565e-16 || (split as f64) < w) {
        split += 1;
        weight *= w / (2 * split + 1) as f64;
        largest = largest.max(weight);
    }
    let small_tail = split + 1 < n;
    let mut h = if small_tail {
        let mut q = t.odd_fact_inv[n - 1].hi;
        for i in (split..n - 1).rev() {
            q = q.mul_add(w, t.odd_fact_inv[i].hi);
        }
        Dd::new(q)
    } else {
        split = n - 1;
        t.odd_fact_inv[n - 1]
    };
    for i in (0..split).rev() {
        h = h.mul(x2).add(t.odd_fact_inv[i]);
    }
    // The f64 tail: positive terms, so Horner's relative error is at most γ_(2(n−split)) plus
    // 2^−53 per coefficient and per power of w = x2.hi (against x2): below 4n·2^−53 in all,
    // entering with weight ≤ 2^−52 (the tail after index ≥ w has term ratios ≤ 1/2).
    let tail = if small_tail {
        4.0 * n as f64 * 1.1102230246251565e-16 * 2.220446049250313e-16
    } else {
        0.0
    };
    Ev {
        v: h,
        r: (2.0 * n as f64 * OP + 4.930380657631324e-32 + 7.7e-34 + tail) * SLACK,
    }
}

/// The continued fraction of [`mills`] from the tails t_N = 0 and t_N = `high`, run side by
/// side: the two recurrences are independent, so the processor overlaps their divisions (each
/// gives the bits it would give alone). A named function rather than a closure so that it
/// inlines into the FMA build, see [`super::arch`].
#[inline(always)]
fn mills_pair(a: f64, n: usize, high: f64) -> (Dd, Dd) {
    let (mut low_tail, mut high_tail) = (Dd::new(0.0), Dd::new(high));
    for k in (1..=n).rev() {
        let k = Dd::new(k as f64);
        low_tail = k.div(low_tail.add_f(a));
        high_tail = k.div(high_tail.add_f(a));
    }
    let one = Dd::new(1.0);
    (one.div(low_tail.add_f(a)), one.div(high_tail.add_f(a)))
}

/// R(a) for a > 4 with its bound (None if the bracket is too wide).
#[inline(always)]
///
/// The bracket proves the bound whatever N is, so a short run (N from [`MILLS_SHORT`]) comes
/// first and the long one only when the short bracket is too wide.
fn mills(a: f64) -> Option<Ev> {
    for n in [(MILLS_SHORT / a) as usize + 4, (440.0 / a) as usize + 10] {
        // T ≥ N/a: one step up from RN(N/a).
        let (r0, r1) = mills_pair(a, n, super::dd::next_up(n as f64 / a));
        let width = r0.sub(r1).hi.abs();
        let r = (width / r0.hi * SLACK + 2.0 * (2 * n + 2) as f64 * OP) * SLACK;
        if r < 1e-25 {
            return Some(Ev { v: r0, r });
        }
    }
    None
}

/// N·a for the short run of [`mills`]. The least N whose bracket is narrower than 10^−26,
/// computed with mpmath at 300 bits: 76 at a = 4, 63 at 4.5, 54 at 5, 42 at 6, 29 at 8, 23 at
/// 10, 17 at 15, 14 at 20, 11 at 30, 10 at 38.8; 320/a + 4 exceeds each by 10% or more.
const MILLS_SHORT: f64 = 320.0;

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
        return match (role, x > 0.0) {
            (Role::Forward, true) => {
                engine_beside(format, x, false).map_or(Outcome::Decline, Outcome::Fixed)
            }
            (Role::Derivative, true) => {
                engine_beside(format, 1.0, true).map_or(Outcome::Decline, Outcome::Fixed)
            }
            (_, false) => Outcome::Fixed(engine_tiny(format, true)),
        };
    }
    if let Some(o) = gelu_closed(format, x, role) {
        return o;
    }
    if a < BAND_LIMIT {
        return gelu_band(x, role);
    }
    let tb = tables();
    let x2 = Dd::prod(x, x);
    let xe = Ev::exact(Dd::new(x));
    if a <= SERIES_MAX {
        let half = x2.scale2(-1);
        let density = if a < 0.25 {
            // x²/2 < 1/32: e^(−x²/2) = 1 + expm1(−x²/2) by expm1's short series, no table exp
            // (1 + em with em ∈ (−1/32, 0] loses nothing; tracked by Ev::add_f).
            expm1(half.neg()).add_f(1.0)
        } else {
            decay(half).plain.expect("e^(-x²/2) for |x| ≤ 4")
        };
        let phi = density.mul(tb.inv_sqrt_2pi);
        let h = series(x2);
        return match role {
            Role::Forward => Outcome::Near(x * 0.5, phi.mul(Ev::exact(x2)).mul(h)),
            Role::Derivative => Outcome::Near(0.5, phi.mul(xe).mul(h.add_f(1.0))),
        };
    }
    let Some(r) = mills(a) else {
        return Outcome::Decline;
    };
    let e = decay(x2.scale2(-1));
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
