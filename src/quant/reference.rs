//! The exact quantized outputs: for each of the 256 codes, t = f(x)/S_out + Z_out at the exact
//! rational x = S_in·(q − Z_in), rounded to an integer both ways (ties to even, the convention
//! judged; ties away from zero, the other common one) and clamped to the type's range.
//!
//! x is usually no binary float (0.1·k), so f is evaluated three ways: exactly, by the
//! function's [`Activation::eval_rational`], where f is rational at x (the piecewise-rational
//! functions and pieces: the only places where t can be an exact tie); exactly at x when x is
//! dyadic; otherwise at both ends of a 2^−p enclosure [x⁻, x⁺] of x, taking the hull of the two
//! enclosures of f widened by its own width plus 2^−p·(1 + |f|). The hull alone contains f(x)
//! where f is monotone on [x⁻, x⁺]; at a turning point inside, f moves at most |f″|·(x⁺ − x⁻)²
//! from the ends, which the margin covers while |f″|·x² < 2^p (every catalog function at
//! p ≥ 64 for parameters below 2^20). Like the engine's Ziv loop, p doubles until both ends
//! of t's interval round to the same codes; f is irrational at every other x (e^x is for
//! rational x ≠ 0), so t is never a tie there and the loop ends.

use super::spec::QuantSpec;
use crate::activation::{Activation, Constants, Ctx, Role, Value};
use crate::reference::MAX_PRECISION;
use rug::float::Round;
use rug::{Float, Integer, Rational};

/// First working precision in bits.
const START_PRECISION: u32 = 64;

/// The correctly rounded output of one code.
#[derive(Clone, Debug)]
pub struct Expected {
    /// The input code.
    pub q: i32,
    /// Its real value S_in·(q − Z_in).
    pub x: Rational,
    /// t, exactly when known (rational f(x)), else `None`.
    pub t_exact: Option<Rational>,
    /// t rounded to nearest binary64 (from an interval far narrower than that when inexact).
    pub t: f64,
    /// t clamped to the type's range, as binary64: what the error in steps is measured from.
    pub t_clamped: f64,
    /// clamp(RNE(t)): the correctly rounded code.
    pub nearest_even: i32,
    /// clamp(round half away from zero (t)).
    pub ties_away: i32,
    /// Working precision that decided it (0 when exact).
    pub precision: u32,
    /// t is exactly halfway between two codes of the type's range.
    pub tie: bool,
}

/// The 256 expected outputs, smallest code first.
pub fn expected_table(
    spec: &QuantSpec,
    function: &dyn Activation,
    role: Role,
    constants: &Constants,
) -> Result<Vec<Expected>, String> {
    spec.ty
        .codes()
        .map(|q| expected(spec, function, role, constants, q))
        .collect()
}

/// The expected output of one code.
pub fn expected(
    spec: &QuantSpec,
    function: &dyn Activation,
    role: Role,
    constants: &Constants,
    q: i32,
) -> Result<Expected, String> {
    let x = spec.real_input(q);
    let (lo, hi) = (spec.ty.min(), spec.ty.max());
    let mut prec = START_PRECISION;
    loop {
        let ctx = Ctx { prec, constants };
        if let Some((y_lo, y_hi)) = enclose(function, role, &ctx, &x) {
            let exact = y_lo == y_hi;
            let (t_lo, t_hi) = (spec.exact_output(&y_lo), spec.exact_output(&y_hi));
            let even = (nearest_even(&t_lo), nearest_even(&t_hi));
            let away = (ties_away(&t_lo), ties_away(&t_hi));
            let clamp = |v: Integer| v.clamp(&Integer::from(lo), &Integer::from(hi)).to_i32();
            let (e0, e1) = (clamp(even.0), clamp(even.1));
            let (a0, a1) = (clamp(away.0), clamp(away.1));
            if e0 == e1 && a0 == a1 {
                let mid = Rational::from(&t_lo + &t_hi) / 2u32;
                let t = nearest_f64(&mid);
                let tie =
                    exact && split(&t_lo).1 == Rational::from((1, 2)) && t_lo > lo && t_lo < hi;
                return Ok(Expected {
                    tie,
                    q,
                    x,
                    t_exact: exact.then_some(t_lo),
                    t,
                    t_clamped: t.clamp(f64::from(lo), f64::from(hi)),
                    nearest_even: e0.expect("clamped into i32"),
                    ties_away: a0.expect("clamped into i32"),
                    precision: if exact { 0 } else { prec },
                });
            }
        }
        prec *= 2;
        if prec > MAX_PRECISION {
            return Err(format!(
                "{} {:?} at code {q}: rounding undecided at {MAX_PRECISION} bits",
                function.name(),
                role
            ));
        }
    }
}

/// An interval [lo, hi] of rationals that holds f(x) (lo = hi when exact); `None` asks for
/// more precision (an enclosure with a non-finite end).
fn enclose(
    f: &dyn Activation,
    role: Role,
    ctx: &Ctx,
    x: &Rational,
) -> Option<(Rational, Rational)> {
    if let Some(y) = f.eval_rational(x, role, ctx) {
        return Some((y.clone(), y));
    }
    let prec = ctx.prec;
    let below = Float::with_val_round(prec, x, Round::Down).0;
    let above = Float::with_val_round(prec, x, Round::Up).0;
    if below == above {
        return bounds(f.eval(&below, role, ctx));
    }
    let (a_lo, a_hi) = bounds(f.eval(&below, role, ctx))?;
    let (b_lo, b_hi) = bounds(f.eval(&above, role, ctx))?;
    let lo = a_lo.min(b_lo);
    let hi = a_hi.max(b_hi);
    let size = Rational::from(lo.abs_ref()).max(Rational::from(hi.abs_ref()));
    let margin = Rational::from(&hi - &lo) + (size + 1u32) * (Rational::from(1) >> prec);
    Some((lo - &margin, hi + margin))
}

/// The ends of a function's value as exact rationals.
fn bounds(value: Value) -> Option<(Rational, Rational)> {
    match value {
        Value::Exact(q) => Some((q.clone(), q)),
        Value::Enclosed(iv) => Some((iv.lo.to_rational()?, iv.hi.to_rational()?)),
        Value::Near { base, delta } => {
            let (d_lo, d_hi) = (delta.lo.to_rational()?, delta.hi.to_rational()?);
            Some((&base + d_lo, base + d_hi))
        }
    }
}

/// RNE(t): the nearest integer, an exact half to the even one.
pub fn nearest_even(t: &Rational) -> Integer {
    let (floor, frac) = split(t);
    match frac.cmp(&Rational::from((1, 2))) {
        std::cmp::Ordering::Less => floor,
        std::cmp::Ordering::Greater => floor + 1u32,
        std::cmp::Ordering::Equal if floor.is_even() => floor,
        std::cmp::Ordering::Equal => floor + 1u32,
    }
}

/// The nearest integer, an exact half away from zero (C's `round`).
pub fn ties_away(t: &Rational) -> Integer {
    let (floor, frac) = split(t);
    match frac.cmp(&Rational::from((1, 2))) {
        std::cmp::Ordering::Less => floor,
        std::cmp::Ordering::Greater => floor + 1u32,
        std::cmp::Ordering::Equal if t.cmp0().is_lt() => floor,
        std::cmp::Ordering::Equal => floor + 1u32,
    }
}

/// ⌊t⌋ and t − ⌊t⌋ ∈ [0, 1).
fn split(t: &Rational) -> (Integer, Rational) {
    let floor = t.floor_ref();
    let floor = Integer::from(floor);
    let frac = Rational::from(t - &floor);
    (floor, frac)
}

/// q rounded to the nearest binary64 (see the engine's `nearest_f64`).
fn nearest_f64(q: &Rational) -> f64 {
    Float::with_val(1024, q).to_f64()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::quant::spec::{IntType, QuantTexts};
    use crate::reference::ParamRounding;

    fn spec(ty: IntType, s_in: &str, z_in: &str, s_out: &str, z_out: &str) -> QuantSpec {
        QuantSpec::parse(
            ty,
            &QuantTexts {
                input_scale: Some(s_in),
                input_zero_point: Some(z_in),
                output_scale: Some(s_out),
                output_zero_point: Some(z_out),
            },
        )
        .unwrap()
    }

    fn table(name: &str, s: &QuantSpec) -> Vec<Expected> {
        let f = crate::activation::lookup(name).unwrap();
        let c = Constants::resolve(f, &[], ParamRounding::Exact, &crate::format::Binary32);
        expected_table(s, f, Role::Forward, &c).unwrap()
    }

    #[test]
    fn ties_round_to_even_and_away_is_counted_apart() {
        // Rounding rules (IEEE 754-2019 §4.3.1 roundTiesToEven; C's round() ties away).
        for (t, even, away) in [
            ((5, 2), 2, 3),
            ((-5, 2), -2, -3),
            ((7, 2), 4, 4),
            ((-3, 2), -2, -2),
            ((13, 10), 1, 1),
            ((-17, 10), -2, -2),
        ] {
            let t = Rational::from(t);
            assert_eq!(nearest_even(&t), even, "{t}");
            assert_eq!(ties_away(&t), away, "{t}");
        }
    }

    #[test]
    fn relu_with_non_dyadic_scales_has_exact_ties() {
        // x = 0.1·q, t = x/0.2 = q/2: a tie at every odd positive q, though x is no binary
        // float (hand computation).
        let s = spec(IntType::I8, "0.1", "0", "0.2", "0");
        let t = table("relu", &s);
        let at = |q: i32| &t[(q + 128) as usize];
        assert_eq!((at(3).nearest_even, at(3).ties_away), (2, 2));
        assert_eq!((at(5).nearest_even, at(5).ties_away), (2, 3));
        assert_eq!(at(5).t_exact, Some(Rational::from((5, 2))));
        assert_eq!((at(-5).nearest_even, at(-5).ties_away), (0, 0));
        // Odd q in 1..=127 are ties; ties away and to even differ for half of them.
        assert_eq!(t.iter().filter(|e| e.tie).count(), 64);
        let differ = t.iter().filter(|e| e.nearest_even != e.ties_away).count();
        assert_eq!(differ, 32);
    }

    #[test]
    fn sigmoid_u8_table_matches_hand_values_and_clamps() {
        // u8 sigmoid, S_in = 1/16, Z_in = 128, S_out = 1/256, Z_out = 0: t = 256·σ(x).
        let s = spec(IntType::U8, "0.0625", "128", "0.00390625", "0");
        let t = table("sigmoid", &s);
        // σ(0) = 1/2 → t = 128 exactly.
        assert_eq!(t[128].t_exact, Some(Rational::from(128)));
        assert_eq!(t[128].nearest_even, 128);
        // σ(127/16) = 0.99964…·256 = 255.909… → 256, clamped to 255 (mpmath by hand:
        // 256/(1 + exp(-7.9375)) = 255.9084…).
        assert_eq!(t[255].nearest_even, 255);
        assert!((t[255].t - 255.9084).abs() < 1e-3, "{}", t[255].t);
        assert_eq!(t[255].t_clamped, 255.0);
        // σ(−8) = 3.35e-4 → t = 0.0858… → 0.
        assert_eq!(t[0].nearest_even, 0);
    }
}
