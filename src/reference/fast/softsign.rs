//! Softsign x/(1 + |x|) and its derivative 1/(1 + |x|)², decided exactly (see
//! [`super::exact`]).  With a = |x| (at most 24 significant bits): 1 + a, a² and 2a are exact
//! binary64 terms, so both values are quotients of short exact sums.

use super::dd::{two_prod, two_sum};
use super::decide::Outcome;
use super::exact::{near, nearest_ratio, quotient};
use crate::activation::Role;
use crate::format::Layout;

/// 2^−60: below it, softsign(x) = x − x·|x|/(1 + |x|) lies within a quarter of a binary64 gap
/// of x, towards zero.
const TINY: f64 = 8.673617379884035e-19;
/// 2^60: above it, 1 − softsign(a) = 1/(1 + a) is below a quarter of the gap under 1.
pub(super) const HUGE: f64 = 1.152921504606847e18;
/// 2^−56: below it, 1 − 1/(1 + a)² < 2a is below a quarter of the gap under 1.
pub(super) const TINY_DERIVATIVE: f64 = 1.3877787807814457e-17;

/// Softsign (forward) or its derivative at a nonzero finite x.
#[inline(always)]
pub fn softsign(format: Layout, x: f64, role: Role) -> Outcome {
    let a = x.abs();
    let decided = match role {
        Role::Forward => {
            let s = if x < 0.0 { -1.0 } else { 1.0 };
            let (q, side) = if a < TINY {
                (a, -1)
            } else if a >= HUGE {
                (1.0, -1)
            } else {
                let (d, err) = two_sum(1.0, a);
                if err == 0.0 {
                    quotient(a, d)
                } else {
                    // The larger denominator term first: its product cancels the numerator,
                    // which keeps `nearest_ratio`'s running error bound small.
                    let den = if a > 1.0 { [a, 1.0] } else { [1.0, a] };
                    match nearest_ratio(&[a], &den, a / d) {
                        Some(r) => r,
                        None => return Outcome::Decline,
                    }
                }
            };
            near(format, s * q, if x < 0.0 { -side } else { side })
        }
        Role::Derivative => {
            if a < TINY_DERIVATIVE {
                near(format, 1.0, -1)
            } else {
                let (d, err) = two_sum(1.0, a);
                // Below 2^−29 (1 + a inexact) 1 − 2a + 3a² is within about an ulp; 1/d²
                // would inherit d's rounding and miss by several.
                let guess = if err != 0.0 && a < 1.0 {
                    1.0 - a * (2.0 - 3.0 * a)
                } else {
                    1.0 / (d * d)
                };
                let r = if err == 0.0 {
                    // (1 + a)² = p + e exactly.
                    let (p, e) = two_prod(d, d);
                    nearest_ratio(&[1.0], &[p, e], guess)
                } else {
                    let den = if a > 1.0 {
                        [a * a, 2.0 * a, 1.0]
                    } else {
                        [1.0, 2.0 * a, a * a]
                    };
                    nearest_ratio(&[1.0], &den, guess)
                };
                match r {
                    Some((q, side)) => near(format, q, side),
                    None => return Outcome::Decline,
                }
            }
        }
    };
    match decided {
        Some(r) => Outcome::Fixed(r),
        None => Outcome::Decline,
    }
}
