//! Softsign: x/(1 + |x|).

use super::common::{self, one};
use super::{Activation, Constants, Ctx, Facts, Limit, Role, Value};
use rug::{Float, Rational};

/// Softsign.
pub struct Softsign;

impl Activation for Softsign {
    fn name(&self) -> &'static str {
        "softsign"
    }
    fn definition(&self) -> &'static str {
        "x/(1 + |x|)"
    }
    fn derivative_definition(&self) -> &'static str {
        "1/(1 + |x|)^2 (continuous)"
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: true,
            bounded_above: true,
            keeps_negative_zero: true,
            continuous: true,
        }
    }
    fn limit(&self, role: Role, positive: bool, _c: &Constants) -> Limit {
        match (role, positive) {
            (Role::Forward, true) => Limit::Finite(one()),
            (Role::Forward, false) => Limit::Finite(-one()),
            _ => Limit::Zero { negative: false },
        }
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        common::exact_from_rational(self, x, role, ctx)
    }
    fn eval_rational(&self, x: &Rational, role: Role, _ctx: &Ctx) -> Option<Rational> {
        let q = x.clone();
        let denominator = Rational::from(q.abs_ref()) + 1u32;
        Some(match role {
            Role::Forward => q / denominator,
            Role::Derivative => Rational::from(denominator.square_ref()).recip(),
        })
    }
}
