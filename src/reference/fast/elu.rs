//! ELU: x for x > 0, α·(e^x − 1) for x ≤ 0; derivative 1 for x ≥ 0 (the engine's right-hand
//! value at 0), α·e^x for x < 0.  α is an exact f64.
//!
//! For x ≤ −1 the forward value is −α + α·e^x, an asymptote plus a positive delta computed
//! without cancellation; for −1 < x < 0 it is α·expm1(x); the derivative for −1 < x < 0 is
//! α + α·expm1(x) (near α for tiny x) and α·e^x below.  Bounds compose through [`Ev`].

use super::common::{beside, decay, TAIL};
use super::dd::Dd;
use super::decide::{engine_beside, engine_tiny, Outcome};
use super::exp::expm1;
use crate::activation::Role;
use crate::format::Format;

/// ELU or its derivative at x.
pub fn elu(format: &dyn Format, x: f64, alpha: f64, role: Role) -> Outcome {
    match role {
        Role::Forward if x > 0.0 => return Outcome::Exact(x),
        Role::Forward if x == 0.0 => return Outcome::Decline,
        Role::Derivative if x >= 0.0 => return Outcome::Exact(1.0),
        _ => {}
    }
    if x <= -TAIL {
        return match role {
            Role::Forward => {
                engine_beside(format, -alpha, true).map_or(Outcome::Decline, Outcome::Fixed)
            }
            Role::Derivative => Outcome::Fixed(engine_tiny(format, false)),
        };
    }
    if x > -1.0 {
        let em = expm1(Dd::new(x)).mul_f(alpha);
        return match role {
            Role::Forward => Outcome::Value(em, 0),
            Role::Derivative => Outcome::Near(alpha, em),
        };
    }
    let t = decay(Dd::new(-x));
    match role {
        Role::Forward => match t.plain {
            Some(tp) => Outcome::Near(-alpha, tp.mul_f(alpha)),
            None => Outcome::Near(-alpha, beside(alpha, true)),
        },
        Role::Derivative => Outcome::Value(t.m.mul_f(alpha), t.k),
    }
}
