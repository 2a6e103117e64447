//! Derivative kernels at kinks: either one-sided value is accepted; which one does the kernel
//! use?

use super::Point;
use crate::format::{step_distance, ulp_error, Format};
use crate::report::BitsValue;
use serde::Serialize;

/// What a derivative kernel returns at one kink.
#[derive(Clone, Debug, Serialize)]
pub struct KinkSide {
    /// The kink's input.
    pub input: BitsValue,
    /// RN of the left-hand derivative (times g for gradients).
    pub left: BitsValue,
    /// RN of the right-hand derivative.
    pub right: BitsValue,
    /// The kernel's output.
    pub output: Option<BitsValue>,
    /// "left", "right", "either" (both sides round alike) or "neither".
    pub uses: &'static str,
    /// Error against the side used (or the nearer side), in ulps.
    pub ulp: Option<f64>,
}

/// Sides used at every kink point among `points`; `tolerance` is the largest ulp error that
/// still counts as using a side.
pub fn kink_sides(
    input: &dyn Format,
    format: &dyn Format,
    points: &[Point],
    tolerance: f64,
) -> Vec<KinkSide> {
    let mut out: Vec<KinkSide> = points
        .iter()
        .filter_map(|p| {
            let left = p.left?;
            let right = p.reference;
            let error =
                |r: &crate::reference::Reference, o: u32| r.exact.map(|e| ulp_error(format, o, &e));
            let (uses, ulp) = match p.output {
                None => ("neither", None),
                Some(o) => {
                    let (el, er) = (error(&left, o), error(&right, o));
                    let same = step_distance(format, left.bits, right.bits) == 0;
                    let nearer_left = matches!((el, er), (Some(l), Some(r)) if l < r);
                    let best = if nearer_left { el } else { er };
                    let within = best.is_some_and(|e| e <= tolerance);
                    let uses = match () {
                        _ if !within => "neither",
                        _ if same => "either",
                        _ if nearer_left => "left",
                        _ => "right",
                    };
                    (uses, best)
                }
            };
            Some(KinkSide {
                input: BitsValue::new(input, p.input),
                left: BitsValue::new(format, left.bits),
                right: BitsValue::new(format, right.bits),
                output: p.output.map(|o| BitsValue::new(format, o)),
                uses,
                ulp,
            })
        })
        .collect();
    out.sort_by(|a, b| a.input.bits.cmp(&b.input.bits));
    out
}
