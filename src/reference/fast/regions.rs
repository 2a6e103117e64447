//! Inputs where the fast path answers one constant reference: the saturated tails, the
//! engine's signed zeros, the constants a function sits just beside near zero, and the
//! constant pieces of the piecewise functions.
//!
//! [`region`] names such a region (an id per function and role) or says "none".  The contract
//! the caller relies on: for one function and role, the inputs of one sign with the same id
//! form an interval of values, and on it [`super::FastEvaluator::try_reference`] returns the
//! same reference at every input.  So when the two ends of a run of consecutive patterns of
//! one sign share an id, the reference at one end holds for the whole run, and an exhaustive
//! sweep need not evaluate the inputs in between.
//!
//! Each arm below restates a branch of its function's evaluation (the file and branch named
//! beside it) that returns a reference independent of x: a decided `near_constant` or
//! `engine_beside` of a constant, an `engine_tiny`, or an exact constant.  Every predicate is a
//! comparison of x (or of RN(βx), which is monotone in x) with a constant, so each id's inputs
//! of one sign form an interval.  Where two branches give different references (the
//! closed form's decided point and the engine tail's, whose recorded precisions differ), they
//! have different ids.  `tests/fast_reference.rs` (`constant_regions`) checks the contract on
//! every pattern of the 16-bit formats and around every region's edges in binary32.

use super::common::{TAIL, TWO_M26, TWO_M27, TWO_M53, TWO_M54, TWO_M55};
use super::dd::Dd;
use super::Kind;
use crate::activation::Role;

/// The constant-reference region of x (finite, nonzero) for this function and role.
#[inline(always)]
pub(super) fn region(kind: Kind, role: Role, x: f64) -> Option<u8> {
    let forward = role == Role::Forward;
    match kind {
        Kind::Sigmoid => sigmoid(x, forward),
        Kind::Tanh => tanh(x, forward),
        Kind::Swish(beta) => swish(x, beta, forward),
        // softplus′ and log-sigmoid′ are σ(x) and σ(−x), decided by sigmoid's forward role.
        Kind::Softplus if !forward => sigmoid(x, true),
        Kind::LogSigmoid if !forward => sigmoid(-x, true),
        // softplus.rs: x ≤ −TAIL and the closed form x < −745.2 give the engine's +0;
        // log_sigmoid.rs, mirrored: x ≥ TAIL and x > 745.2 give −0.
        Kind::Softplus => (x < -745.2).then_some(1),
        Kind::LogSigmoid => (x > 745.2).then_some(1),
        // mish.rs `low`: the derivative below FLAT is `near_constant(RN(3/5), above)`.
        Kind::Mish if !forward && x.abs() < super::mish::FLAT => Some(4),
        Kind::Mish => rectifier(x, forward, -753.0, 22.0),
        Kind::Gelu => gelu(x, forward),
        Kind::Elu(alpha) => elu(x, alpha, forward),
        Kind::Step => Some(if !forward || x < 0.0 { 1 } else { 2 }),
        Kind::Relu => match x < 0.0 {
            true => Some(1),
            false => (!forward).then_some(2),
        },
        // leaky_relu: α·x on the left is no constant; both sides of the derivative are.
        Kind::LeakyRelu(_) => (!forward).then_some(if x < 0.0 { 1 } else { 2 }),
        Kind::Relu6 => relu6(x, forward),
        Kind::HardSigmoid => hard_sigmoid(x, forward),
        Kind::HardSwish => hard_swish(x, forward),
        Kind::Softsign => softsign(x, forward),
        // selu.rs `selu`: x ≤ 0 is ELU with α' = λα (the derivative's x > 0, `Exact(λ)`, is
        // ELU's id 3 too); `selu_wide` has ELU's branches with the double-word λα (see
        // [`selu_wide`]).
        Kind::Selu(_, scaled_alpha) => elu(x, scaled_alpha, forward),
        Kind::SeluWide(c) => selu_wide(x, c, forward),
        Kind::Celu(alpha) => celu(x, alpha, forward),
        Kind::GeluTanh(..) => gelu_tanh(x, forward),
    }
}

/// logistic.rs `sigmoid`: forward x ≥ TAIL `engine_beside(1, below)`, 38 < x < TAIL
/// `near_constant(1, below)`, x < −745.2 (the tail's and the closed form's) `engine_tiny(+)`,
/// |x| < 2^−53 `near_constant(1/2, side of x)`; derivative |x| > 745.2 `engine_tiny(+)`,
/// |x| < 2^−26 `near_constant(1/4, below)`.
#[inline(always)]
fn sigmoid(x: f64, forward: bool) -> Option<u8> {
    let a = x.abs();
    if forward {
        match x {
            _ if x >= TAIL => Some(1),
            _ if x > 38.0 => Some(2),
            _ if x < -745.2 => Some(3),
            _ if a < TWO_M53 => Some(if x > 0.0 { 4 } else { 5 }),
            _ => None,
        }
    } else if a > 745.2 {
        Some(1)
    } else {
        (a < TWO_M26).then_some(2)
    }
}

/// logistic.rs `tanh`: forward |x| ≥ TAIL `engine_beside(±1, towards zero)`, 19.5 < |x| <
/// TAIL `near_constant(±1, towards zero)`; derivative |x| > 373.5 (tail and closed form)
/// `engine_tiny(+)`, |x| < 2^−27 `near_constant(1, below)`.
#[inline(always)]
fn tanh(x: f64, forward: bool) -> Option<u8> {
    let a = x.abs();
    if forward {
        match a {
            _ if a >= TAIL => Some(1),
            _ if a > 19.5 => Some(2),
            _ => None,
        }
    } else if a > 373.5 {
        Some(1)
    } else {
        (a < TWO_M27).then_some(2)
    }
}

/// logistic.rs `swish`, z = βx as its TwoProd (z.hi = RN(βx), monotone in x for β > 0): the
/// tail (|z| ≥ TAIL) forward negative and derivative negative `engine_tiny(−)`, derivative
/// positive `engine_beside(1, above)`; then `swish_closed`: |z.hi| < 2^−54 derivative
/// `near_constant(1/2, side of x)`; forward z.hi < −835 `engine_tiny(−)`; derivative z.hi > 42
/// `near_constant(1, above)`, z.hi < −753 `engine_tiny(−)`.
#[inline(always)]
fn swish(x: f64, beta: f64, forward: bool) -> Option<u8> {
    let z = Dd::prod(beta, x);
    if super::logistic::dd_in_tail(z) {
        return match (forward, z.hi > 0.0) {
            (_, false) => Some(1),
            (true, true) => None,
            (false, true) => Some(2),
        };
    }
    if z.hi.abs() < TWO_M54 {
        return (!forward).then_some(if x > 0.0 { 3 } else { 4 });
    }
    match forward {
        true if z.hi < -835.0 => Some(1),
        false if z.hi > 42.0 => Some(5),
        false if z.hi < -753.0 => Some(1),
        _ => None,
    }
}

/// mish.rs `mish` (and any function whose tail is `decide::rectifier_tail`): x ≤ −TAIL and
/// the closed form x < `zero_below` `engine_tiny(−)`; derivative x ≥ TAIL
/// `engine_beside(1, above)`, `one_above` < x < TAIL `near_constant(1, above)`.
#[inline(always)]
fn rectifier(x: f64, forward: bool, zero_below: f64, one_above: f64) -> Option<u8> {
    match x {
        _ if x < zero_below => Some(1),
        _ if forward => None,
        _ if x >= TAIL => Some(2),
        _ if x > one_above => Some(3),
        _ => None,
    }
}

/// gelu.rs `gelu`: the rectifier tail, `gelu_closed`'s x < −38.8 (`engine_tiny(−)`) and, for
/// the derivative, x > 9 (`near_constant(1, above)`) and |x| < 2^−55 (`near_constant(1/2,
/// side of x)`).
#[inline(always)]
fn gelu(x: f64, forward: bool) -> Option<u8> {
    if !forward && x.abs() < TWO_M55 {
        return Some(if x > 0.0 { 4 } else { 5 });
    }
    rectifier(x, forward, -38.8, 9.0)
}

/// elu.rs `elu`: forward x ≤ −TAIL `engine_beside(−α, above)`, −TAIL < x < −38.2
/// `near_constant(−α, above)`; derivative x > 0 `Exact(1)`, −2^−55 < x < 0 `near_constant(α,
/// below)`, x ≤ −TAIL and x below `derivative_zero_below(α)` `engine_tiny(+)`.
#[inline(always)]
fn elu(x: f64, alpha: f64, forward: bool) -> Option<u8> {
    if forward {
        return match x {
            _ if x <= -TAIL => Some(1),
            _ if x < -38.2 => Some(2),
            _ => None,
        };
    }
    match x {
        _ if x > 0.0 => Some(3),
        _ if x > -TWO_M55 => Some(4),
        _ if x <= -TAIL || x < super::elu::derivative_zero_below(alpha) => Some(5),
        _ => None,
    }
}

/// selu.rs `selu_wide`: forward x ≤ −TAIL `Value(−λα widened by DROPPED)`, −TAIL < x < −38.2
/// `Value(−λα widened by 2^−55)`; derivative x > 0 `Rational(λ)`, −2^−55 < x < 0 `Value(λα
/// widened by 2^−55)`, x ≤ −TAIL and x below `elu::derivative_zero_below(λα.hi)`
/// `engine_tiny(+)`: ELU's predicates with α = λα's high part, each branch one constant value.
#[inline(always)]
fn selu_wide(x: f64, c: super::selu::Wide, forward: bool) -> Option<u8> {
    elu(x, c.scaled_alpha_hi(), forward)
}

/// celu.rs `celu`, z = x/α: forward x ≤ −TAIL·α `engine_beside(−α, above)`, `closed`'s
/// z.hi < −38.3 `near_constant(−α, above)`; derivative x > 0 `Exact(1)`, z.hi > −2^−55
/// `near_constant(1, below)`, x ≤ −TAIL·α and z.hi < −745.3 `engine_tiny(+)`.
///
/// The z.hi branches are taken on a comparison of x with RN(C·α), C a relative 2^−30 inside
/// the threshold t, so that each region is an interval of x and lies inside its branch: with
/// |RN(C·α) − C·α| ≤ 2^−53·|C·α| and |z.hi − z| ≤ 2^−52·|z| (celu.rs `closed`), x < RN(C·α)
/// gives z.hi < C·(1 − 2^−53)(1 − 2^−52) < t for t < 0, C = t·(1 + 2^−30); x > RN(C·α) gives
/// z.hi > C·(1 + 2^−53)(1 + 2^−52) > t for C = t·(1 − 2^−30) (C's own rounding, 2^−53, is
/// far inside the margin; the few inputs in the margins take the per-point path).
#[inline(always)]
fn celu(x: f64, alpha: f64, forward: bool) -> Option<u8> {
    const MARGIN: f64 = 9.313225746154785e-10; // 2^−30
    const LEVEL: f64 = -38.3 * (1.0 + MARGIN);
    const NEAR_ONE: f64 = -TWO_M55 * (1.0 - MARGIN);
    const ZERO: f64 = -745.3 * (1.0 + MARGIN);
    // 4096·α is exact, as celu.rs compares it.
    let tail = x <= -TAIL * alpha;
    if forward {
        return match x {
            _ if tail => Some(1),
            _ if x < LEVEL * alpha => Some(2),
            _ => None,
        };
    }
    match x {
        _ if x > 0.0 => Some(3),
        _ if x > NEAR_ONE * alpha => Some(4),
        _ if tail || x < ZERO * alpha => Some(5),
        _ => None,
    }
}

/// gelu_tanh.rs `gelu_tanh`: the rectifier tail, `closed`'s x < −22 (`engine_tiny(−)`, as the
/// tail's) and, for the derivative, x ≥ 8 (`near_constant(1, above)`; the region starts just
/// above 8) and |x| < 2^−56 (`near_constant(1/2, side of x)`).  c and k do not enter: the
/// thresholds hold for every c, k the fast kind accepts.
#[inline(always)]
fn gelu_tanh(x: f64, forward: bool) -> Option<u8> {
    if !forward && x.abs() < super::gelu_tanh::TWO_M56 {
        return Some(if x > 0.0 { 4 } else { 5 });
    }
    rectifier(x, forward, -22.0, 8.0)
}

/// piecewise.rs `relu6`: 0 for x < 0; forward 6 for x ≥ 6; derivative 1 on (0, 6), 0 from 6.
#[inline(always)]
fn relu6(x: f64, forward: bool) -> Option<u8> {
    match x {
        _ if x < 0.0 => Some(1),
        _ if forward => (x >= 6.0).then_some(2),
        _ if x < 6.0 => Some(3),
        _ => Some(4),
    }
}

/// piecewise.rs `hard_sigmoid_reference`: forward 0 for x ≤ −3, 1 for x ≥ 3, `near(1/2, side
/// of x)` for |x| < TINY; derivative 1/6 on [−3, 3), 0 elsewhere.
#[inline(always)]
fn hard_sigmoid(x: f64, forward: bool) -> Option<u8> {
    if forward {
        return match x {
            _ if x <= -3.0 => Some(1),
            _ if x >= 3.0 => Some(2),
            _ if x.abs() < super::piecewise::TINY => Some(if x > 0.0 { 3 } else { 4 }),
            _ => None,
        };
    }
    Some(match x {
        _ if x < -3.0 => 5,
        _ if x < 3.0 => 6,
        _ => 7,
    })
}

/// piecewise.rs `hard_swish_reference`: forward 0 for x ≤ −3; derivative 0 for x < −3, 1 for
/// x ≥ 3, `near(1/2, side of x)` for |x| < TINY.
#[inline(always)]
fn hard_swish(x: f64, forward: bool) -> Option<u8> {
    match x {
        _ if forward => (x <= -3.0).then_some(1),
        _ if x < -3.0 => Some(2),
        _ if x >= 3.0 => Some(3),
        _ if x.abs() < super::piecewise::TINY => Some(if x > 0.0 { 4 } else { 5 }),
        _ => None,
    }
}

/// softsign.rs `softsign`: forward |x| ≥ HUGE `near(±1, towards zero)`; derivative |x| <
/// TINY_DERIVATIVE `near(1, below)`.
#[inline(always)]
fn softsign(x: f64, forward: bool) -> Option<u8> {
    let a = x.abs();
    if forward {
        (a >= super::softsign::HUGE).then_some(1)
    } else {
        (a < super::softsign::TINY_DERIVATIVE).then_some(2)
    }
}

/// How the reference of a scaled region follows x: y lies beside (or is) b = 2^shift·x.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) struct Scaled {
    /// The region's id (distinct per branch of the evaluation, as in [`region`]).
    pub id: u8,
    /// b = 2^shift·x.
    pub shift: i32,
}

/// The scaled region of x (finite, nonzero) for this function and role: inputs where
/// [`super::FastEvaluator::try_reference`] answers the reference of a y that is b = 2^shift·x
/// itself (`Outcome::Exact`, exact `value`) or lies beside it by less than 2^(ilogb(b) − 54)
/// (`near_side`, `engine_beside`).  The contract the caller relies on: for one function and
/// role, the inputs of one sign with the same id form an interval; on it, at every x whose b is
/// a normal number of the format and not a power of two, the reference is b's own pattern, the
/// approximation b and the binade ilogb(b), with one recorded precision per id (`decide_beside`
/// and `round_beside`, `round_dd` with l = 0, `exact::near` with side 0 all give that: b is far
/// from every rounding boundary other than itself, and only a power of two b approached from
/// below falls into the binade below).  So an exhaustive sweep can write those references from
/// x's pattern alone.
///
/// Each arm restates a branch of its function's evaluation, named beside it, in the order the
/// evaluation takes them; every predicate is a comparison of x (or of the monotone RN(βx)) with
/// constants, so each id's inputs of one sign form an interval.
#[inline(always)]
pub(super) fn scaled(kind: Kind, role: Role, x: f64) -> Option<Scaled> {
    if role != Role::Forward {
        return None;
    }
    let at = |id: u8, shift: i32| Some(Scaled { id, shift });
    match kind {
        // logistic.rs `swish`: the tail's positive side `engine_beside(x, below)`, then
        // `swish_closed`: |z.hi| < 2^−54 `near_side(x/2, above)`, z.hi > 39 `near_side(x, below)`.
        Kind::Swish(beta) => {
            let z = Dd::prod(beta, x);
            if super::logistic::dd_in_tail(z) {
                return if z.hi > 0.0 { at(1, 0) } else { None };
            }
            match z.hi {
                h if h.abs() < TWO_M54 => at(if x > 0.0 { 2 } else { 3 }, -1),
                h if h > 39.0 => at(4, 0),
                _ => None,
            }
        }
        // logistic.rs `tanh`: after the tail and 19.5 < |x|, |x| < 2^−27 `near_side(x, towards
        // zero)`.
        Kind::Tanh => (x.abs() < TWO_M27).then_some(Scaled { id: 1, shift: 0 }),
        // gelu.rs `gelu` / gelu_tanh.rs `gelu_tanh`: the rectifier tail x ≥ TAIL
        // `engine_beside(x, below)`, then |x| < 2^−55 (2^−56) `near_side(x/2, above)` and
        // x > 9 (x ≥ 8) `near_side(x, below)`.
        Kind::Gelu => rectifier_scaled(x, TWO_M55, |x| x > 9.0),
        Kind::GeluTanh(..) => rectifier_scaled(x, super::gelu_tanh::TWO_M56, |x| x >= 8.0),
        // mish.rs `mish`: the rectifier tail, then `closed`'s x > 20 `near_side(x, below)`.
        Kind::Mish => rectifier_scaled(x, 0.0, |x| x > 20.0),
        // softplus.rs: x ≥ TAIL `engine_beside(x, above)`, `closed`'s x > 38 `near_side(x,
        // above)`; log_sigmoid.rs mirrored: x ≤ −TAIL `engine_beside(x, below)`, x < −38
        // `near_side(x, below)`.
        Kind::Softplus => match x {
            _ if x >= TAIL => at(1, 0),
            _ if x > 38.0 => at(2, 0),
            _ => None,
        },
        Kind::LogSigmoid => match x {
            _ if x <= -TAIL => at(1, 0),
            _ if x < -38.0 => at(2, 0),
            _ => None,
        },
        // elu.rs `elu`: x > 0 `Exact(x)` (SELU's λx is no power-of-two multiple of x).
        Kind::Elu(_) => (x > 0.0).then_some(Scaled { id: 1, shift: 0 }),
        // celu.rs: x > 0 `Exact(x)`; x < 0 with z.hi > −2^−55 `near_side(x, above)`, taken on
        // x > RN(C·α) with C pulled a relative 2^−30 inside, as [`celu`] argues.
        Kind::Celu(alpha) => {
            const MARGIN: f64 = 9.313225746154785e-10; // 2^−30
            const NEAR_X: f64 = -TWO_M55 * (1.0 - MARGIN);
            match x {
                _ if x > 0.0 => at(1, 0),
                _ if x > NEAR_X * alpha => at(2, 0),
                _ => None,
            }
        }
        // piecewise.rs: ReLU and leaky ReLU x > 0, ReLU6 0 < x < 6, hard swish x ≥ 3: `value(x)`;
        // hard swish |x| < TINY `near(x/2, above)`.
        Kind::Relu | Kind::LeakyRelu(_) => (x > 0.0).then_some(Scaled { id: 1, shift: 0 }),
        Kind::Relu6 => (x > 0.0 && x < 6.0).then_some(Scaled { id: 1, shift: 0 }),
        Kind::HardSwish => match x {
            _ if x >= 3.0 => at(1, 0),
            _ if x.abs() < super::piecewise::TINY => at(if x > 0.0 { 2 } else { 3 }, -1),
            _ => None,
        },
        _ => None,
    }
}

/// The forward scaled regions of a function whose tail is `decide::rectifier_tail` (GELU,
/// GELU-tanh, mish): x ≥ TAIL `engine_beside(x, below)`; |x| < `half_below` `near_side(x/2,
/// above)`; `upper(x)` (below TAIL) `near_side(x, below)`.
#[inline(always)]
fn rectifier_scaled(x: f64, half_below: f64, upper: impl Fn(f64) -> bool) -> Option<Scaled> {
    let at = |id: u8, shift: i32| Some(Scaled { id, shift });
    match x {
        _ if x >= TAIL => at(1, 0),
        _ if x.abs() < half_below => at(if x > 0.0 { 2 } else { 3 }, -1),
        _ if upper(x) => at(4, 0),
        _ => None,
    }
}
