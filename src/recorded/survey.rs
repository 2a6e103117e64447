//! What a recorded set holds, gathered in one pass: coverage, repeated inputs, inputs whose
//! repeats disagree (non-determinism), and the signs of an unfilled or garbage array.

use crate::format::{hex, Class, Format, Layout};
use crate::sweep::{InputRange, Inputs};
use serde::{Deserialize, Serialize};

/// Most times one input may appear: a determinism re-run repeats each input a few times, an
/// array filled with one value repeats it thousands of times.
pub const MAX_REPEATS: u64 = 64;

/// Most runs of consecutive inputs kept for the sweep (8 bytes each: 128 MiB).
pub const MAX_RUNS: usize = 1 << 24;

/// Most disagreeing inputs listed in a report.
pub const EXAMPLES: usize = 8;

/// An input recorded more than once with different outputs.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Disagreement {
    /// The input.
    pub input: u32,
    /// The output of its first occurrence in the file (the one measured).
    pub first: u32,
    /// A different output of a later occurrence.
    pub other: u32,
}

/// What one pass over a recorded set found.
#[derive(Clone, Debug)]
pub struct Survey {
    /// Elements in each file.
    pub entries: u64,
    /// Elements whose input lies outside the check's range (not measured).
    pub outside_range: u64,
    /// Distinct inputs inside the range: the measured inputs.
    pub distinct: u64,
    /// Elements inside the range beyond the first of their input.
    pub repeats: u64,
    /// Inputs inside the range recorded with more than one output.
    pub disagreeing: u64,
    /// The first disagreeing inputs in bit order.
    pub examples: Vec<Disagreement>,
    /// Whether every pattern of the range was recorded.
    pub exhaustive: bool,
    /// Whether the file lists its inputs in increasing bit order (repeats adjacent).
    pub in_bit_order: bool,
    /// The measured inputs, when they form at most [`MAX_RUNS`] runs.
    pub inputs: Option<Inputs>,
}

/// Counts made entry by entry, in file order, to recognise arrays that were never filled.
#[derive(Clone, Copy, Debug, Default)]
pub struct Fill {
    entries: u64,
    nan_inputs: u64,
    finite_inputs: u64,
    nan_outputs: u64,
    nan_grads: u64,
}

impl Fill {
    /// Counts one element.
    #[inline]
    pub fn add(&mut self, l: Layout, x: u32, y: u32, g: Option<u32>) {
        self.entries += 1;
        match l.classify(x) {
            Class::Nan => self.nan_inputs += 1,
            Class::Infinite => {}
            _ => self.finite_inputs += 1,
        }
        self.nan_outputs += u64::from(l.classify(y) == Class::Nan);
        self.nan_grads += u64::from(g.is_some_and(|g| l.classify(g) == Class::Nan));
    }

    /// Refuses arrays that are NaN throughout where numbers were due.
    pub fn check(&self, grads: bool) -> Result<(), String> {
        if self.entries > 0 && self.nan_inputs == self.entries {
            return Err(format!(
                "--inputs: all {} inputs are NaN: not a set of distinct inputs (was the array filled?)",
                self.entries
            ));
        }
        if self.finite_inputs > 0 && self.nan_outputs == self.entries {
            return Err(format!(
                "--outputs: every output is NaN although {} inputs are finite: the outputs array looks unfilled",
                self.finite_inputs
            ));
        }
        if grads && self.nan_grads == self.entries {
            return Err("--grads: every g is NaN: the gradient array looks unfilled".into());
        }
        Ok(())
    }
}

/// Builds a [`Survey`] from the recorded elements grouped by input, in increasing bit order.
pub struct Tally<'a> {
    format: &'static dyn Format,
    range: &'a InputRange,
    survey: Survey,
    last: Option<u32>,
}

/// One input with everything recorded for it.
#[derive(Clone, Copy, Debug)]
pub struct Group {
    /// The input.
    pub input: u32,
    /// Elements holding it.
    pub count: u64,
    /// The output of its first element.
    pub first: u32,
    /// An output of a later element different from `first`, if any.
    pub other: Option<u32>,
    /// The g of its first element (gradient roles).
    pub grad: Option<u32>,
    /// A g of a later element different from `grad`, if any.
    pub other_grad: Option<u32>,
}

impl<'a> Tally<'a> {
    /// An empty tally for a set of `entries` elements measured over `range`.
    pub fn new(format: &'static dyn Format, range: &'a InputRange, entries: u64) -> Self {
        Tally {
            format,
            range,
            survey: Survey {
                entries,
                outside_range: 0,
                distinct: 0,
                repeats: 0,
                disagreeing: 0,
                examples: Vec::new(),
                exhaustive: false,
                in_bit_order: true,
                inputs: Some(Inputs::default()),
            },
            last: None,
        }
    }

    /// Marks the file's order as other than bit order (the groups were sorted in memory).
    pub fn unsorted(&mut self) {
        self.survey.in_bit_order = false;
    }

    /// Adds the next input (above every one so far).
    pub fn add(&mut self, g: Group) -> Result<(), String> {
        debug_assert!(self.last.map_or(true, |l| l < g.input));
        self.last = Some(g.input);
        let f = self.format;
        if g.count > MAX_REPEATS {
            return Err(format!(
                "--inputs: input {} ({}) occurs {} times; inputs must be distinct bit patterns (a repeated measurement may repeat each at most {MAX_REPEATS} times): was the array filled?",
                hex(f, g.input),
                f.to_f64(g.input),
                g.count
            ));
        }
        if let (Some(a), Some(b)) = (g.grad, g.other_grad) {
            return Err(format!(
                "--grads: input {} is recorded with two different g ({} and {}): record one g per input",
                hex(f, g.input),
                hex(f, a),
                hex(f, b)
            ));
        }
        if !self.range.contains(f, g.input) {
            self.survey.outside_range += g.count;
            return Ok(());
        }
        let s = &mut self.survey;
        s.distinct += 1;
        s.repeats += g.count - 1;
        if let Some(other) = g.other {
            s.disagreeing += 1;
            if s.examples.len() < EXAMPLES {
                s.examples.push(Disagreement {
                    input: g.input,
                    first: g.first,
                    other,
                });
            }
        }
        if let Some(inputs) = &mut s.inputs {
            inputs.push_sorted(g.input);
            if inputs.run_count() > MAX_RUNS {
                s.inputs = None;
            }
        }
        Ok(())
    }

    /// The survey; fails when no recorded input lies in the range.
    pub fn finish(mut self) -> Result<Survey, String> {
        if self.survey.distinct == 0 {
            return Err(format!(
                "--inputs: none of the {} recorded inputs lies in --range {}",
                self.survey.entries, self.range.text
            ));
        }
        self.survey.exhaustive = self.survey.distinct == self.range.pattern_count(self.format);
        Ok(self.survey)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::Binary16;

    fn group(input: u32, count: u64, other: Option<u32>) -> Group {
        Group {
            input,
            count,
            first: 0x3c00,
            other,
            grad: None,
            other_grad: None,
        }
    }

    #[test]
    fn coverage_is_exhaustive_only_with_every_pattern_of_the_range() {
        let f = &Binary16;
        // [1, 2) holds 1024 binary16 patterns (10 trailing significand bits, IEEE 754-2019 §3.6).
        let range = InputRange::parse(f, "1,2").unwrap();
        let mut t = Tally::new(f, &range, 1026);
        t.add(group(0x0001, 1, None)).unwrap();
        for x in 0x3c00..0x4000 {
            t.add(group(x, 1, None)).unwrap();
        }
        t.add(group(0x4000, 1, None)).unwrap();
        let s = t.finish().unwrap();
        assert!(s.exhaustive);
        assert_eq!((s.distinct, s.outside_range), (1024, 2));
        assert_eq!(s.inputs.unwrap().runs(), &[(0x3c00, 0x3fff)]);

        let mut t = Tally::new(f, &range, 2);
        t.add(group(0x3c00, 2, Some(0x3c01))).unwrap();
        let s = t.finish().unwrap();
        assert!(!s.exhaustive);
        assert_eq!((s.repeats, s.disagreeing), (1, 1));
        assert_eq!(s.examples[0].other, 0x3c01);
    }

    #[test]
    fn garbage_is_refused() {
        let f = &Binary16;
        let all = InputRange::all(f);
        let mut t = Tally::new(f, &all, 1000);
        assert!(t
            .add(group(0x7e00, 1000, None))
            .unwrap_err()
            .contains("1000 times"));
        let one_two = InputRange::parse(f, "1,2").unwrap();
        let t = Tally::new(f, &one_two, 1);
        assert!(t.finish().unwrap_err().contains("none of"));

        let l = f.layout();
        let mut fill = Fill::default();
        fill.add(l, 0x7e00, 0x3c00, None);
        fill.add(l, 0x7e00, 0x3c00, None);
        assert!(fill
            .check(false)
            .unwrap_err()
            .contains("all 2 inputs are NaN"));
        let mut fill = Fill::default();
        fill.add(l, 0x3c00, 0x7e00, Some(0x7e00));
        fill.add(l, 0x7e00, 0x7e00, Some(0x7e00));
        assert!(fill
            .check(false)
            .unwrap_err()
            .contains("every output is NaN"));
        let mut fill = Fill::default();
        fill.add(l, 0x3c00, 0x3c00, Some(0x7e00));
        assert!(fill.check(false).is_ok());
        assert!(fill.check(true).unwrap_err().contains("every g"));
    }
}
