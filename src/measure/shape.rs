//! The shape of a forward kernel: steps back where the function is monotone, and jumps between
//! neighbouring inputs far larger than the true change.

use super::{is_finite, Point};
use crate::format::Format;
use crate::report::BitsValue;
use serde::Serialize;

/// At most this many examples of each finding are listed; counts are complete.
const EXAMPLES: usize = 20;

/// A step back of a kernel whose function is non-decreasing.
#[derive(Clone, Debug, Serialize)]
pub struct Violation {
    /// Lower input.
    pub from: BitsValue,
    /// Next evaluated input above it.
    pub to: BitsValue,
    /// Kernel output at `from`.
    pub from_output: BitsValue,
    /// Kernel output at `to` (smaller).
    pub to_output: BitsValue,
}

/// Outputs of two neighbouring inputs that differ far more than the true change.
#[derive(Clone, Debug, Serialize)]
pub struct Jump {
    /// Lower input.
    pub from: BitsValue,
    /// The next representable input.
    pub to: BitsValue,
    /// Representable steps between the kernel's two outputs.
    pub kernel_steps: u64,
    /// Steps between the two correctly rounded references.
    pub reference_steps: u64,
}

/// Monotonicity and jump findings.
#[derive(Clone, Debug, Serialize)]
pub struct Shape {
    /// Whether monotonicity applies (the function is non-decreasing).
    pub monotone_function: bool,
    /// Number of steps back among consecutive evaluated inputs.
    pub monotonicity_violations: u64,
    /// The first few.
    pub violations: Vec<Violation>,
    /// Jumps: kernel steps > 2·reference steps + 16, for inputs one step apart.
    pub jump_count: u64,
    /// The largest few.
    pub jumps: Vec<Jump>,
}

/// Shape findings over the measured points (forward role).
pub fn shape(format: &dyn Format, points: &[Point], monotone_function: bool) -> Shape {
    let mut ordered: Vec<&Point> = points
        .iter()
        .filter(|p| is_finite(format, p.input) && p.output.is_some_and(|o| is_finite(format, o)))
        .collect();
    // Increasing x; −0 before +0.
    ordered.sort_by_key(|p| (format.ordinal(p.input), !format.is_sign_negative(p.input)));
    let mut violations = Vec::new();
    let mut violation_count = 0;
    let mut jumps = Vec::new();
    for w in ordered.windows(2) {
        let (a, b) = (w[0], w[1]);
        let (oa, ob) = (a.output.expect("finite"), b.output.expect("finite"));
        let (ka, kb) = (format.ordinal(oa), format.ordinal(ob));
        if monotone_function && kb < ka {
            violation_count += 1;
            if violations.len() < EXAMPLES {
                violations.push(Violation {
                    from: BitsValue::new(format, a.input),
                    to: BitsValue::new(format, b.input),
                    from_output: BitsValue::new(format, oa),
                    to_output: BitsValue::new(format, ob),
                });
            }
        }
        let adjacent = format.ordinal(b.input) - format.ordinal(a.input) <= 1;
        if adjacent && is_finite(format, a.reference.bits) && is_finite(format, b.reference.bits) {
            let kernel_steps = ka.abs_diff(kb);
            let reference_steps = format
                .ordinal(a.reference.bits)
                .abs_diff(format.ordinal(b.reference.bits));
            if kernel_steps > 2 * reference_steps + 16 {
                jumps.push((a.input, b.input, kernel_steps, reference_steps));
            }
        }
    }
    let jump_count = jumps.len() as u64;
    // Largest excess first; ties to the lowest input.
    jumps.sort_by(|x, y| (y.2 - y.3).cmp(&(x.2 - x.3)).then(x.0.cmp(&y.0)));
    Shape {
        monotone_function,
        monotonicity_violations: violation_count,
        violations,
        jump_count,
        jumps: jumps
            .into_iter()
            .take(EXAMPLES)
            .map(|(a, b, k, r)| Jump {
                from: BitsValue::new(format, a),
                to: BitsValue::new(format, b),
                kernel_steps: k,
                reference_steps: r,
            })
            .collect(),
    }
}
