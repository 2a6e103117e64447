//! SELU: λx for x > 0, λα·(e^x − 1) for x ≤ 0; derivative λ for x ≥ 0 (the engine's right-hand
//! value at 0), λα·e^x for x < 0.  λ and α must be exact f64 (as `--param-rounding f32` or
//! `format` makes them; the published decimals are not) and their product too, so that the
//! negative side is ELU with α' = λα ([`super::elu`], which takes any exact f64 α).

use super::dd::{two_prod, Dd, Ev};
use super::decide::Outcome;
use super::{elu, exact_f64, Kind};
use crate::activation::{Constants, Role};
use crate::format::Layout;

/// The fast-path kind for SELU's resolved constants: None unless λ, α and λα are exact normal
/// f64 numbers.
pub(super) fn kind(c: &Constants) -> Option<Kind> {
    let lambda = exact_f64(c.get("lambda").exact())?;
    let alpha = exact_f64(c.get("alpha").exact())?;
    let (product, error) = two_prod(lambda, alpha);
    (error == 0.0 && product.is_normal()).then_some(Kind::Selu(lambda, product))
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
