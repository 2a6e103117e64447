//! Every extreme a report names — worst inputs, the ends of non-finite runs, the reference's
//! thresholds — recomputed with MPFR alone when the fast path may have produced it.
//!
//! The fast path is proven to agree with MPFR; this is the belt to those braces, and costs a
//! few hundred MPFR evaluations per check.

use super::probe::RoleReferences;
use crate::format::{parse_hex, Format};
use crate::measure::{Accuracy, NonFiniteRun, ThresholdReport};
pub use crate::report::provenance::Confirmation;
use crate::report::BitsValue;

/// The inputs of the extremes a report names.
pub fn extremes(
    format: &dyn Format,
    accuracy: &Accuracy,
    non_finite: &[NonFiniteRun],
    thresholds: &[ThresholdReport],
) -> Vec<u32> {
    let mut named: Vec<&BitsValue> = Vec::new();
    named.extend(accuracy.worst.as_ref().map(|w| &w.input));
    named.extend(
        accuracy
            .abs_floor
            .as_ref()
            .and_then(|f| f.worst.as_ref())
            .map(|w| &w.input),
    );
    named.extend(accuracy.per_binade.iter().map(|row| &row.worst_input));
    for run in non_finite {
        named.extend([&run.first, &run.last]);
    }
    let mut inputs: Vec<u32> = named
        .into_iter()
        .filter_map(|v| parse_hex(format, &v.bits).ok())
        .collect();
    // A threshold is the first input of the asymptote: it and the input just before it.
    for t in thresholds {
        if let Some(at) = t
            .reference
            .as_ref()
            .and_then(|v| parse_hex(format, &v.bits).ok())
        {
            inputs.push(at);
            inputs.extend(at.checked_sub(1));
        }
    }
    inputs.sort_unstable();
    inputs.dedup();
    inputs
}

/// Recomputes the references at `inputs` with MPFR and compares them with the check's.
pub fn confirm(refs: &RoleReferences, format: &dyn Format, inputs: &[u32]) -> Confirmation {
    if !refs.uses_fast_path() {
        return Confirmation::default();
    }
    let mut out = Confirmation::default();
    for &x in inputs {
        let (Ok((used, _)), Ok(mpfr)) = (refs.reference(x), refs.mpfr_reference(x)) else {
            continue;
        };
        out.confirmed_with_mpfr += 1;
        if used.bits != mpfr.bits || used.exact != mpfr.exact {
            out.disagreements.push(BitsValue::new(format, x));
        }
    }
    out
}
