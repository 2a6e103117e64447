//! ReLU6: min(max(x, 0), 6).

use super::common::{self, one};
use super::{Activation, Constants, Ctx, Facts, Kink, Limit, Role, Value};
use rug::{Float, Rational};

/// ReLU clipped at 6.
pub struct Relu6;

impl Activation for Relu6 {
    fn name(&self) -> &'static str {
        "relu6"
    }
    fn definition(&self) -> &'static str {
        "min(max(x, 0), 6); relu6(-0) = +0"
    }
    fn derivative_definition(&self) -> &'static str {
        "1 for 0 < x < 6, else 0; at 0: left 0, right 1; at 6: left 1, right 0 (eval gives the right values)"
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: true,
            bounded_above: true,
            keeps_negative_zero: false,
            continuous: true,
        }
    }
    fn kinks(&self, _c: &Constants) -> Vec<Kink> {
        vec![
            Kink {
                at: 0,
                left: Rational::new(),
                right: one(),
            },
            Kink {
                at: 6,
                left: one(),
                right: Rational::new(),
            },
        ]
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Finite(Rational::from(6)),
            _ => Limit::Zero { negative: false },
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        common::exact_from_rational(self, x, role, ctx)
    }
    fn eval_rational(&self, x: &Rational, role: Role, _ctx: &Ctx) -> Option<Rational> {
        Some(match role {
            Role::Forward if *x <= 0 => Rational::new(),
            Role::Forward if *x >= 6 => Rational::from(6),
            Role::Forward => x.clone(),
            Role::Derivative if *x >= 0 && *x < 6 => one(),
            Role::Derivative => Rational::new(),
        })
    }
}
