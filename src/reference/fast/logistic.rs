//! Sigmoid, tanh and swish (SiLU), forward and derivative, from t = e^(−|z|).
//!
//! With D = 1 + t (a sum of positives, relative error ≤ r_t + OP): σ(|z|) = 1/D,
//! σ(−|z|) = t/D.  Near an asymptote or a constant the value is written base + delta with delta
//! computed without cancellation, so that [`super::decide`] can decide by the sign of a tiny
//! delta the way the engine does:
//! * σ(x) − 1/2 = sign(x)·(1 − t)/(2D), 1 − t = −expm1(−|x|);  σ(x) = 1 − t/D for x ≥ 1;
//! * σ′(x) − 1/4 = −(1 − t)²/(4D²);
//! * tanh|x| = −em/(2 + em), em = expm1(−2|x|) ∈ (−1, 0], so 2 + em > 1 and no cancellation;
//!   tanh|x| = 1 − 2t/D (t = e^(−2|x|)) for |x| ≥ 1;  tanh′ = 1 − tanh², or 4t/D²;
//! * swish′(z) − 1/2 = sign(z)·((1 − t)D + 2|z|t)/(2D²) (swish′ − 1/2 is odd in z; the numerator
//!   is a sum of positives); swish′ − 1 = t(|z| − 1 − t)/D² for z ≥ 1 and swish′ = t(1 + t −
//!   |z|)/D² for z ≤ −1 (the cancellation near |z| ≈ 1.28 is tracked by [`Ev::add`]).
//!
//! Every error bound composes through [`Ev`].

use super::common::{beside, decay, widen, Decay, DROPPED, TAIL};
use super::dd::{Dd, Ev};
use super::decide::{engine_beside, engine_tiny, Outcome};
use super::exp::expm1;
use crate::activation::Role;
use crate::format::Format;

fn one_plus(t: &Decay) -> Ev {
    match t.plain {
        Some(tp) => tp.add_f(1.0),
        None => widen(Ev::exact(Dd::new(1.0)), DROPPED),
    }
}

/// σ(x) or σ′(x).
pub fn sigmoid(format: &dyn Format, x: f64, role: Role) -> Outcome {
    let a = x.abs();
    if a >= TAIL {
        return match role {
            Role::Forward if x > 0.0 => {
                engine_beside(format, 1.0, false).map_or(Outcome::Decline, Outcome::Fixed)
            }
            _ => Outcome::Fixed(engine_tiny(format, false)),
        };
    }
    let t = decay(Dd::new(a));
    let d = one_plus(&t);
    match role {
        Role::Forward if a < 1.0 => {
            let g = expm1(Dd::new(-a)).neg().div(d.mul_f(2.0));
            Outcome::Near(0.5, if x > 0.0 { g } else { g.neg() })
        }
        Role::Forward if x > 0.0 => match t.plain {
            Some(tp) => Outcome::Near(1.0, tp.div(d).neg()),
            None => Outcome::Near(1.0, beside(1.0, false)),
        },
        Role::Forward => Outcome::Value(t.m.div(d), t.k),
        Role::Derivative if a < 1.0 => {
            let em = expm1(Dd::new(-a));
            let dd = d.mul(d).mul_f(4.0);
            Outcome::Near(0.25, em.mul(em).div(dd).neg())
        }
        Role::Derivative => Outcome::Value(t.m.div(d.mul(d)), t.k),
    }
}

/// tanh(x) or tanh′(x).
pub fn tanh(format: &dyn Format, x: f64, role: Role) -> Outcome {
    let a = x.abs();
    if a >= TAIL {
        return match role {
            Role::Forward => {
                engine_beside(format, x.signum(), x < 0.0).map_or(Outcome::Decline, Outcome::Fixed)
            }
            Role::Derivative => Outcome::Fixed(engine_tiny(format, false)),
        };
    }
    if a < 1.0 {
        let em = expm1(Dd::new(-2.0 * a));
        let th = em.neg().div(em.add_f(2.0));
        return match role {
            Role::Forward => Outcome::Value(if x > 0.0 { th } else { th.neg() }, 0),
            Role::Derivative => Outcome::Near(1.0, th.mul(th).neg()),
        };
    }
    let t = decay(Dd::new(2.0 * a));
    let d = one_plus(&t);
    match role {
        Role::Forward => {
            let gap = match t.plain {
                Some(tp) => tp.mul_f(2.0).div(d),
                None => beside(1.0, true),
            };
            if x > 0.0 {
                Outcome::Near(1.0, gap.neg())
            } else {
                Outcome::Near(-1.0, gap)
            }
        }
        Role::Derivative => Outcome::Value(t.m.mul_f(4.0).div(d.mul(d)), t.k),
    }
}

/// Whether |z| ≥ 4096 for a normalized double-word z.
fn dd_in_tail(z: Dd) -> bool {
    let (h, l) = if z.hi < 0.0 {
        (-z.hi, -z.lo)
    } else {
        (z.hi, z.lo)
    };
    h > TAIL || (h == TAIL && l >= 0.0)
}

/// swish(x) = x·σ(βx) or its derivative; β > 0 an f64.
pub fn swish(format: &dyn Format, x: f64, beta: f64, role: Role) -> Outcome {
    let z = Dd::prod(beta, x);
    if dd_in_tail(z) {
        let positive = z.hi > 0.0;
        return match (role, positive) {
            (Role::Forward, true) => {
                engine_beside(format, x, false).map_or(Outcome::Decline, Outcome::Fixed)
            }
            (Role::Derivative, true) => {
                engine_beside(format, 1.0, true).map_or(Outcome::Decline, Outcome::Fixed)
            }
            (_, false) => Outcome::Fixed(engine_tiny(format, true)),
        };
    }
    let a = z.abs();
    if a.hi < 1e-270 {
        // βx so small that TwoProd's error term could be subnormal: not exact any more.
        return Outcome::Decline;
    }
    let big = a.hi >= 1.0;
    let t = decay(a);
    let d = one_plus(&t);
    let xe = Ev::exact(Dd::new(x));
    match role {
        Role::Forward if x > 0.0 && big => match t.plain {
            Some(tp) => Outcome::Near(x, xe.mul(tp).div(d).neg()),
            None => Outcome::Near(x, beside(x, false)),
        },
        Role::Forward if x > 0.0 => Outcome::Value(xe.div(d), 0),
        Role::Forward => Outcome::Value(xe.mul(t.m).div(d), t.k),
        Role::Derivative if !big => {
            let tp = t.plain.expect("e^(-|z|) for |z| < 1");
            let omt = expm1(a.neg()).neg();
            let num = omt.mul(d).add(Ev::exact(a).mul(tp).mul_f(2.0));
            let g = num.div(d.mul(d).mul_f(2.0));
            Outcome::Near(0.5, if x > 0.0 { g } else { g.neg() })
        }
        Role::Derivative if x > 0.0 => match t.plain {
            Some(tp) => {
                let inner = Ev::exact(a).add_f(-1.0).add(tp.neg());
                Outcome::Near(1.0, tp.mul(inner).div(d.mul(d)))
            }
            None => Outcome::Near(1.0, beside(1.0, true)),
        },
        Role::Derivative => {
            let inner = match t.plain {
                Some(tp) => tp.add_f(1.0).add(Ev::exact(a).neg()),
                None => widen(Ev::exact(a.neg()).add_f(1.0), DROPPED),
            };
            Outcome::Value(t.m.mul(inner).div(d.mul(d)), t.k)
        }
    }
}
