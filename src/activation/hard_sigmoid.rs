//! Hard sigmoid: relu6(x + 3)/6.

use super::common::{self, one};
use super::{Activation, Constants, Ctx, Facts, Kink, Limit, Role, Value};
use rug::{Float, Rational};

/// Piecewise-linear sigmoid.
pub struct HardSigmoid;

impl Activation for HardSigmoid {
    fn name(&self) -> &'static str {
        "hard-sigmoid"
    }
    fn definition(&self) -> &'static str {
        "relu6(x + 3)/6: 0 for x <= -3, (x + 3)/6 between, 1 for x >= 3"
    }
    fn derivative_definition(&self) -> &'static str {
        "1/6 for -3 < x < 3, else 0; at -3: left 0, right 1/6; at 3: left 1/6, right 0 (eval gives the right values)"
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
        let sixth = Rational::from((1, 6));
        vec![
            Kink {
                at: -3,
                left: Rational::new(),
                right: sixth.clone(),
            },
            Kink {
                at: 3,
                left: sixth,
                right: Rational::new(),
            },
        ]
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Finite(one()),
            _ => Limit::Zero { negative: false },
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        common::exact_from_rational(self, x, role, ctx)
    }
    fn eval_rational(&self, x: &Rational, role: Role, _ctx: &Ctx) -> Option<Rational> {
        Some(match role {
            Role::Forward if *x <= -3 => Rational::new(),
            Role::Forward if *x >= 3 => one(),
            Role::Forward => (x.clone() + 3u32) / 6u32,
            Role::Derivative if *x >= -3 && *x < 3 => Rational::from((1, 6)),
            Role::Derivative => Rational::new(),
        })
    }
}
