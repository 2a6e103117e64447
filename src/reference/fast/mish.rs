//! Mish x·tanh(softplus(x)) and its derivative tanh(sp) + x·sech²(sp)·σ(x), written without
//! any logarithm: with t = e^x, (1 + t)² = e^(2·sp), so tanh(sp) = P/(P + 2), P = t(t + 2), and
//! sech²(sp)·σ(x) = 4t(1 + t)/(P + 2)²·… — in terms of u = e^(−|x|):
//! * x > 0 (t = 1/u, multiply through by u²): n = 1 + 2u, D = 1 + 2u + 2u² (sums of positives),
//!   mish = x·n/D = x − x·2u²/D, mish′ = (n·D + 4x·u²(1 + u))/D² = 1 + 2u²·(2x(1 + u) − D)/D²
//!   (2x(1 + u) − D ≥ 2x − 1 − 2u² > 0.7 for x ≥ 1);
//! * x < 0 (t = u = 2^k·m): mish = x·u(u + 2)/(P + 2), mish′ = u·((u + 2)(P + 2) + 4x(1 + u))/
//!   (P + 2)², whose cancellation near mish′'s zero (x ≈ −1.19) [`Ev::add`] bounds.
//!
//! For x ≥ 1 both roles are a base (x, 1) plus a delta computed without cancellation.  When
//! u < 2^−898 (x < −623), mish = x·u·(1 + O(u)) and mish′ = u·(1 + x)·(1 + O(u)) (|x|/|1 + x| ≈ 1),
//! the dropped relative terms far below [`DROPPED`].  Bounds compose through [`Ev`].

use super::common::{decay, near_constant, near_side, widen, DROPPED, TAIL};
use super::dd::{two_prod, Dd, Ev, SLACK};
use super::decide::{engine_tiny, rectifier_tail, Outcome};
use super::series::{horner, leading, REST_REL};
use crate::activation::Role;
use crate::format::Layout;

/// Mish or Mish′ where a closed form decides it (x finite, nonzero, |x| < TAIL; logarithms from
/// mpmath, 50 digits).
///
/// Forward, x > 20: x − y = x·2u²/D < 2x·e^(−2x) and 2e^(−40) = 2^(−56.71); x < 2^(e+1),
/// e = ilogb(x), so x − y < 2^(e−55.7) < 2^(e−54): just below x.
/// Derivative, x > 22: y − 1 = 2u²(2x(1 + u) − D)/D² > 0 (2x(1 + u) − D ≥ 44 − 1.01), and
/// < 4x·u²·(1 + u) (D ≥ 1) ≤ 4·22·e^(−44)·(1 + e^(−22)) = 2^(−57.01) < 2^−54 (x·e^(−2x)
/// decreases for x > 1/2): just above 1.
/// x < −753, u = e^x: forward |y| ≤ |x|·u(u + 2)/2 ≤ 1.0001·|x|·u; derivative: (u + 2)(P + 2)
/// < 4.1 < 4|x|(1 + u), so y < 0 and |y| ≤ u·4|x|(1 + u)/(P + 2)² ≤ 1.0001·|x|·u; and
/// |x|·e^x ≤ 753·e^(−753) = 2^(−1076.79) for x ≤ −753 (decreasing for x < −1): both roles
/// round to the engine's −0.
#[inline(always)]
fn closed(format: Layout, x: f64, role: Role) -> Option<Outcome> {
    match role {
        Role::Forward if x > 20.0 => Some(near_side(x, false)),
        Role::Derivative if x > 22.0 => Some(near_constant(1.0, true)),
        _ if x < -753.0 => Some(Outcome::Fixed(engine_tiny(format, true))),
        _ => None,
    }
}

/// Inputs with |x| below 2^−6 take [`band`].
pub const BAND: f64 = 0.015625;

/// mish(x) = x·g(x), g = tanh(softplus x) = (t² + 2t)/(t² + 2t + 2), t = e^x, has the Taylor
/// series g = Σ a_n·xⁿ = 3/5 + 8x/25 − 2x²/125 − 86x³/1875 − … (rational coefficients: sympy's
/// `series` of that quotient, each checked against mpmath at 150 digits).  These are a_2 …
/// a_10, so mish = 3x/5 + 8x²/25 + x³·R(x), R = Σ_(n≥2) a_n·x^(n−2).
const FORWARD: [f64; 9] = [
    -2.0 / 125.0,
    -86.0 / 1875.0,
    -7.0 / 18750.0,
    733.0 / 93750.0,
    2413.0 / 2812500.0,
    -124979.0 / 98437500.0,
    -1164467.0 / 3937500000.0,
    33303757.0 / 177187500000.0,
    18841487.0 / 253125000000.0,
];

/// (n + 1)·a_n for n = 2 … 10: mish′ = g + x·g′ = 3/5 + 16x/25 + x²·R′(x),
/// R′ = Σ_(n≥2) (n + 1)·a_n·x^(n−2).
const DERIVATIVE: [f64; 9] = [
    -6.0 / 125.0,
    -344.0 / 1875.0,
    -7.0 / 3750.0,
    733.0 / 15625.0,
    16891.0 / 2812500.0,
    -249958.0 / 24609375.0,
    -1164467.0 / 437500000.0,
    33303757.0 / 17718750000.0,
    207256357.0 / 253125000000.0,
];

/// 3/5, 8/25 and 16/25 as double-word constants hi + lo, hi = RN(c), lo = RN(c − hi) (mpmath
/// at 400 bits; `fractions_match_mpfr` checks them against [`super::dd::constant`]): within
/// 2^−109.3, 2^−111.6 and 2^−110.6 of c, recorded as 2^−104.  3/5 − 0.6 = 2^−53/5 exactly
/// (3·2^53 ≡ 1 mod 5), so 3/5's lo is RN(2^−53/5).
const THREE_FIFTHS: Ev = fraction(0.6, 2.2204460492503132e-17);
const EIGHT_25: Ev = fraction(0.32, -6.661338147750939e-18);
const SIXTEEN_25: Ev = fraction(0.64, -1.3322676295501878e-17);

const fn fraction(hi: f64, lo: f64) -> Ev {
    Ev {
        v: Dd { hi, lo },
        r: 4.930380657631324e-32, // 2^-104
    }
}

/// 2^−109 ≥ |3/5 − THREE_FIFTHS| (2^−109.3 above).
const THREE_FIFTHS_GAP: f64 = 1.5407439555097887e-33;

/// Below 2^−20 the band's rest is a short binary64 sum beside an exact leading part ([`low`]).
const LOW: f64 = 9.5367431640625e-7; // 2^-20

/// 2^−57: below it mish′ sits just above 0.6 ([`low`]).
pub(super) const FLAT: f64 = 6.938893903907228e-18;

/// mish or mish′ for 0 < |x| < 2^−20 (|x| ≥ 2^−149), as an exact leading part plus a binary64
/// rest ([`Outcome::Leading`]), with the series of [`FORWARD`] (g = Σ a_n·xⁿ) and the Cauchy
/// estimate |a_n| ≤ M/2ⁿ, M = 2.8, argued at [`band`]; τ = |x|/2 < 2^−21.
///
/// Forward: x·0.6 = p + q exactly (TwoProd: |x·0.6| ≥ 2^−150 keeps q, a multiple of 2^−202,
/// normal) and 3/5 = 0.6 + 2^−53/5, so y = p + q + c with c = x·2^−53/5 + 8x²/25 + a_2·x³ +
/// a_3·x⁴ + Σ_(n≥4) a_n·x^(n+1); the omitted sum is ≤ |x|·M·τ⁴/(1 − τ) < 0.18·|x|⁵.  c is
/// computed as x·(d + x·(0.32 + x·(a_2 + x·a_3))), d = RN(2^−53/5): Horner of degree 4 (γ_8,
/// Higham, Accuracy and Stability of Numerical Algorithms, eq. 5.3) plus the coefficients'
/// roundings (u each, u = 2^−53) errs by ≤ 9.01u of the magnitude sum
/// |x|·(2^−53/5 + |x|·(8/25 + |a_2|·|x| + |a_3|·x²)) ≤ |x|·(d + 0.33|x|)·(1 + u): well within
/// [`REST_REL`] = 32u of the magnitude passed.  |x|⁵ in binary64 is within 4.01u of itself
/// (|x|⁵ ≥ 2^−745 stays normal), so 0.2·|x|⁵ covers the tail.
///
/// Derivative, |x| < 2^−57: y′ − 0.6 = 2^−53/5 + 16x/25 + x²·R′(x) with |x²·R′| < 0.06·x² <
/// 2^−117 ([`band`]'s bound on R′), so y′ − 0.6 lies within 2^−55.32 ± (2^−57.64 + 2^−117),
/// inside (2^−55.65, 2^−55.08) ⊂ (0, 2^−55) = (0, 2^(ilogb(0.6) − 54)): just above 0.6 for
/// every such x, decided once ([`Outcome::Beside`]).
///
/// Derivative, 2^−57 ≤ |x| < 2^−20: y′ = s + c with s = 0.6 + RN(2^−53/5) (a normalized
/// double-word, the lo within ulp(0.6)/2), c = 16x/25 + b_0·x² + b_1·x³ + (3/5 − s) +
/// Σ_(n≥4) (n + 1)·a_n·xⁿ (b_k = DERIVATIVE[k]); the omitted sum is ≤ M·Σ_(n≥4) (n + 1)·τⁿ ≤
/// 5M·τ⁴/(1 − τ)² < 0.9·x⁴ ((n + 1) ≤ 5·(1 + j) for n = 4 + j; x⁴ in binary64 within 3.01u of
/// itself) and |3/5 − s| ≤ 2^−109.  c is computed as x·(0.64 + x·(b_0 + x·b_1)): as above
/// within 7.01u of the magnitude sum |x|·(16/25 + |b_0|·|x| + |b_1|·x²) < 0.641·|x|.
///
/// Both: |c| < |s|/4 (|c| < 0.33·x² forward, < 0.65·|x| derivative), and the bound passed,
/// at most 2^−47.9 of the magnitude plus x⁴ + 2^−109, is below |c| (as [`Outcome::Leading`]
/// requires; [`super::decide`] declines otherwise) except near the one point where the forward
/// rest cancels, x = −2^−53/1.6 = −5·2^−56 (x·(2^−53/5 + 8x/25) = 0): of the magnitude
/// |x|·(2^−53/5 + 0.33|x|) and |c| ≥ |x|·|2^−53/5 − 0.32|x||·(1 − 2^−20) only there do they
/// differ by 2^47, within a relative 2^−45 of that point, which leaves that input alone to the
/// engine.  The derivative's |c| ≥ 0.63·|x| exceeds 2^−47.9·0.641·|x| + x⁴ + 2^−109 for every
/// |x| ≥ 2^−57 (x⁴ < 2^−60·|x|, 2^−109 < 2^−50·|x|).
#[inline(always)]
fn low(x: f64, role: Role) -> Outcome {
    let a = x.abs();
    let a4 = (a * a) * (a * a);
    let (s, rest, magnitude, truncation) = match role {
        Role::Forward => {
            let (p, q) = two_prod(x, THREE_FIFTHS.v.hi);
            let lo = THREE_FIFTHS.v.lo;
            let rest = x * (lo + x * (EIGHT_25.v.hi + x * (FORWARD[0] + x * FORWARD[1])));
            (
                Dd { hi: p, lo: q },
                rest,
                a * (lo + 0.33 * a),
                0.2 * (a4 * a),
            )
        }
        Role::Derivative => {
            if a < FLAT {
                return near_constant(THREE_FIFTHS.v.hi, true);
            }
            let rest = x * (SIXTEEN_25.v.hi + x * (DERIVATIVE[0] + x * DERIVATIVE[1]));
            (THREE_FIFTHS.v, rest, 0.641 * a, a4 + THREE_FIFTHS_GAP)
        }
    };
    let bound = (magnitude * REST_REL + truncation) * SLACK;
    Outcome::Leading(s, rest, bound)
}

/// mish or mish′ for 2^−20 ≤ |x| < 2^−6 (below: [`low`]), without exp: an exact leading part
/// plus a binary64 rest ([`Outcome::Leading`]), with y = x·(3/5 + x·(8/25 + x·R)) and y′ = 3/5 +
/// x·(16/25 + x·R′), R and R′ by Horner in binary64.
///
/// Truncation.  g = 1 − 2/h, h(z) = e^(2z) + 2e^z + 2, is analytic for |z| < 2.38 (the zeros
/// of h are z = ln √2 + i(±3π/4 + 2πm)).  On |z| = 2 the minimum of |h| over 200 000 equally
/// spaced points is 1.1166 (mpmath, 30 digits) and |h′| ≤ 2e⁴ + 2e² < 124 there, so |h| ≥
/// 1.1166 − 124·(2π·2/200 000)/2 > 1.112 and |g| ≤ 1 + 2/1.112 < 2.8 =: M; Cauchy's estimate
/// gives |a_n| ≤ M/2ⁿ.  With τ = |x|/2 ≤ 2^−7 the omitted tails are ≤ M·τ^11/(x²(1 − τ)) (R)
/// and ≤ 12·M·τ^11/(x²(1 − τ)²) (R′: n + 1 = 12 + j ≤ 12·(1 + j) for n = 11 + j), growing with
/// |x|; relative to |R| ≥ 0.01528 and |R′| ≥ 0.04513 (the first coefficient less the others'
/// magnitudes at |x| = 2^−6) they are at most 2^−57.5 and 2^−55.4 at the band's edge.
///
/// Rounding of R̂, R̂′.  Σ|b_k|·|x|^k over the kept coefficients is at most 0.0168 ≤ 1.094·|R|
/// and 0.0509 ≤ 1.127·|R′| (same bounds; checked from the tables by `band_constants` below), so
/// Horner of degree 8 (Higham, Accuracy and Stability of Numerical Algorithms, eq. 5.3: γ_16)
/// plus the coefficients' own roundings err by ≤ 1.13·17.1u·|R| < 20u·|R| (u = 2^−53); with
/// the truncation, R̂ and R̂′ are within 21u of R and R′.
///
/// The parts.  w = x² is exact (x has at most 24 significant bits).  Forward: x·0.6 = p₁ + q₁
/// and w·0.32 = p₂ + q₂ exactly (TwoProd), the leading part p₁ + p₂ (TwoSum, exact), and the
/// rest c = q₁ + q₂ + x·(3/5 − 0.6) + w·(8/25 − 0.32) + x·w·R summed in binary64 from
/// q₁, q₂, RN(x·lo(3/5)), RN(w·lo(8/25)) and RN(RN(x·w)·R̂).  Derivative: x·0.64 = p + q
/// exactly, the leading part 0.6 + p, the rest c = q + (3/5 − 0.6) + x·(16/25 − 0.64) + w·R′
/// from q, lo(3/5), RN(x·lo(16/25)) and RN(w·R̂′).  Each lo is within a relative 2^−54 of the
/// difference it stands for (gaps 2^−109.3, 2^−111.6, 2^−110.6 against 2^−55.3, 2^−57.1,
/// 2^−56.1), so each term is within 2u (lo terms), 23.01u (forward x·w·R̂: x·w, R̂, the
/// product) or 22.01u (w·R̂′) of its exact value, and the recursive sum adds γ_4 (γ_3) of the
/// terms' magnitudes: ≤ 27.1u of the exact magnitudes, ≤ 27.2u of the computed ones passed to
/// [`leading`] — within [`REST_REL`] = 32u, no further truncation.
///
/// [`Outcome::Leading`]'s conditions: |x·w·R| ≥ 0.0152·|x|³ ≥ 2^−46·|x| and |w·R′| ≥
/// 0.045·x² ≥ 2^−45.5 exceed the other terms together (≤ 2^−53·|x| forward: |q₁| ≤ 2^−53·0.6|x|,
/// 2^−55.3|x|, |q₂| and the 8/25 term ≤ 2^−56·|x|; ≤ 2^−54 derivative) by 2^6 at least, so
/// |c| exceeds the bound (≤ 2^−47.9 of a magnitude at most 1.1·|c|), and |c| < |s|/4 (|c| <
/// 0.02·|x|³ against 0.59·|x|; |c| < 0.06·x² against 0.59).  Every term is above 2^−20·2^−60,
/// so none underflows.
#[inline(always)]
fn band(x: f64, role: Role) -> Outcome {
    let w = x * x;
    match role {
        Role::Forward => {
            let (p1, q1) = two_prod(x, THREE_FIFTHS.v.hi);
            let (p2, q2) = two_prod(w, EIGHT_25.v.hi);
            let a = x * THREE_FIFTHS.v.lo;
            let b = w * EIGHT_25.v.lo;
            let cubic = (x * w) * horner(&FORWARD, x);
            let rest = q1 + q2 + a + b + cubic;
            let magnitude = q1.abs() + q2.abs() + a.abs() + b.abs() + cubic.abs();
            leading(p1, p2, rest, magnitude, 0.0)
        }
        Role::Derivative => {
            let (p, q) = two_prod(x, SIXTEEN_25.v.hi);
            let a = x * SIXTEEN_25.v.lo;
            let quadratic = w * horner(&DERIVATIVE, x);
            let rest = q + THREE_FIFTHS.v.lo + a + quadratic;
            let magnitude = q.abs() + THREE_FIFTHS.v.lo + a.abs() + quadratic.abs();
            leading(THREE_FIFTHS.v.hi, p, rest, magnitude, 0.0)
        }
    }
}

/// mish(x) or mish′(x).
#[inline(always)]
pub fn mish(format: Layout, x: f64, role: Role) -> Outcome {
    let a = x.abs();
    if a >= TAIL {
        return rectifier_tail(format, x, role);
    }
    if let Some(o) = closed(format, x, role) {
        return o;
    }
    if a < LOW {
        return low(x, role);
    }
    if a < BAND {
        return band(x, role);
    }
    let xe = Ev::exact(Dd::new(x));
    let t = decay(Dd::new(a));
    let u = match t.plain {
        Some(u) => u,
        None => {
            // x < −623: mish = x·u·(1 + O(u)), mish′ = u·(1 + x)·(1 + O(u)).
            let v = match role {
                Role::Forward => xe.mul(t.m),
                Role::Derivative => t.m.mul(xe.add_f(1.0)),
            };
            return Outcome::Value(widen(v, DROPPED), t.k);
        }
    };
    let u1 = u.add_f(1.0);
    if x > 0.0 {
        let u2 = u.mul(u).mul_f(2.0);
        let d = u.mul(u1).mul_f(2.0).add_f(1.0);
        return match role {
            Role::Forward if x >= 1.0 => Outcome::Near(x, xe.mul(u2).div(d).neg()),
            Role::Forward => Outcome::Value(xe.mul(u.mul_f(2.0).add_f(1.0)).div(d), 0),
            Role::Derivative if x >= 1.0 => {
                let inner = xe.mul(u1).mul_f(2.0).add(d.neg());
                Outcome::Near(1.0, u2.mul(inner).div(d.mul(d)))
            }
            Role::Derivative => {
                let n = u.mul_f(2.0).add_f(1.0);
                let num = n.mul(d).add(xe.mul(u2).mul(u1).mul_f(2.0));
                Outcome::Value(num.div(d.mul(d)), 0)
            }
        };
    }
    let u2p = u.add_f(2.0);
    let p2 = u.mul(u2p).add_f(2.0);
    match role {
        Role::Forward => Outcome::Value(xe.mul(t.m).mul(u2p).div(p2), t.k),
        Role::Derivative => {
            let inner = u2p.mul(p2).add(xe.mul(u1).mul_f(4.0));
            Outcome::Value(t.m.mul(inner).div(p2.mul(p2)), t.k)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rug::ops::Pow;
    use rug::Float;

    /// The figures the band's bound quotes: Σ|b_k|·|x|^k and |b_0| − Σ_(k≥1)|b_k|·|x|^k at
    /// |x| = 2^−6, for R and R′.
    #[test]
    fn band_constants() {
        let b = BAND;
        for (table, most, least) in [(&FORWARD, 0.0168, 0.01528), (&DERIVATIVE, 0.0509, 0.04513)] {
            let tail: f64 = (1..9).map(|k| table[k].abs() * b.powi(k as i32)).sum();
            assert!(table[0].abs() + tail <= most * 0.9999, "{table:?}");
            assert!(table[0].abs() - tail >= least, "{table:?}");
            assert!((table[0].abs() + tail) / (table[0].abs() - tail) <= 1.127 + 1e-4);
        }
    }

    /// The literal double-words are [`super::super::dd::constant`] of the fractions, and 3/5's
    /// gap below 2^−109.
    #[test]
    fn fractions_match_mpfr() {
        use super::super::dd::constant;
        for (n, d, word) in [
            (3u32, 5u32, THREE_FIFTHS),
            (8, 25, EIGHT_25),
            (16, 25, SIXTEEN_25),
        ] {
            let c = Float::with_val(300, n) / d;
            let e = constant(&c);
            assert_eq!((e.v, e.r), (word.v, word.r), "{n}/{d}");
        }
        let c = Float::with_val(300, 3) / 5u32 - THREE_FIFTHS.v.hi - THREE_FIFTHS.v.lo;
        assert!(c.abs() <= THREE_FIFTHS_GAP);
        assert_eq!(LOW, 2f64.powi(-20));
        assert_eq!(FLAT, 2f64.powi(-57));
        assert_eq!(THREE_FIFTHS_GAP, 2f64.powi(-109));
    }

    /// The tables against MPFR's mish at x = ±0.1 (inside the series' disc |x| < 2.38, where
    /// every kept term is visible): the difference is the omitted tail, |a_11|·0.1^12 ≈
    /// 2.4·10^−17 (forward) and 12·|a_11|·0.1^11 ≈ 2.9·10^−15 (derivative), while a wrong a_10
    /// would show as 7.4·10^−16 and 8.2·10^−14.
    #[test]
    fn series_matches_mpfr() {
        let p = 300;
        for x in [0.1, -0.1] {
            let xf = Float::with_val(p, x);
            let sp = Float::with_val(p, xf.clone().exp()).ln_1p();
            let th = Float::with_val(p, sp.clone().tanh());
            let mish = Float::with_val(p, &th * &xf);
            let sig = Float::with_val(p, 1) / (Float::with_val(p, -&xf).exp() + 1u32);
            let slope = th + Float::with_val(p, &xf * sp.sech().square()) * sig;
            let series = |table: &[f64], power: i32| {
                let mut r = Float::with_val(p, 0);
                for &c in table.iter().rev() {
                    r = r * x + c;
                }
                r * Float::with_val(p, x).pow(power)
            };
            let fwd = series(&FORWARD, 3)
                + Float::with_val(p, 3) / 5u32 * x
                + Float::with_val(p, 8) / 25u32 * (x * x);
            let der = series(&DERIVATIVE, 2)
                + Float::with_val(p, 3) / 5u32
                + Float::with_val(p, 16) / 25u32 * x;
            let ef = Float::with_val(p, fwd - &mish).abs().to_f64();
            let ed = Float::with_val(p, der - &slope).abs().to_f64();
            assert!(ef < 6e-17, "forward at {x}: {ef:e}");
            assert!(ed < 7e-15, "derivative at {x}: {ed:e}");
        }
    }
}
