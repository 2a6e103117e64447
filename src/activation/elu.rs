//! Exponential linear unit: x for x > 0, alpha·(e^x − 1) for x ≤ 0.

use super::common::{self, above, one, tiny};
use super::{Activation, Constants, Ctx, Domain, Facts, Kink, Limit, ParamSpec, Role, Value};
use rug::{Float, Rational};

/// ELU.
pub struct Elu;

const PARAMS: [ParamSpec; 1] = [ParamSpec {
    name: "alpha",
    default: "1",
    domain: Domain::Positive,
    doc: "scale of the negative branch; f(-inf) = -alpha",
}];

impl Activation for Elu {
    fn name(&self) -> &'static str {
        "elu"
    }
    fn definition(&self) -> &'static str {
        "x if x > 0, alpha*expm1(x) if x <= 0"
    }
    fn derivative_definition(&self) -> &'static str {
        "1 for x > 0, alpha*exp(x) for x < 0; at 0: left alpha, right 1 (eval gives 1; no kink when alpha = 1)"
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
    fn kinks(&self, c: &Constants) -> Vec<Kink> {
        let alpha = c.rational("alpha");
        if alpha == 1 {
            return Vec::new();
        }
        vec![Kink {
            at: 0,
            left: alpha,
            right: one(),
        }]
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
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value {
        exponential_linear(x, role, ctx, &one(), ctx.exact("alpha"))
    }
    fn eval_rational(&self, x: &Rational, role: Role, _ctx: &Ctx) -> Option<Rational> {
        linear_piece(x, role, &one())
    }
}

/// The rational piece of [`exponential_linear`]: scale·x for x > 0 (scale for f′ at x ≥ 0);
/// `None` on the exponential side, where a nonzero rational x gives an irrational value.
pub fn linear_piece(x: &Rational, role: Role, scale: &Rational) -> Option<Rational> {
    match role {
        Role::Forward if *x > 0 => Some(Rational::from(x * scale)),
        Role::Derivative if *x >= 0 => Some(scale.clone()),
        _ => None,
    }
}

/// scale·x for x > 0 and scale·alpha·expm1(x) for x ≤ 0, or its derivative: ELU (scale 1) and
/// SELU share it.
pub fn exponential_linear(
    x: &Float,
    role: Role,
    ctx: &Ctx,
    scale: &Rational,
    alpha: &Rational,
) -> Value {
    let prec = ctx.prec;
    let left_factor = Rational::from(scale * alpha);
    match role {
        Role::Forward if *x > 0 => Value::Exact(common::rational(x) * scale),
        Role::Derivative if x.is_zero() || *x > 0 => Value::Exact(scale.clone()),
        Role::Forward if common::in_tail(x) => above(&-left_factor),
        Role::Derivative if common::in_tail(x) => tiny(false),
        // −sα + sα·e^x, kept apart from the asymptote −sα for x ≤ −1.
        Role::Forward if *x <= -1 => {
            let delta = common::point(x).exp(prec).mul_rational(&left_factor, prec);
            common::near(-left_factor, delta)
        }
        Role::Forward => Value::Enclosed(
            common::point(x)
                .exp_m1(prec)
                .mul_rational(&left_factor, prec),
        ),
        Role::Derivative => {
            Value::Enclosed(common::point(x).exp(prec).mul_rational(&left_factor, prec))
        }
    }
}
