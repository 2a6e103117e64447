//! SELU: λx for x > 0, λα·(e^x − 1) for x ≤ 0; derivative λ for x ≥ 0 (the engine's right-hand
//! value at 0), λα·e^x for x < 0.
//!
//! Two kinds.  When λ, α and λα are exact f64 (as `--param-rounding f32` or `format` makes
//! them), the negative side is ELU with α' = λα ([`super::elu`], which takes any exact f64 α).
//! The published decimals are not binary64 numbers, so by default λ and λα are double-word
//! constants within a relative 2^−103 ([`double_word`]) and every value below is an [`Ev`]:
//! * x > 0: λx and λ are rationals the engine rounds as exact values ([`Outcome::Rational`]);
//! * −1 < x < 0: λα·expm1(x) (expm1's bound holds down to the smallest subnormal x), and
//!   λα + λα·expm1(x) for the derivative (two terms of opposite sign, the second below
//!   |x|·λα, so the sum's bound stays within twice the terms');
//! * x ≤ −1: −λα + λα·e^x (the delta dropped below 2^−898, [`DROPPED`]) and λα·e^x;
//! * the closed forms of ELU with λα's high part for its binary exponent: forward x < −38.2
//!   is −λα widened by e^(−38.2) < 2^−55 relative; derivative x > −2^−55 is λα widened by
//!   |x| < 2^−55; derivative x below −(1076 + e)·0.6932 is the engine's +0.
//!
//! Where −λα or λα lies closer to a rounding boundary than these bounds, the decision declines
//! to the engine; for the published constants it does not (λα = 1.7580993408473766…).
//!
//! [`double_word`]: super::dd::double_word
//! [`DROPPED`]: super::common::DROPPED

use super::common::{decay, widen, DROPPED, TAIL, TWO_M55};
use super::dd::{double_word, two_prod, Dd, Ev};
use super::decide::{engine_tiny, Outcome};
use super::exp::expm1;
use super::{elu, exact_f64, Kind};
use crate::activation::{Constants, Role};
use crate::format::Layout;
use crate::reference::Real;
use rug::Rational;

/// λ and λα as double-words, the kind of the published (non-binary64) constants.
#[derive(Clone, Copy, Debug)]
pub struct Wide {
    lambda: Ev,
    scaled_alpha: Ev,
}

impl Wide {
    /// λα's high part, whose exponent places the derivative's engine-zero threshold.
    #[inline(always)]
    pub(super) fn scaled_alpha_hi(self) -> f64 {
        self.scaled_alpha.v.hi
    }
}

/// The fast-path kind for SELU's resolved constants: exact normal f64 λ, α and λα give
/// [`Kind::Selu`]; other rational λ, α in [2^−100, 2^100] give [`Kind::SeluWide`].
pub(super) fn kind(c: &Constants) -> Option<Kind> {
    let (lambda, alpha) = (c.get("lambda").exact()?, c.get("alpha").exact()?);
    if let (Some(l), Some(a)) = (exact_f64(Some(lambda)), exact_f64(Some(alpha))) {
        let (product, error) = two_prod(l, a);
        if error == 0.0 && product.is_normal() {
            return Some(Kind::Selu(l, product));
        }
    }
    let scaled_alpha = Rational::from(lambda * alpha);
    let wide = Wide {
        lambda: double_word(&Real::Exact(lambda.clone()))?,
        scaled_alpha: double_word(&Real::Exact(scaled_alpha))?,
    };
    let sane = |v: &Ev| (7.9e-31..=1.2e30).contains(&v.v.hi); // within [2^−100, 2^100]
    (sane(&wide.lambda) && sane(&wide.scaled_alpha)).then_some(Kind::SeluWide(wide))
}

/// selu(x) or selu′(x); `scaled_alpha` = λα exactly.
#[inline(always)]
pub fn selu(format: Layout, x: f64, lambda: f64, scaled_alpha: f64, role: Role) -> Outcome {
    if x > 0.0 {
        return match role {
            // λx = p + e exactly (TwoProd; e is normal or zero: |λx| ≥ 2^−149·λ, λ normal);
            // an exact value with a zero error bound.
            Role::Forward => {
                let (p, e) = two_prod(lambda, x);
                if e == 0.0 {
                    Outcome::Exact(p)
                } else {
                    Outcome::Value(Ev::exact(Dd { hi: p, lo: e }), 0)
                }
            }
            Role::Derivative => Outcome::Exact(lambda),
        };
    }
    elu::elu(format, x, scaled_alpha, role)
}

/// selu(x) or selu′(x) with double-word constants (see the module comment).
#[inline(always)]
pub fn selu_wide(format: Layout, x: f64, c: Wide, role: Role) -> Outcome {
    let la = c.scaled_alpha;
    match role {
        Role::Forward if x > 0.0 => return Outcome::Rational(c.lambda.mul_f(x)),
        Role::Forward if x == 0.0 => return Outcome::Decline,
        Role::Derivative if x >= 0.0 => return Outcome::Rational(c.lambda),
        _ => {}
    }
    if x <= -TAIL {
        // The engine's `above(−λα)` / `tiny`: −λα is no rounding boundary, so the engine
        // decides the enclosure of −λα + δ, |δ| < 2^−1000·λα.
        return match role {
            Role::Forward => Outcome::Value(widen(la.neg(), DROPPED), 0),
            Role::Derivative => Outcome::Fixed(engine_tiny(format, false)),
        };
    }
    match role {
        Role::Forward if x < -38.2 => return Outcome::Value(widen(la.neg(), TWO_M55), 0),
        Role::Derivative if x > -TWO_M55 => return Outcome::Value(widen(la, TWO_M55), 0),
        Role::Derivative if x < elu::derivative_zero_below(la.v.hi) => {
            return Outcome::Fixed(engine_tiny(format, false));
        }
        _ => {}
    }
    if x > -1.0 {
        let em = expm1(Dd::new(x)).mul(la);
        return match role {
            Role::Forward => Outcome::Value(em, 0),
            Role::Derivative => Outcome::Value(la.add(em), 0),
        };
    }
    let t = decay(Dd::new(-x));
    match role {
        Role::Forward => match t.plain {
            Some(tp) => Outcome::Value(la.neg().add(tp.mul(la)), 0),
            None => Outcome::Value(widen(la.neg(), DROPPED), 0),
        },
        Role::Derivative => Outcome::Value(t.m.mul(la), t.k),
    }
}
