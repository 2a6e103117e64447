//! Thresholds side by side: where the reference reaches its asymptote for good, and where the
//! kernel does.

use super::{is_finite, value_class, Probe};
use crate::format::{step_distance, Format};
use crate::report::BitsValue;
use crate::sweep::{find_threshold, Threshold, ThresholdKind};
use serde::Serialize;

/// One side's thresholds.
#[derive(Clone, Debug, Serialize)]
pub struct ThresholdReport {
    /// "+" (x > 0) or "-".
    pub side: &'static str,
    /// "saturation" or "overflow".
    pub kind: ThresholdKind,
    /// The asymptote (the reference at ±∞).
    pub asymptote: BitsValue,
    /// First input from which the reference stays at the asymptote (`null`: never).
    pub reference: Option<BitsValue>,
    /// Whether the neighbours after it were checked one by one.
    pub reference_confirmed: bool,
    /// Same for the kernel: its output equals the asymptote (saturation) or is non-finite
    /// (overflow) from here on; `null` when it never does or was not searched.
    pub kernel: Option<BitsValue>,
    /// Whether the kernel's neighbours were checked one by one.
    pub kernel_confirmed: bool,
    /// The kernel's output class at its threshold.
    pub kernel_class: Option<&'static str>,
    /// Representable steps from the reference's threshold to the kernel's, signed outward.
    pub kernel_minus_reference_steps: Option<i64>,
    /// Both thresholds in a sentence.
    pub message: String,
}

/// Searches the kernel's thresholds next to the reference's; `search_kernel` is false for
/// gradient kernels, whose asymptote changes with g. `input`: the inputs' format, `format`
/// the outputs'.
pub fn thresholds(
    input: &dyn Format,
    format: &dyn Format,
    reference: &[Threshold],
    probe: &mut dyn Probe,
    search_kernel: bool,
    confirm: u32,
) -> Vec<ThresholdReport> {
    reference
        .iter()
        .map(|t| {
            let asymptote = t.asymptote;
            let holds = |out: Option<u32>| match (t.kind, out) {
                (_, None) => false,
                (ThresholdKind::Overflow, Some(o)) => !is_finite(format, o),
                (ThresholdKind::Saturation, Some(o)) => {
                    is_finite(format, o) && step_distance(format, o, asymptote) == 0
                }
            };
            let (kernel, kernel_confirmed) = if search_kernel {
                find_threshold(input, t.positive, confirm, |x| {
                    holds(probe.probe(&[x]).first().and_then(|p| p.output))
                })
            } else {
                (None, false)
            };
            let kernel_class = kernel.and_then(|k| {
                probe
                    .probe(&[k])
                    .first()
                    .and_then(|p| p.output)
                    .map(|o| value_class(format, o))
            });
            let steps = match (t.first, kernel) {
                (Some(r), Some(k)) => {
                    let d = input.ordinal(k) - input.ordinal(r);
                    Some(if t.positive { d } else { -d })
                }
                _ => None,
            };
            let side = if t.positive { "+" } else { "-" };
            let asymptote = BitsValue::new(format, asymptote);
            let reference = t.first.map(|b| BitsValue::new(input, b));
            let kernel = kernel.map(|b| BitsValue::new(input, b));
            let message = crate::report::sentence::threshold(
                input,
                format,
                t.kind == ThresholdKind::Overflow,
                side,
                &asymptote,
                reference.as_ref(),
                kernel.as_ref(),
                kernel_class,
                steps,
                search_kernel,
            );
            ThresholdReport {
                side,
                kind: t.kind,
                asymptote,
                reference,
                reference_confirmed: t.confirmed,
                kernel,
                kernel_confirmed,
                kernel_class,
                kernel_minus_reference_steps: steps,
                message,
            }
        })
        .collect()
}
