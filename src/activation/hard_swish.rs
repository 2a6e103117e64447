//! Hard swish: x·hard-sigmoid(x).

use super::common::{self, one};
use super::{Activation, Constants, Ctx, Facts, Kink, Limit, Role, Value};
use rug::{Float, Rational};

/// Piecewise-quadratic swish.
pub struct HardSwish;

impl Activation for HardSwish {
    fn name(&self) -> &'static str {
        "hard-swish"
    }
    fn definition(&self) -> &'static str {
        "x*relu6(x + 3)/6: 0 for x <= -3, x(x + 3)/6 between, x for x >= 3"
    }
    fn derivative_definition(&self) -> &'static str {
        "0 for x < -3, (2x + 3)/6 for -3 < x < 3, 1 for x > 3; at -3: left 0, right -1/2; at 3: left 3/2, right 1 (eval gives the right values)"
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: false,
            bounded_below: true,
            bounded_above: false,
            keeps_negative_zero: true,
            continuous: true,
        }
    }
    fn kinks(&self, _c: &Constants) -> Vec<Kink> {
        vec![
            Kink {
                at: -3,
                left: Rational::new(),
                right: Rational::from((-1, 2)),
            },
            Kink {
                at: 3,
                left: Rational::from((3, 2)),
                right: one(),
            },
        ]
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Infinite { negative: false },
            (Role::Derivative, true) => Limit::Finite(one()),
            _ => Limit::Zero { negative: false },
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        common::exact_from_rational(self, x, role, ctx)
    }
    fn eval_rational(&self, x: &Rational, role: Role, _ctx: &Ctx) -> Option<Rational> {
        let q = x.clone();
        Some(match role {
            Role::Forward if *x <= -3 => Rational::new(),
            Role::Forward if *x >= 3 => q,
            Role::Forward => Rational::from(&q + 3u32) * q / 6u32,
            Role::Derivative if *x < -3 => Rational::new(),
            Role::Derivative if *x >= 3 => one(),
            Role::Derivative => (q * 2u32 + 3u32) / 6u32,
        })
    }
}
