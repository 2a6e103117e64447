//! Continuously differentiable ELU: x for x ≥ 0, alpha·(e^(x/alpha) − 1) for x < 0.

use super::common::{self, above, one, tiny};
use super::{Activation, Constants, Ctx, Domain, Facts, Limit, ParamSpec, Role, Value};
use crate::reference::Ival;
use rug::{Float, Rational};

/// CELU.
pub struct Celu;

const PARAMS: [ParamSpec; 1] = [ParamSpec {
    name: "alpha",
    default: "1",
    domain: Domain::Positive,
    doc: "scale and temperature of the negative branch; f(-inf) = -alpha",
}];

impl Activation for Celu {
    fn name(&self) -> &'static str {
        "celu"
    }
    fn definition(&self) -> &'static str {
        "x if x > 0, alpha*expm1(x/alpha) if x <= 0"
    }
    fn derivative_definition(&self) -> &'static str {
        "1 for x > 0, exp(x/alpha) for x <= 0 (continuous: both sides give 1 at 0)"
    }
    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }
    fn facts(&self) -> Facts {
        Facts {
            monotone: true,
            bounded_below: true,
            bounded_above: false,
            keeps_negative_zero: true,
            continuous: true,
        }
    }
    fn limit(&self, role: Role, positive: bool, c: &Constants) -> Limit {
        let alpha = c.rational("alpha");
        match (role, positive) {
            (Role::Forward, true) => Limit::Infinite { negative: false },
            (Role::Forward, false) => Limit::Finite(-alpha),
            (Role::Derivative, true) => Limit::Finite(one()),
            (Role::Derivative, false) => Limit::Zero { negative: false },
        }
    }
    fn eval_rational(&self, x: &Rational, role: Role, _ctx: &Ctx) -> Option<Rational> {
        // CELU's derivative at 0 is e^0 = 1 from the left too, so x ≥ 0 is rational for f′.
        super::elu::linear_piece(x, role, &one())
    }
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        let prec = ctx.prec;
        let alpha = ctx.exact("alpha");
        if *x > 0 {
            return Value::Exact(if role == Role::Forward {
                common::rational(x)
            } else {
                one()
            });
        }
        let scaled = common::rational(x) / alpha;
        // Tail: x/alpha ≤ −2^12, so e^(x/alpha) < 2^−5900.
        let tail = scaled <= -(1i64 << common::TAIL_LOG2);
        let z = Ival::rational(&scaled, prec.max(64));
        match role {
            Role::Forward if tail => above(&-alpha.clone()),
            Role::Derivative if tail => tiny(false),
            Role::Forward if scaled <= -1 => {
                common::near(-alpha.clone(), z.exp(prec).mul_rational(alpha, prec))
            }
            Role::Forward => Value::Enclosed(z.exp_m1(prec).mul_rational(alpha, prec)),
            Role::Derivative => Value::Enclosed(z.exp(prec)),
        }
    }
}
