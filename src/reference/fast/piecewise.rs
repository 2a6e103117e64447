//! Step, ReLU, leaky ReLU, ReLU6, hard sigmoid and hard swish (forward and derivative),
//! decided exactly (see [`super::exact`]): their values are x, constants, α·x, (x + 3)/6,
//! x(x + 3)/6 and (2x + 3)/6, rationals whose binary64 rounding and side an FMA remainder or an
//! exact expansion gives.  The pieces and one-sided conventions are those of
//! `src/activation/{step,relu,leaky_relu,relu6,hard_sigmoid,hard_swish}.rs` (at a kink, the
//! derivative's right-hand value).

use super::decide::Outcome;
use super::exact::{near, nearest_ratio, quotient, sign, value, zero};
use crate::activation::Role;
use crate::format::Layout;
use crate::reference::Reference;
use rug::Rational;

/// Below this |x| (2^−60) the x-dependent part of 1/2 + x/6, 1/2 + x/3 and x/2 + x²/6 is
/// below a quarter of binary64's gap beside the leading term: its sign alone decides.
pub(super) const TINY: f64 = 8.673617379884035e-19;

/// Largest numerator or denominator of α accepted (2^400): every product, quotient and
/// remainder below stays normal.
const ALPHA_LIMIT: f64 = 2.5822498780869086e120;

/// α of leaky ReLU as (numerator, denominator) when both are binary64 numbers of magnitude at
/// most 2^400 (every decimal with up to 15 significant digits, every binary64 number in
/// [2^−400, 2^400]); the default 0.01 is 1/100.
pub fn leaky_alpha(q: Option<&Rational>) -> Option<(f64, f64)> {
    let q = q?;
    let exact = |i: &rug::Integer| {
        let f = i.to_f64();
        (f.abs() <= ALPHA_LIMIT && rug::Integer::from_f64(f).as_ref() == Some(i)).then_some(f)
    };
    Some((exact(q.numer())?, exact(q.denom())?))
}

/// A decided reference, or the engine.
#[inline(always)]
fn outcome(r: Option<Reference>) -> Outcome {
    match r {
        Some(r) => Outcome::Fixed(r),
        None => Outcome::Decline,
    }
}

/// Heaviside step: 1 for x > 0, 0 for x < 0; derivative 0.
#[inline(always)]
pub fn step(format: Layout, x: f64, role: Role) -> Outcome {
    let v = if role == Role::Forward && x > 0.0 {
        1.0
    } else {
        0.0
    };
    outcome(value(format, v))
}

/// max(x, 0); derivative 1 for x > 0, 0 for x < 0.
#[inline(always)]
pub fn relu(format: Layout, x: f64, role: Role) -> Outcome {
    let v = match role {
        _ if x < 0.0 => 0.0,
        Role::Forward => x,
        Role::Derivative => 1.0,
    };
    outcome(value(format, v))
}

/// x for x > 0, α·x for x < 0; derivative 1 and α, with α = n/d.
#[inline(always)]
pub fn leaky_relu(format: Layout, x: f64, (n, d): (f64, f64), role: Role) -> Outcome {
    outcome(match role {
        Role::Forward if x > 0.0 => value(format, x),
        Role::Derivative if x > 0.0 => value(format, 1.0),
        _ if n == 0.0 => Some(zero(format)),
        Role::Derivative => {
            let (q, side) = quotient(n, d);
            near(format, q, side)
        }
        Role::Forward => leaky_left(format, x, n, d),
    })
}

/// n·x/d for x < 0: n·x = p + e exactly by FMA; a single binary64 numerator is divided by
/// IEEE division, a double-word one through [`nearest_ratio`].
#[inline(always)]
fn leaky_left(format: Layout, x: f64, n: f64, d: f64) -> Option<Reference> {
    let p = n * x;
    let e = n.mul_add(x, -p);
    if d == 1.0 {
        return near(format, p, sign(e));
    }
    if e == 0.0 {
        let (q, side) = quotient(p, d);
        return near(format, q, side);
    }
    let negative = p < 0.0;
    let num = if negative { [-p, -e] } else { [p, e] };
    let (q, side) = nearest_ratio(&num, &[d], (p / d).abs())?;
    if negative {
        near(format, -q, -side)
    } else {
        near(format, q, side)
    }
}

/// min(max(x, 0), 6); derivative 1 on [0, 6), else 0.
#[inline(always)]
pub fn relu6(format: Layout, x: f64, role: Role) -> Outcome {
    let v = match role {
        _ if x < 0.0 => 0.0,
        Role::Forward => x.min(6.0),
        Role::Derivative if x < 6.0 => 1.0,
        Role::Derivative => 0.0,
    };
    outcome(value(format, v))
}

/// (x + 3)/6 clamped to [0, 1]; derivative 1/6 on [−3, 3), else 0.
#[inline(always)]
pub fn hard_sigmoid(format: Layout, x: f64, role: Role) -> Outcome {
    outcome(hard_sigmoid_reference(format, x, role))
}

/// [`hard_sigmoid`]'s reference, None for the engine.
#[inline(always)]
fn hard_sigmoid_reference(format: Layout, x: f64, role: Role) -> Option<Reference> {
    match role {
        Role::Forward if x <= -3.0 => Some(zero(format)),
        Role::Forward if x >= 3.0 => value(format, 1.0),
        Role::Forward if x.abs() < TINY => near(format, 0.5, sign(x)),
        Role::Forward => {
            let n = x + 3.0;
            // FastTwoSum (|3| > |x|): n − 3 is exact, so n = x + 3 exactly when it gives x back.
            if n - 3.0 == x {
                let (q, side) = quotient(n, 6.0);
                near(format, q, side)
            } else {
                let (q, side) = nearest_ratio(&[3.0, x], &[6.0], n / 6.0)?;
                near(format, q, side)
            }
        }
        Role::Derivative if (-3.0..3.0).contains(&x) => {
            let (q, side) = quotient(1.0, 6.0);
            near(format, q, side)
        }
        Role::Derivative => Some(zero(format)),
    }
}

/// x·(x + 3)/6 between −3 and 3, 0 below, x above; derivative (2x + 3)/6 on [−3, 3), 0 below,
/// 1 from 3 on.
#[inline(always)]
pub fn hard_swish(format: Layout, x: f64, role: Role) -> Outcome {
    outcome(hard_swish_reference(format, x, role))
}

/// [`hard_swish`]'s reference, None for the engine.
#[inline(always)]
fn hard_swish_reference(format: Layout, x: f64, role: Role) -> Option<Reference> {
    match role {
        Role::Forward if x <= -3.0 => Some(zero(format)),
        Role::Forward if x >= 3.0 => value(format, x),
        // y = x/2 + x²/6: above x/2 by far less than a quarter of its gap.
        Role::Forward if x.abs() < TINY => near(format, x * 0.5, 1),
        Role::Forward => {
            // y = (3x + x²)/6, both terms exact (x has at most 24 significant bits); negative
            // on (−3, 0): the magnitude is decided, then the sign applied.
            let (t, s) = (3.0 * x, x * x);
            let guess = (t + s) / 6.0;
            let negative = guess < 0.0;
            let num = if negative { [-t, -s] } else { [t, s] };
            let (q, side) = nearest_ratio(&num, &[6.0], guess.abs())?;
            if negative {
                near(format, -q, -side)
            } else {
                near(format, q, side)
            }
        }
        Role::Derivative if x < -3.0 => Some(zero(format)),
        Role::Derivative if x >= 3.0 => value(format, 1.0),
        Role::Derivative if x == -1.5 => Some(zero(format)),
        Role::Derivative if x.abs() < TINY => near(format, 0.5, sign(x)),
        Role::Derivative => {
            let (n, err) = super::dd::two_sum(2.0 * x, 3.0);
            if err == 0.0 {
                let (q, side) = quotient(n, 6.0);
                near(format, q, side)
            } else {
                // 2x + 3 is nonzero, so its RN n has its sign.
                let num = if n < 0.0 {
                    [-3.0, -2.0 * x]
                } else {
                    [3.0, 2.0 * x]
                };
                let (q, side) = nearest_ratio(&num, &[6.0], n.abs() / 6.0)?;
                if n < 0.0 {
                    near(format, -q, -side)
                } else {
                    near(format, q, side)
                }
            }
        }
    }
}
