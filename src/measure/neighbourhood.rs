//! A few inputs on each side of a threshold or a kink, with the kernel's output beside the
//! reference: what the HTML report's small second plots show. Bounded: at most
//! `2 · half + 1` points per centre, a handful of centres per function.

use super::Probe;
use crate::format::{ulp_error, Format};
use crate::report::BitsValue;
use serde::Serialize;

/// One input near a centre.
#[derive(Clone, Debug, Serialize)]
pub struct NearPoint {
    /// The input.
    pub input: BitsValue,
    /// The kernel's output (`null` when it crashed or hung).
    pub output: Option<BitsValue>,
    /// RN of the reference (at a kink of a derivative role: the right-hand value).
    pub reference: BitsValue,
    /// At a kink of a derivative role: RN of the left-hand value.
    pub left: Option<BitsValue>,
    /// The output's error in ulps against the reference (`null` when either is not finite).
    pub ulp: Option<f64>,
}

/// The inputs around one centre.
#[derive(Clone, Debug, Serialize)]
pub struct Neighbourhood {
    /// What the centre is ("kink", "saturation threshold (+) of the reference", …).
    pub what: String,
    /// The centre input.
    pub centre: BitsValue,
    /// The inputs from `half` steps below to `half` steps above, in increasing x.
    pub points: Vec<NearPoint>,
}

/// Evaluates `half` representable steps on each side of every centre (finite inputs only).
pub fn neighbourhoods(
    input: &dyn Format,
    format: &dyn Format,
    centres: &[(u32, String)],
    probe: &mut dyn Probe,
    half: u32,
) -> Vec<Neighbourhood> {
    let top = input.ordinal(input.max_finite(false));
    centres
        .iter()
        .map(|(centre, what)| {
            let c = input.ordinal(*centre);
            let lo = (c - i64::from(half)).max(-top);
            let hi = (c + i64::from(half)).min(top);
            let inputs: Vec<u32> = (lo..=hi).map(|o| input.from_ordinal(o)).collect();
            let points = probe
                .probe(&inputs)
                .into_iter()
                .map(|p| {
                    let ulp = match (p.output, p.reference.exact) {
                        (Some(o), Some(e)) if format.to_f64(o).is_finite() => {
                            Some(ulp_error(format, o, &e))
                        }
                        _ => None,
                    };
                    NearPoint {
                        input: BitsValue::new(input, p.input),
                        output: p.output.map(|o| BitsValue::new(format, o)),
                        reference: BitsValue::new(format, p.reference.bits),
                        left: p.left.map(|l| BitsValue::new(format, l.bits)),
                        ulp,
                    }
                })
                .collect();
            Neighbourhood {
                what: what.clone(),
                centre: BitsValue::new(input, *centre),
                points,
            }
        })
        .collect()
}
