//! Non-finite runs: maximal runs of consecutive inputs (bit order, per sign) where kernel and
//! reference fall in different classes among "nan", "+inf", "-inf", "finite".

use super::{Point, Probe};
use crate::format::{Class, Format, Layout};
use crate::report::BitsValue;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::ops::RangeInclusive;

/// Largest gap scanned input by input next to a run; beyond it only the part nearest the run
/// is scanned and the run's end is marked inexact.
pub const MAX_GAP_SCAN: u32 = 1 << 22;

/// One run.
#[derive(Clone, Debug, Serialize)]
pub struct NonFiniteRun {
    /// First input of the run in bit order.
    pub first: BitsValue,
    /// Last input of the run in bit order.
    pub last: BitsValue,
    /// Inputs from first to last.
    pub count: u64,
    /// The kernel's class over the run.
    pub kernel: &'static str,
    /// The reference's class over the run.
    pub reference: &'static str,
    /// Whether first and last are exact (every input next to them was evaluated).
    pub exact_ends: bool,
    /// "exhaustive" when every input of the run was evaluated, "sampled" otherwise.
    pub interior: &'static str,
}

/// The value classes runs compare.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
enum ValueClass {
    Nan,
    PlusInf,
    MinusInf,
    Finite,
}

impl ValueClass {
    fn of(l: Layout, bits: u32) -> ValueClass {
        if l.is_finite(bits) {
            return ValueClass::Finite;
        }
        match l.classify(bits) {
            Class::Nan => ValueClass::Nan,
            Class::Infinite if l.is_sign_negative(bits) => ValueClass::MinusInf,
            Class::Infinite => ValueClass::PlusInf,
            _ => ValueClass::Finite,
        }
    }
    /// The report's name, as [`super::value_class`] gives it.
    fn name(self) -> &'static str {
        match self {
            ValueClass::Nan => "nan",
            ValueClass::PlusInf => "+inf",
            ValueClass::MinusInf => "-inf",
            ValueClass::Finite => "finite",
        }
    }
}

/// The kernel's and the reference's class at a point.
type Classes = (ValueClass, ValueClass);

fn classes(l: Layout, p: &Point) -> Option<Classes> {
    p.output
        .map(|o| (ValueClass::of(l, o), ValueClass::of(l, p.reference.bits)))
}

#[derive(Serialize, Deserialize)]
struct Raw {
    first: u32,
    last: u32,
    classes: Classes,
    known: u64,
}

/// Builds runs from known points fed in increasing bit order, joining neighbours in the known
/// list of the same sign.
#[derive(Serialize, Deserialize)]
struct RunBuilder {
    sign: u32,
    previous: Option<(u32, Option<Classes>)>,
    /// The first known point, to join a run across a merge.
    first: Option<(u32, Option<Classes>)>,
    runs: Vec<Raw>,
}

impl RunBuilder {
    fn new(format: &dyn Format) -> Self {
        RunBuilder {
            sign: format.infinity(true) & !format.infinity(false),
            previous: None,
            first: None,
            runs: Vec::new(),
        }
    }
    /// Whether a mismatch at `bits` continues the run of the previous known point.
    fn joins(&self, bits: u32, mismatch: Option<Classes>) -> bool {
        match (self.previous, mismatch) {
            (Some((pb, Some(pc))), Some(mc)) => {
                pc == mc && (pb & self.sign) == (bits & self.sign) && pc.0 != pc.1
            }
            _ => false,
        }
    }
    /// Joins a builder of later points (all above ours in bit order).
    fn merge(&mut self, other: RunBuilder) {
        let Some((bits, c)) = other.first else {
            return;
        };
        let mut runs = other.runs.into_iter().peekable();
        if self.joins(bits, c.filter(|(k, r)| k != r)) {
            let head = runs.next().expect("a mismatch starts a run");
            let run = self.runs.last_mut().expect("joined run");
            run.last = head.last;
            run.known += head.known;
        }
        self.runs.extend(runs);
        self.first = self.first.or(other.first);
        self.previous = other.previous;
    }
    fn push(&mut self, bits: u32, c: Option<Classes>) {
        let mismatch = c.filter(|(k, r)| k != r);
        let joins = self.joins(bits, mismatch);
        self.first.get_or_insert((bits, c));
        if let Some(mc) = mismatch {
            if joins {
                let run = self.runs.last_mut().expect("joined run");
                run.last = bits;
                run.known += 1;
            } else {
                self.runs.push(Raw {
                    first: bits,
                    last: bits,
                    classes: mc,
                    known: 1,
                });
            }
        }
        self.previous = Some((bits, c));
    }
}

/// Runs among the known points, joining neighbours in the known list of the same sign.
fn raw_runs(format: &dyn Format, known: &BTreeMap<u32, Option<Classes>>) -> Vec<Raw> {
    let mut builder = RunBuilder::new(format);
    for (&bits, &c) in known {
        builder.push(bits, c);
    }
    builder.runs
}

fn report(
    format: &dyn Format,
    raw: Vec<Raw>,
    exhaustive: bool,
    inexact: &[u32],
) -> Vec<NonFiniteRun> {
    raw.into_iter()
        .map(|r| {
            let count = (r.last - r.first) as u64 + 1;
            NonFiniteRun {
                first: BitsValue::new(format, r.first),
                last: BitsValue::new(format, r.last),
                count,
                kernel: r.classes.0.name(),
                reference: r.classes.1.name(),
                exact_ends: exhaustive || !inexact.iter().any(|&b| b == r.first || b == r.last),
                interior: if r.known == count {
                    "exhaustive"
                } else {
                    "sampled"
                },
            }
        })
        .collect()
}

/// The runs of an exhaustive sweep, from its points fed in increasing bit order (chunk by
/// chunk): the same runs [`non_finite_runs`] finds with `exhaustive` set, in constant memory
/// apart from the runs themselves.
#[derive(Serialize, Deserialize)]
pub struct NonFiniteStream {
    #[serde(with = "crate::format::by_name_serde")]
    format: &'static dyn Format,
    /// The format's bit arithmetic, inlined in the per-point work.
    layout: Layout,
    builder: RunBuilder,
}

impl NonFiniteStream {
    /// An empty stream.
    pub fn new(format: &'static dyn Format) -> Self {
        NonFiniteStream {
            format,
            layout: format.layout(),
            builder: RunBuilder::new(format),
        }
    }
    /// Adds the next point in bit order.
    pub fn add(&mut self, p: &Point) {
        self.builder.push(p.input, classes(self.layout, p));
    }
    /// Adds the points of inputs `p.input..=last`, each with p's output and reference, both
    /// finite: none is a mismatch, so the run only moves the previous point along.
    pub fn add_run(&mut self, p: &Point, last: u32) {
        let c = classes(self.layout, p);
        self.builder.push(p.input, c);
        self.builder.previous = Some((last, c));
    }
    /// Joins a stream of later points (all above ours in bit order).
    pub fn merge(&mut self, other: NonFiniteStream) {
        self.builder.merge(other.builder);
    }
    /// The runs.
    pub fn finish(self) -> Vec<NonFiniteRun> {
        report(self.format, self.builder.runs, true, &[])
    }
}

/// The runs of one stretch of bit patterns (a shard's territory) of a sampled sweep, after
/// scanning the gaps next to runs that lie in it; stretches merge in bit order.
#[derive(Serialize, Deserialize)]
pub struct RunsPart {
    #[serde(with = "crate::format::by_name_serde")]
    format: &'static dyn Format,
    builder: RunBuilder,
    /// Run ends whose gap scan was capped.
    inexact: Vec<u32>,
    /// Inputs evaluated by the gap scans.
    pub scanned: u64,
}

impl RunsPart {
    /// Joins the part of the next stretch.
    pub fn merge(&mut self, other: RunsPart) {
        self.builder.merge(other.builder);
        self.inexact.extend(other.inexact);
        self.scanned += other.scanned;
    }
    /// The runs.
    pub fn finish(self) -> Vec<NonFiniteRun> {
        report(self.format, self.builder.runs, false, &self.inexact)
    }

    /// Marks as inexact every run end whose neighbouring pattern (on the same sign) was not
    /// evaluated: without a kernel to call (recorded outputs) the gaps are never scanned.
    pub fn mark_unevaluated_ends(&mut self, evaluated: impl Fn(u32) -> bool) {
        let sign = self.builder.sign;
        for run in &self.builder.runs {
            let side_start = run.first & sign;
            let side_end = side_start | (sign - 1);
            if run.first != side_start && !evaluated(run.first - 1) {
                self.inexact.push(run.first);
            }
            if run.last != side_end && !evaluated(run.last + 1) {
                self.inexact.push(run.last);
            }
        }
    }
}

/// Finds the runs among `points` and scans the gaps next to every run through `probe` so
/// each run's first and last input are exact.
pub fn non_finite_runs(
    format: &'static dyn Format,
    points: &[Point],
    probe: &mut dyn Probe,
) -> Vec<NonFiniteRun> {
    non_finite_part(format, points, probe, 0..=u32::MAX).finish()
}

/// The runs within `territory`, a stretch of bit patterns that begins just after a known
/// point (or at 0) and ends on a known point (or at the last pattern).
///
/// `points` must hold every known point in the territory and the known points next to it on
/// both sides. Whether the gap between two neighbouring known points is scanned, and from
/// which end, depends on those two points alone, and such a gap never straddles the ends of
/// a territory: so the parts of consecutive territories merge into exactly the runs of one
/// pass over all points.
pub fn non_finite_part(
    format: &'static dyn Format,
    points: &[Point],
    probe: &mut dyn Probe,
    territory: RangeInclusive<u32>,
) -> RunsPart {
    let mut known: BTreeMap<u32, Option<Classes>> = points
        .iter()
        .map(|p| (p.input, classes(format.layout(), p)))
        .collect();
    let sign = format.infinity(true) & !format.infinity(false);
    let mut inexact: Vec<u32> = Vec::new();
    let runs = raw_runs(format, &known);
    let mut wanted: Vec<u32> = Vec::new();
    for run in &runs {
        let side_start = run.first & sign;
        let side_end = side_start | (sign - 1);
        let before = known
            .range(side_start..run.first)
            .next_back()
            .map(|(&b, _)| b + 1)
            .unwrap_or(side_start);
        // A run may end on the side's last pattern (a NaN input): nothing lies after it.
        let after = match run.last.checked_add(1).filter(|&b| b <= side_end) {
            Some(next) => known
                .range(next..=side_end)
                .next()
                .map(|(&b, _)| b - 1)
                .unwrap_or(side_end),
            None => side_end,
        };
        // The gap next to each end, nearest part first, capped; each gap belongs to the
        // territory that holds it.
        if territory.contains(&run.first) {
            let lo = before.max(run.first.saturating_sub(MAX_GAP_SCAN));
            if lo > before {
                inexact.push(run.first);
            }
            wanted.extend(lo..run.first);
        }
        if let Some(next) = run.last.checked_add(1).filter(|&b| b <= side_end) {
            if territory.contains(&next) {
                let hi = after.min(run.last.saturating_add(MAX_GAP_SCAN));
                if hi < after {
                    inexact.push(run.last);
                }
                wanted.extend(next..=hi);
            }
        }
    }
    wanted.sort_unstable();
    wanted.dedup();
    wanted.retain(|b| !known.contains_key(b));
    let scanned = wanted.len() as u64;
    for p in probe.probe(&wanted) {
        known.insert(p.input, classes(format.layout(), &p));
    }
    let mut builder = RunBuilder::new(format);
    for (&bits, &c) in known.range(territory) {
        builder.push(bits, c);
    }
    RunsPart {
        format,
        builder,
        inexact,
        scanned,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::Binary16;
    use crate::reference::Reference;

    /// Kernel NaN on [0x48e0, 0x4a10] except a hole at 0x48f0; reference always finite.
    struct Fake;
    fn point(x: u32) -> Point {
        let nan = (0x48e0..=0x4a10).contains(&x) && x != 0x48f0;
        Point {
            input: x,
            second: None,
            output: Some(if nan { 0x7e00 } else { 0x3c00 }),
            reference: Reference {
                bits: 0x3c00,
                exact: None,
                precision: 0,
            },
            left: None,
        }
    }
    impl Probe for Fake {
        fn probe(&mut self, inputs: &[u32]) -> Vec<Point> {
            inputs.iter().map(|&x| point(x)).collect()
        }
    }

    #[test]
    fn sampled_runs_get_exact_ends_and_holes_split_them() {
        let f = &Binary16;
        let samples: Vec<Point> = (0..0x7c00u32).step_by(0x40).map(point).collect();
        let runs = non_finite_runs(f, &samples, &mut Fake);
        let ends: Vec<(String, String)> = runs
            .iter()
            .map(|r| (r.first.bits.clone(), r.last.bits.clone()))
            .collect();
        // Samples every 64 patterns see NaN from 0x4900 to 0x4a00; the gaps next to them are
        // scanned, which finds the true ends and the hole at 0x48f0 that splits the run.
        assert_eq!(
            ends,
            vec![
                ("0x48e0".into(), "0x48ef".into()),
                ("0x48f1".into(), "0x4a10".into())
            ]
        );
        assert!(runs
            .iter()
            .all(|r| r.kernel == "nan" && r.reference == "finite" && r.exact_ends));
        assert_eq!(runs[1].count, 0x4a10 - 0x48f1 + 1);
        assert_eq!(
            (runs[0].interior, runs[1].interior),
            ("exhaustive", "sampled")
        );
    }
}
