//! The shape of a forward kernel: steps back where the function is monotone, and jumps between
//! neighbouring inputs far larger than the true change.

use super::Point;
use crate::format::{Format, Layout};
use crate::report::BitsValue;
use serde::{Deserialize, Serialize};

mod valid;

/// At most this many examples of each finding are listed; counts are complete.
const EXAMPLES: usize = 20;

/// A step back of a kernel whose function is non-decreasing.
#[derive(Clone, Debug, Serialize, Deserialize)]
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

/// The fields of a point that shape findings look at.
#[derive(Clone, Copy, Debug, Serialize, Deserialize)]
struct Seen {
    input: u32,
    output: u32,
    reference: u32,
}

/// Findings of one sign's inputs, fed in increasing bit order (increasing |x|).
#[derive(Default, Serialize, Deserialize)]
struct Side {
    first: Option<Seen>,
    last: Option<Seen>,
    /// Violations in the order met: for x < 0 only the last few met are kept (they come
    /// first in increasing x).
    violations: std::collections::VecDeque<Violation>,
    violation_count: u64,
}

/// Shape findings accumulated point by point in increasing bit order (chunk by chunk), with
/// memory independent of the number of points; the same findings as [`shape`].
#[derive(Serialize, Deserialize)]
pub struct ShapeAcc {
    #[serde(with = "crate::format::by_name_serde")]
    format: &'static dyn Format,
    /// The format's bit arithmetic, inlined in the per-point work.
    layout: Layout,
    /// The input format when it differs from the output's (mixed-format kernels).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    input: Option<crate::format::Side>,
    monotone_function: bool,
    positive: Side,
    negative: Side,
    /// The largest few jumps: (from, to, kernel steps, reference steps).
    jumps: Vec<(u32, u32, u64, u64)>,
    jump_count: u64,
}

/// Largest excess first; ties to the lowest input.
fn jump_order(x: &(u32, u32, u64, u64), y: &(u32, u32, u64, u64)) -> std::cmp::Ordering {
    (y.2 - y.3).cmp(&(x.2 - x.3)).then(x.0.cmp(&y.0))
}

impl ShapeAcc {
    /// An empty accumulator.
    pub fn new(format: &'static dyn Format, monotone_function: bool) -> Self {
        ShapeAcc {
            format,
            layout: format.layout(),
            input: None,
            monotone_function,
            positive: Side::default(),
            negative: Side::default(),
            jumps: Vec::new(),
            jump_count: 0,
        }
    }

    /// An empty accumulator with the same settings.
    pub fn fresh(&self) -> Self {
        let mut acc = ShapeAcc::new(self.format, self.monotone_function);
        acc.input = self.input;
        acc
    }

    /// The same accumulator for inputs in another format (mixed-format kernels).
    pub fn with_input(mut self, input: &'static dyn Format) -> Self {
        self.input = (input.name() != self.format.name()).then(|| crate::format::Side::of(input));
        self
    }

    #[inline(always)]
    fn in_layout(&self) -> Layout {
        self.input.map_or(self.layout, |s| s.layout)
    }

    fn input_format(&self) -> &'static dyn Format {
        self.input.map_or(self.format, |s| s.format)
    }

    /// The pair a < b (in x) of neighbouring evaluated inputs.
    fn pair(&mut self, a: Seen, b: Seen) -> Option<Violation> {
        self.pair_in(self.layout, self.in_layout(), a, b)
    }

    /// [`Self::pair`] with the accumulator's layouts passed in.
    #[inline(always)]
    fn pair_in(&mut self, l: Layout, il: Layout, a: Seen, b: Seen) -> Option<Violation> {
        let (ka, kb) = (l.ordinal(a.output), l.ordinal(b.output));
        let adjacent = il.ordinal(b.input) - il.ordinal(a.input) <= 1;
        if adjacent && l.is_finite(a.reference) && l.is_finite(b.reference) {
            let kernel_steps = ka.abs_diff(kb);
            let reference_steps = l.ordinal(a.reference).abs_diff(l.ordinal(b.reference));
            if kernel_steps > 2 * reference_steps + 16 {
                self.jump_count += 1;
                self.jumps
                    .push((a.input, b.input, kernel_steps, reference_steps));
                if self.jumps.len() > 4 * EXAMPLES {
                    self.jumps.sort_by(jump_order);
                    self.jumps.truncate(EXAMPLES);
                }
            }
        }
        (self.monotone_function && kb < ka).then(|| self.violation(a, b))
    }

    /// The report entry of a step back (rare: kept out of the per-point path).
    #[cold]
    #[inline(never)]
    fn violation(&self, a: Seen, b: Seen) -> Violation {
        let format = self.format;
        let input = self.input_format();
        Violation {
            from: BitsValue::new(input, a.input),
            to: BitsValue::new(input, b.input),
            from_output: BitsValue::new(format, a.output),
            to_output: BitsValue::new(format, b.output),
        }
    }

    /// Adds the next point in bit order.
    pub fn add(&mut self, p: &Point) {
        self.add_in(self.layout, self.in_layout(), p);
    }

    /// [`Self::add`] with the output and input layouts passed in (they must be this
    /// accumulator's), for callers that know them at compile time.
    #[inline(always)]
    pub fn add_in(&mut self, l: Layout, il: Layout, p: &Point) {
        debug_assert!(l == self.layout && il == self.in_layout());
        let Some(output) = p.output.filter(|&o| l.is_finite(o)) else {
            return;
        };
        if !il.is_finite(p.input) {
            return;
        }
        self.add_finite(l, il, p.input, output, p.reference.bits);
    }

    /// [`Self::add_in`] for a finite input and a finite output, known to be so by the caller.
    #[inline(always)]
    pub fn add_finite(&mut self, l: Layout, il: Layout, input: u32, output: u32, reference: u32) {
        debug_assert!(il.is_finite(input) && l.is_finite(output));
        let seen = Seen {
            input,
            output,
            reference,
        };
        let negative = il.is_sign_negative(input);
        let last = if negative {
            self.negative.last
        } else {
            self.positive.last
        };
        if let Some(prev) = last {
            // Bit order is increasing x for x ≥ 0 and decreasing x for x < 0.
            let (a, b) = if negative { (seen, prev) } else { (prev, seen) };
            let found = self.pair_in(l, il, a, b);
            let side = if negative {
                &mut self.negative
            } else {
                &mut self.positive
            };
            if let Some(v) = found {
                side.violation_count += 1;
                if negative {
                    side.violations.push_back(v);
                    if side.violations.len() > EXAMPLES {
                        side.violations.pop_front();
                    }
                } else if side.violations.len() < EXAMPLES {
                    side.violations.push_back(v);
                }
            }
        }
        let side = if negative {
            &mut self.negative
        } else {
            &mut self.positive
        };
        side.first.get_or_insert(seen);
        side.last = Some(seen);
    }

    /// Adds a run of consecutive inputs of one sign, finite inputs and outputs, in which either
    /// every point has `first`'s output and reference, or every output is its reference and
    /// the references never step back: no pair inside steps back or jumps (equal kernel and
    /// reference steps are no jump), so only the first point's pair and the last point count.
    pub fn add_run(&mut self, first: &Point, last: &Point) {
        self.add(first);
        let side = if self.in_layout().is_sign_negative(first.input) {
            &mut self.negative
        } else {
            &mut self.positive
        };
        if let (Some(seen), Some(output)) = (&mut side.last, last.output) {
            *seen = Seen {
                input: last.input,
                output,
                reference: last.reference.bits,
            };
        }
    }

    /// Joins an accumulator of later points (all above ours in bit order).
    pub fn merge(&mut self, other: ShapeAcc) {
        // The pairs across the seam: our last and their first point of each sign.
        if let (Some(a), Some(b)) = (self.positive.last, other.positive.first) {
            if let Some(v) = self.pair(a, b) {
                self.positive.violation_count += 1;
                self.positive.violations.push_back(v);
            }
        }
        if let (Some(prev), Some(next)) = (self.negative.last, other.negative.first) {
            if let Some(v) = self.pair(next, prev) {
                self.negative.violation_count += 1;
                self.negative.violations.push_back(v);
            }
        }
        for (mine, theirs) in [
            (&mut self.positive, other.positive),
            (&mut self.negative, other.negative),
        ] {
            mine.violation_count += theirs.violation_count;
            mine.violations.extend(theirs.violations);
            mine.first = mine.first.or(theirs.first);
            mine.last = theirs.last.or(mine.last);
        }
        // x ≥ 0 keeps the first few met, x < 0 the last few.
        self.positive.violations.truncate(EXAMPLES);
        let extra = self.negative.violations.len().saturating_sub(EXAMPLES);
        self.negative.violations.drain(..extra);
        self.jump_count += other.jump_count;
        self.jumps.extend(other.jumps);
        self.jumps.sort_by(jump_order);
        self.jumps.truncate(EXAMPLES);
    }

    /// The findings.
    pub fn finish(mut self) -> Shape {
        // The pair across zero: the negative input nearest zero (first in bit order) and the
        // smallest positive one.
        let across = match (self.negative.first, self.positive.first) {
            (Some(a), Some(b)) => self.pair(a, b),
            _ => None,
        };
        let format = self.input_format();
        let violation_count =
            self.negative.violation_count + self.positive.violation_count + across.is_some() as u64;
        let violations = self
            .negative
            .violations
            .into_iter()
            .rev()
            .chain(across)
            .chain(self.positive.violations)
            .take(EXAMPLES)
            .collect();
        self.jumps.sort_by(jump_order);
        Shape {
            monotone_function: self.monotone_function,
            monotonicity_violations: violation_count,
            violations,
            jump_count: self.jump_count,
            jumps: self
                .jumps
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
}

/// Shape findings over the measured points (forward role).
pub fn shape(format: &'static dyn Format, points: &[Point], monotone_function: bool) -> Shape {
    let mut order: Vec<&Point> = points.iter().collect();
    order.sort_by_key(|p| p.input);
    let mut acc = ShapeAcc::new(format, monotone_function);
    for p in order {
        acc.add(p);
    }
    acc.finish()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::Binary16;
    use crate::measure::is_finite;
    use crate::reference::Reference;

    /// The findings as first written: every point held, sorted by x, windows of two.
    type Found = (u64, Vec<(u32, u32)>, u64, Vec<(u32, u64, u64)>);
    fn sorted_windows(format: &dyn Format, points: &[Point]) -> Found {
        let mut ordered: Vec<&Point> = points
            .iter()
            .filter(|p| {
                is_finite(format, p.input) && p.output.is_some_and(|o| is_finite(format, o))
            })
            .collect();
        ordered.sort_by_key(|p| (format.ordinal(p.input), !format.is_sign_negative(p.input)));
        let (mut count, mut violations, mut jumps) = (0, Vec::new(), Vec::new());
        for w in ordered.windows(2) {
            let (a, b) = (w[0], w[1]);
            let (ka, kb) = (
                format.ordinal(a.output.unwrap()),
                format.ordinal(b.output.unwrap()),
            );
            if kb < ka {
                count += 1;
                if violations.len() < EXAMPLES {
                    violations.push((a.input, b.input));
                }
            }
            let adjacent = format.ordinal(b.input) - format.ordinal(a.input) <= 1;
            if adjacent
                && is_finite(format, a.reference.bits)
                && is_finite(format, b.reference.bits)
            {
                let k = ka.abs_diff(kb);
                let r = format
                    .ordinal(a.reference.bits)
                    .abs_diff(format.ordinal(b.reference.bits));
                if k > 2 * r + 16 {
                    jumps.push((a.input, k, r));
                }
            }
        }
        jumps.sort_by(|x, y| (y.1 - y.2).cmp(&(x.1 - x.2)).then(x.0.cmp(&y.0)));
        let jump_count = jumps.len() as u64;
        jumps.truncate(EXAMPLES);
        (count, violations, jump_count, jumps)
    }

    #[test]
    fn streamed_findings_equal_sorted_windows() {
        let f = &Binary16;
        let mut rng = crate::sweep::Rng::new(7);
        for trial in 0..20 {
            // A noisy increasing function of x over both signs, with holes, crashes,
            // non-finite outputs and big jumps, sampled more or less densely.
            let step = if trial % 4 == 3 { 2 } else { 1 };
            let points: Vec<Point> = (0..0x1_0000u32)
                .step_by(step as usize)
                .filter_map(|x| {
                    let r = rng.next_u64();
                    if r % 10 == 3 {
                        return None;
                    }
                    let o = f.ordinal(x).clamp(-0x7bff, 0x7bff) / 4;
                    let noise = (r % 5) as i64 - 2 + if r % 97 == 0 { 300 } else { 0 };
                    let out = f.from_ordinal((o + noise).clamp(-0x7bff, 0x7bff));
                    Some(Point {
                        input: x,
                        second: None,
                        output: match r % 53 {
                            0 => None,
                            1 => Some(0x7e00),
                            _ => Some(out),
                        },
                        reference: Reference {
                            bits: f.from_ordinal(o),
                            exact: None,
                            precision: 0,
                        },
                        left: None,
                    })
                })
                .collect();
            let streamed = shape(f, &points, true);
            let (count, violations, jump_count, jumps) = sorted_windows(f, &points);
            assert_eq!(streamed.jump_count, jump_count);
            assert!(count > EXAMPLES as u64 && (step > 1 || jumps.len() == EXAMPLES));
            assert_eq!(streamed.monotonicity_violations, count);
            let got: Vec<(u32, u32)> = streamed
                .violations
                .iter()
                .map(|v| {
                    (
                        crate::format::parse_hex(f, &v.from.bits).unwrap(),
                        crate::format::parse_hex(f, &v.to.bits).unwrap(),
                    )
                })
                .collect();
            assert_eq!(got, violations);
            let got: Vec<(u32, u64, u64)> = streamed
                .jumps
                .iter()
                .map(|j| {
                    (
                        crate::format::parse_hex(f, &j.from.bits).unwrap(),
                        j.kernel_steps,
                        j.reference_steps,
                    )
                })
                .collect();
            assert_eq!(got, jumps);
        }
    }
}
