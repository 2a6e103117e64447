//! Non-finite runs: maximal runs of consecutive inputs (bit order, per sign) where kernel and
//! reference fall in different classes among "nan", "+inf", "-inf", "finite".
//!
//! A broken kernel can have a run at every other input, so runs are never listed in memory:
//! each finished run goes into a [`RunSummary`] (exact totals, a table per sign × binade ×
//! kind, the longest few) and, on request, to a [`FindingSink`] as it is found. Only the two
//! runs at the ends of a stretch are held apart, because they may continue into the next
//! stretch (a chunk of the sweep, or a shard).

use super::{FindingSink, Point, Probe};
use crate::format::{Class, Format, Layout};
use crate::report::BitsValue;
use serde::{Deserialize, Serialize};

mod valid;
use std::ops::RangeInclusive;

/// Largest gap scanned input by input next to a run; beyond it only the part nearest the run
/// is scanned and the run's end is marked inexact.
pub const MAX_GAP_SCAN: u32 = 1 << 22;

/// Runs listed in a report by default (the longest; see [`RunSummary`]).
pub const LISTED_RUNS: usize = 100;

/// Inputs evaluated per call while a gap is scanned.
const SCAN_CHUNK: u32 = 1 << 16;

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
    /// Where, what the kernel gave and what the reference is there, in a sentence.
    pub message: String,
}

/// Exact counts over every run of the sweep, whatever is listed.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct RunTotals {
    /// Maximal runs.
    pub runs: u64,
    /// Inputs in them (from first to last of each run).
    pub inputs: u64,
}

/// The runs of one sign × binade of the input × kind (kernel class, reference class).
#[derive(Clone, Debug, Serialize)]
pub struct RunCell {
    /// "+2^70", "-subnormal", "+inf/nan" (the binade of the inputs).
    pub binade: String,
    /// The kernel's class.
    pub kernel: &'static str,
    /// The reference's class.
    pub reference: &'static str,
    /// Runs that start in this binade.
    pub runs: u64,
    /// Inputs of this binade inside runs of this kind.
    pub inputs: u64,
    /// Lowest such input in bit order.
    pub first: BitsValue,
    /// Highest such input in bit order.
    pub last: BitsValue,
}

/// The value classes runs compare.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize)]
pub enum ValueClass {
    /// Any NaN.
    Nan,
    /// +∞.
    PlusInf,
    /// −∞.
    MinusInf,
    /// Any finite value.
    Finite,
}

impl ValueClass {
    #[inline(always)]
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
pub type Classes = (ValueClass, ValueClass);

/// The classes of a point (`None` when the kernel crashed on it).
#[inline(always)]
pub fn classes(l: Layout, p: &Point) -> Option<Classes> {
    p.output
        .map(|o| (ValueClass::of(l, o), ValueClass::of(l, p.reference.bits)))
}

/// One run while it is built: its ends, kind, how many of its inputs were evaluated, and
/// whether each end is known to be exact.
#[derive(Clone, Copy, Debug, Serialize, Deserialize)]
struct Raw {
    first: u32,
    last: u32,
    classes: Classes,
    known: u64,
    exact_first: bool,
    exact_last: bool,
}

impl Raw {
    fn count(&self) -> u64 {
        u64::from(self.last - self.first) + 1
    }
    fn report(&self, format: &dyn Format) -> NonFiniteRun {
        let exact_ends = self.exact_first && self.exact_last;
        let sampled = self.known != self.count();
        NonFiniteRun {
            message: crate::report::sentence::run(
                format,
                self.first,
                self.last,
                self.count(),
                self.classes.0.name(),
                self.classes.1.name(),
                exact_ends,
                sampled,
            ),
            first: BitsValue::new(format, self.first),
            last: BitsValue::new(format, self.last),
            count: self.count(),
            kernel: self.classes.0.name(),
            reference: self.classes.1.name(),
            exact_ends: self.exact_first && self.exact_last,
            interior: if self.known == self.count() {
                "exhaustive"
            } else {
                "sampled"
            },
        }
    }
}

/// Longest first; ties to the lowest first input: a total order on runs, so the listed runs
/// are the same however the sweep was cut into stretches or shards.
fn listing_order(a: &Raw, b: &Raw) -> std::cmp::Ordering {
    b.count().cmp(&a.count()).then(a.first.cmp(&b.first))
}

/// A cell of the summary while counting: sign and exponent field of the inputs, kind.
#[derive(Clone, Copy, Debug, Serialize, Deserialize)]
struct Cell {
    key: u32,
    classes: Classes,
    runs: u64,
    inputs: u64,
    first: u32,
    last: u32,
}

/// Every finished run of a sweep in bounded memory: exact totals, a cell per sign × binade ×
/// kind, and the `keep` longest runs (ties to the lowest first input). Summaries of any
/// stretches merge into the summary of their union.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct RunSummary {
    totals: RunTotals,
    /// Sorted by (key, classes).
    cells: Vec<Cell>,
    /// The longest runs, at most 2·keep between truncations.
    longest: Vec<Raw>,
    /// The last of `keep` runs kept at the last truncation: a run that sorts after it is
    /// never listed.
    floor: Option<Raw>,
    keep: usize,
}

impl RunSummary {
    /// An empty summary that lists the `keep` longest runs.
    pub fn new(keep: usize) -> Self {
        RunSummary {
            totals: RunTotals::default(),
            cells: Vec::new(),
            longest: Vec::new(),
            floor: None,
            keep,
        }
    }

    fn cell(&mut self, key: u32, classes: Classes) -> &mut Cell {
        let at = self
            .cells
            .binary_search_by(|c| (c.key, c.classes).cmp(&(key, classes)));
        let i = match at {
            Ok(i) => i,
            Err(i) => {
                self.cells.insert(
                    i,
                    Cell {
                        key,
                        classes,
                        runs: 0,
                        inputs: 0,
                        first: u32::MAX,
                        last: 0,
                    },
                );
                i
            }
        };
        &mut self.cells[i]
    }

    /// Counts one finished run.
    fn add(&mut self, l: Layout, run: Raw) {
        self.totals.runs += 1;
        self.totals.inputs += run.count();
        let width = l.precision() - 1;
        let (from, to) = (
            l.sign_and_exponent(run.first),
            l.sign_and_exponent(run.last),
        );
        for key in from..=to {
            let lo = run.first.max(key << width);
            let hi = run.last.min(((key + 1) << width).wrapping_sub(1));
            let cell = self.cell(key, run.classes);
            cell.runs += u64::from(key == from);
            cell.inputs += u64::from(hi - lo) + 1;
            cell.first = cell.first.min(lo);
            cell.last = cell.last.max(hi);
        }
        // Once `keep` runs are kept, a run that would sort after the last of them never
        // will be listed (most runs of a broken kernel are alike).
        let listed = self.keep > 0
            && self.floor.map_or(true, |last| {
                listing_order(&run, &last) == std::cmp::Ordering::Less
            });
        if listed {
            self.longest.push(run);
            if self.longest.len() >= 2 * self.keep {
                self.trim();
            }
        }
    }

    fn trim(&mut self) {
        self.longest.sort_by(listing_order);
        self.longest.truncate(self.keep);
        if self.longest.len() == self.keep {
            self.floor = self.longest.last().copied();
        }
    }

    /// Joins the summary of other runs (any stretch).
    pub fn merge(&mut self, other: RunSummary) {
        self.totals.runs += other.totals.runs;
        self.totals.inputs += other.totals.inputs;
        for c in other.cells {
            let mine = self.cell(c.key, c.classes);
            mine.runs += c.runs;
            mine.inputs += c.inputs;
            mine.first = mine.first.min(c.first);
            mine.last = mine.last.max(c.last);
        }
        self.longest.extend(other.longest);
        self.trim();
    }

    /// Exact totals.
    pub fn totals(&self) -> RunTotals {
        self.totals
    }

    /// The listed runs, longest first (ties to the lowest first input).
    pub fn listed(&self, format: &dyn Format) -> Vec<NonFiniteRun> {
        let mut longest = self.longest.clone();
        longest.sort_by(listing_order);
        longest.truncate(self.keep);
        longest.iter().map(|r| r.report(format)).collect()
    }

    /// The cells in bit order of their binades, then by kind.
    pub fn cells(&self, format: &dyn Format) -> Vec<RunCell> {
        let l = format.layout();
        let width = l.precision() - 1;
        let top = (1u32 << (l.width() - 1 - width)) - 1;
        self.cells
            .iter()
            .map(|c| {
                let negative = c.key > top;
                let field = c.key & top;
                let sign = if negative { "-" } else { "+" };
                let binade = if field == 0 {
                    format!("{sign}subnormal")
                } else if field == top {
                    format!("{sign}inf/nan")
                } else {
                    format!("{sign}2^{}", field as i32 - l.bias())
                };
                RunCell {
                    binade,
                    kernel: c.classes.0.name(),
                    reference: c.classes.1.name(),
                    runs: c.runs,
                    inputs: c.inputs,
                    first: BitsValue::new(format, c.first),
                    last: BitsValue::new(format, c.last),
                }
            })
            .collect()
    }
}

/// Builds runs from known points fed in increasing bit order, joining neighbours in the known
/// list of the same sign; finished runs wait in `closed` until the owner settles them into
/// its summary (and sink), so that parts built in parallel hand them on in bit order.
#[derive(Serialize, Deserialize)]
struct RunBuilder {
    sign: u32,
    previous: Option<(u32, Option<Classes>)>,
    /// The first known point, to join a run across a merge.
    first: Option<(u32, Option<Classes>)>,
    /// The stretch's first run (it may continue the previous stretch's last run) and the run
    /// growing at its end; at most these two, in bit order.
    ends: Vec<Raw>,
    /// Finished runs not yet settled, in bit order.
    closed: Vec<Raw>,
    /// Whether the next point follows inputs that were not evaluated.
    after_hole: bool,
    summary: RunSummary,
}

impl RunBuilder {
    fn new(format: &dyn Format, keep: usize) -> Self {
        RunBuilder {
            sign: format.infinity(true) & !format.infinity(false),
            previous: None,
            first: None,
            ends: Vec::new(),
            closed: Vec::new(),
            after_hole: false,
            summary: RunSummary::new(keep),
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
    /// Keeps only the first and the last run in `ends`; the ones between are finished.
    fn close_middle(&mut self) {
        if self.ends.len() > 2 {
            let last = self.ends.pop().expect("three runs");
            self.closed.extend(self.ends.drain(1..));
            self.ends.push(last);
        }
    }
    /// Joins a builder of later points (all above ours in bit order).
    fn merge(&mut self, mut other: RunBuilder) {
        self.summary
            .merge(std::mem::replace(&mut other.summary, RunSummary::new(0)));
        let Some((bits, c)) = other.first else {
            return;
        };
        let mut theirs = std::mem::take(&mut other.ends);
        let joined = self.joins(bits, c.filter(|(k, r)| k != r));
        if joined {
            let head = theirs.remove(0);
            let run = self.ends.last_mut().expect("joined run");
            run.last = head.last;
            run.known += head.known;
            run.exact_last = head.exact_last;
        }
        // Every run in bit order: our first, our finished ones, our last, their first (unless
        // joined to our last), their finished ones, their last.
        let mut all = Vec::with_capacity(self.closed.len() + other.closed.len() + 4);
        let mut mine = self.ends.drain(..);
        all.extend(mine.next());
        all.append(&mut self.closed);
        all.extend(mine);
        let mut theirs = theirs.into_iter();
        if !joined {
            all.extend(theirs.next());
        }
        all.append(&mut other.closed);
        all.extend(theirs);
        if all.len() > 2 {
            let last = all.pop().expect("three runs");
            self.closed = all.drain(1..).collect();
            self.ends = vec![all.pop().expect("first run"), last];
        } else {
            self.ends = all;
        }
        self.first = self.first.or(other.first);
        self.previous = other.previous;
        self.after_hole = other.after_hole;
    }
    /// Adds the next known point: the common case (no mismatch, no hole before it, not the
    /// first point) only moves the previous point along, as the general path would.
    #[inline(always)]
    fn push(&mut self, bits: u32, c: Option<Classes>) {
        if !self.after_hole && self.first.is_some() && c.map_or(true, |(k, r)| k == r) {
            return self.moved(bits, c);
        }
        self.push_any(bits, c);
    }
    /// The general step of [`Self::push`]: runs opened, joined or ended.
    fn push_any(&mut self, bits: u32, c: Option<Classes>) {
        let mismatch = c.filter(|(k, r)| k != r);
        let joins = self.joins(bits, mismatch);
        let hole = std::mem::take(&mut self.after_hole);
        self.first.get_or_insert((bits, c));
        let open = self.previous.is_some_and(|(pb, pc)| {
            pc.is_some_and(|(k, r)| k != r) && self.ends.last().is_some_and(|r| r.last == pb)
        });
        if joins {
            let run = self.ends.last_mut().expect("joined run");
            run.last = bits;
            run.known += 1;
            return self.moved(bits, c);
        }
        if hole && open {
            // The previous run ends just before inputs nobody evaluated.
            self.ends.last_mut().expect("open run").exact_last = false;
        }
        if let Some(mc) = mismatch {
            self.ends.push(Raw {
                first: bits,
                last: bits,
                classes: mc,
                known: 1,
                exact_first: !hole,
                exact_last: true,
            });
            self.close_middle();
        }
        self.moved(bits, c);
    }
    fn moved(&mut self, bits: u32, c: Option<Classes>) {
        self.previous = Some((bits, c));
    }
    /// Marks the inputs between the last point and the next one as not evaluated.
    fn hole(&mut self) {
        self.after_hole = true;
    }
    /// Moves the finished runs into the summary and the sink; `leftmost`: nothing lies before
    /// this builder's points, so its first run is final once another run follows.
    fn settle(
        &mut self,
        l: Layout,
        format: &dyn Format,
        sink: &mut dyn FindingSink,
        leftmost: bool,
    ) {
        if leftmost && self.ends.len() > 1 {
            let first = self.ends.remove(0);
            self.closed.insert(0, first);
        }
        for run in self.closed.drain(..) {
            sink.run(&run.report(format));
            self.summary.add(l, run);
        }
    }
    /// Settles every run, the ends included.
    fn finish(mut self, l: Layout, format: &dyn Format, sink: &mut dyn FindingSink) -> RunSummary {
        let ends: Vec<Raw> = self.ends.drain(..).collect();
        self.closed.extend(ends);
        self.settle(l, format, sink, false);
        self.summary
    }
}

/// The runs of an exhaustive sweep, from its points fed in increasing bit order (chunk by
/// chunk), in memory independent of the number of runs.
#[derive(Serialize, Deserialize)]
pub struct NonFiniteStream {
    #[serde(with = "crate::format::by_name_serde")]
    format: &'static dyn Format,
    /// The format's bit arithmetic, inlined in the per-point work.
    layout: Layout,
    /// The output layout when it differs from the input's (mixed-format kernels): the
    /// kernel's and the reference's classes are read in it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    out: Option<Layout>,
    builder: RunBuilder,
}

impl NonFiniteStream {
    /// An empty stream that will list the `keep` longest runs (`format`: the inputs').
    pub fn new(format: &'static dyn Format, keep: usize) -> Self {
        NonFiniteStream {
            format,
            layout: format.layout(),
            out: None,
            builder: RunBuilder::new(format, keep),
        }
    }
    /// The same stream reading outputs in another format (mixed-format kernels).
    pub fn with_output(mut self, output: &'static dyn Format) -> Self {
        self.out = (output.name() != self.format.name()).then(|| output.layout());
        self
    }
    /// An empty stream with the same settings.
    pub fn fresh(&self) -> Self {
        let mut s = NonFiniteStream::new(self.format, self.builder.summary.keep);
        s.out = self.out;
        s
    }
    /// Adds the next point in bit order.
    pub fn add(&mut self, p: &Point) {
        self.add_in(self.out.unwrap_or(self.layout), p);
    }
    /// [`Self::add`] with the output layout passed in (it must be this stream's), for callers
    /// that know it at compile time.
    #[inline(always)]
    pub fn add_in(&mut self, out: Layout, p: &Point) {
        debug_assert!(out == self.out.unwrap_or(self.layout));
        self.builder.push(p.input, classes(out, p));
    }
    /// [`Self::add_in`] for a point whose output and reference are both finite.
    #[inline(always)]
    pub fn add_finite(&mut self, input: u32) {
        let finite = (ValueClass::Finite, ValueClass::Finite);
        self.builder.push(input, Some(finite));
    }
    /// Adds the points of inputs `p.input..=last`, each with p's output and reference, both
    /// finite: none is a mismatch, so the run only moves the previous point along.
    pub fn add_run(&mut self, p: &Point, last: u32) {
        let c = classes(self.out.unwrap_or(self.layout), p);
        self.builder.push(p.input, c);
        self.builder.moved(last, c);
    }
    /// Joins a stream of later points (all above ours in bit order).
    pub fn merge(&mut self, other: NonFiniteStream) {
        self.builder.merge(other.builder);
    }
    /// Hands the finished runs to the summary and the sink; `leftmost`: no input before ours
    /// belongs to the sweep (an unsharded run or the first shard).
    pub fn settle(&mut self, sink: &mut dyn FindingSink, leftmost: bool) {
        self.builder
            .settle(self.layout, self.format, sink, leftmost);
    }
    /// The summary of every run.
    pub fn finish(self, sink: &mut dyn FindingSink) -> RunSummary {
        self.builder.finish(self.layout, self.format, sink)
    }
}

/// The runs of one stretch of bit patterns (a shard's territory) of a sampled sweep, after
/// scanning the gaps next to runs that lie in it; stretches merge in bit order.
#[derive(Serialize, Deserialize)]
pub struct RunsPart {
    #[serde(with = "crate::format::by_name_serde")]
    format: &'static dyn Format,
    builder: RunBuilder,
    /// Inputs evaluated by the gap scans.
    pub scanned: u64,
}

impl RunsPart {
    /// No runs yet: the start of a walk that lists the `keep` longest runs.
    pub fn new(format: &'static dyn Format, keep: usize) -> Self {
        RunsPart {
            format,
            builder: RunBuilder::new(format, keep),
            scanned: 0,
        }
    }
    /// Joins the part of the next stretch.
    pub fn merge(&mut self, other: RunsPart) {
        self.builder.merge(other.builder);
        self.scanned += other.scanned;
    }
    /// The summary of every run.
    pub fn finish(self, sink: &mut dyn FindingSink) -> RunSummary {
        self.builder.finish(self.format.layout(), self.format, sink)
    }
}

/// A known point of a sampled sweep: its input and classes (`None`: the kernel crashed).
pub type Known = (u32, Option<Classes>);

/// Finds the runs among the known points of a sampled sweep and scans the gaps next to every
/// run through `probe`, so each run's first and last input are exact (up to
/// [`MAX_GAP_SCAN`] inputs from the run).
pub fn non_finite_runs(
    format: &'static dyn Format,
    points: &[Point],
    probe: &mut dyn Probe,
    keep: usize,
) -> RunSummary {
    let l = format.layout();
    let mut known: Vec<Known> = points.iter().map(|p| (p.input, classes(l, p))).collect();
    non_finite_part(
        format,
        l,
        &mut known,
        probe,
        0..=u32::MAX,
        keep,
        &mut super::NoSink,
    )
    .finish(&mut super::NoSink)
}

/// The runs within `territory`, a stretch of bit patterns that begins just after a known
/// point (or at 0) and ends on a known point (or at the last pattern).
///
/// `known` must hold every known point in the territory and the known points next to it on
/// both sides (any order; it is sorted here). Whether the gap between two neighbouring known
/// points is scanned, and from which end, depends on those two points alone, and such a gap
/// never straddles the ends of a territory: so the parts of consecutive territories merge
/// into exactly the runs of one pass over all points. Gaps are scanned in chunks and every
/// finished run goes to the sink at once: memory does not grow with the runs.
pub fn non_finite_part(
    format: &'static dyn Format,
    out: Layout,
    known: &mut Vec<Known>,
    probe: &mut dyn Probe,
    territory: RangeInclusive<u32>,
    keep: usize,
    sink: &mut dyn FindingSink,
) -> RunsPart {
    let leftmost = *territory.start() == 0;
    let fresh = RunsPart::new(format, keep);
    continue_part(fresh, leftmost, out, known, probe, territory, sink)
}

/// Continues `part` (the runs of the territories just before) through the next territory, as
/// [`non_finite_part`] does for the first: one walk over consecutive territories finds
/// exactly the runs of one walk over their union, and settles every finished run on the way,
/// so a sweep walked stretch by stretch keeps only a stretch's known points. `leftmost`: the
/// first territory began at pattern 0; `out`: the layout of the outputs, in which scanned points are classed.
pub fn continue_part(
    part: RunsPart,
    leftmost: bool,
    out: Layout,
    known: &mut Vec<Known>,
    probe: &mut dyn Probe,
    territory: RangeInclusive<u32>,
    sink: &mut dyn FindingSink,
) -> RunsPart {
    let format = part.format;
    let l = format.layout();
    known.sort_unstable_by_key(|k| k.0);
    known.dedup_by_key(|k| k.0);
    let sign = format.infinity(true) & !format.infinity(false);
    let mut walk = Walk {
        builder: part.builder,
        next_input: Some(*territory.start()),
        scanned: part.scanned,
        territory: territory.clone(),
    };
    let mismatch = |c: Option<Classes>| c.filter(|(k, r)| k != r);
    let mut gaps: Vec<(u32, u32, Option<Known>, Option<Known>)> = Vec::with_capacity(2);
    for i in 0..=known.len() {
        let (left, right) = (i.checked_sub(1).map(|j| known[j]), known.get(i).copied());
        // The gaps between two known points, one per sign they touch.
        gaps.clear();
        match (left, right) {
            (Some(a), Some(b)) if a.0 & sign == b.0 & sign => {
                gaps.push((a.0 + 1, b.0.wrapping_sub(1), Some(a), Some(b)))
            }
            _ => {
                if let Some(a) = left {
                    gaps.push((a.0.wrapping_add(1), a.0 | (sign - 1), Some(a), None));
                }
                if let Some(b) = right {
                    gaps.push((b.0 & sign, b.0.wrapping_sub(1), None, Some(b)));
                }
            }
        }
        for &(lo, hi, a, b) in &gaps {
            let empty = match (a, b) {
                (Some(a), _) if a.0 & !sign == sign - 1 => true,
                (_, Some(b)) if b.0 & !sign == 0 => true,
                _ => lo > hi,
            };
            if empty || !walk.territory.contains(&lo) {
                continue;
            }
            let (ma, mb) = (a.and_then(|a| mismatch(a.1)), b.and_then(|b| mismatch(b.1)));
            let joined = ma.is_some() && ma == mb;
            let mut ranges: Vec<(u32, u32)> = Vec::with_capacity(2);
            if ma.is_some() && !joined {
                ranges.push((lo, hi.min(lo.saturating_add(MAX_GAP_SCAN - 1))));
            }
            if mb.is_some() && !joined {
                let from = lo.max(hi.saturating_sub(MAX_GAP_SCAN - 1));
                match ranges.last_mut() {
                    Some(r) if from <= r.1.saturating_add(1) => r.1 = hi,
                    _ => ranges.push((from, hi)),
                }
            }
            for (from, to) in ranges {
                walk.scan(from, to, probe, out);
            }
        }
        if let Some(b) = right.filter(|b| walk.territory.contains(&b.0)) {
            walk.push(b);
        }
        walk.builder.settle(l, format, sink, leftmost);
    }
    RunsPart {
        format,
        builder: walk.builder,
        scanned: walk.scanned,
    }
}

/// The walk of [`non_finite_part`] through its territory in bit order.
struct Walk {
    builder: RunBuilder,
    /// The input just after the last one pushed (`None` after the last pattern).
    next_input: Option<u32>,
    scanned: u64,
    territory: RangeInclusive<u32>,
}

impl Walk {
    fn push(&mut self, (bits, c): Known) {
        if self.next_input != Some(bits) {
            self.builder.hole();
        }
        self.builder.push(bits, c);
        self.next_input = bits.checked_add(1);
    }
    /// Evaluates the inputs from..=to in chunks and pushes them.
    fn scan(&mut self, from: u32, to: u32, probe: &mut dyn Probe, l: Layout) {
        let mut start = from;
        loop {
            let end = to.min(start.saturating_add(SCAN_CHUNK - 1));
            let inputs: Vec<u32> = (start..=end).collect();
            self.scanned += inputs.len() as u64;
            for p in probe.probe(&inputs) {
                self.push((p.input, classes(l, &p)));
            }
            match end.checked_add(1) {
                Some(next) if end < to => start = next,
                _ => break,
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::{Binary16, Binary32};
    use crate::reference::Reference;

    /// Collects what a sink is given.
    #[derive(Default)]
    struct Collect(Vec<NonFiniteRun>);
    impl FindingSink for Collect {
        fn run(&mut self, run: &NonFiniteRun) {
            self.0.push(run.clone());
        }
        fn point(&mut self, _: &crate::measure::Worst) {}
    }

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
        let summary = non_finite_runs(f, &samples, &mut Fake, 10);
        let runs = summary.listed(f);
        let ends: Vec<(String, String)> = runs
            .iter()
            .map(|r| (r.first.bits.clone(), r.last.bits.clone()))
            .collect();
        // Samples every 64 patterns see NaN from 0x4900 to 0x4a00; the gaps next to them are
        // scanned, which finds the true ends and the hole at 0x48f0 that splits the run.
        // Listed longest first.
        assert_eq!(
            ends,
            vec![
                ("0x48f1".into(), "0x4a10".into()),
                ("0x48e0".into(), "0x48ef".into()),
            ]
        );
        assert!(runs
            .iter()
            .all(|r| r.kernel == "nan" && r.reference == "finite" && r.exact_ends));
        assert_eq!(runs[0].count, 0x4a10 - 0x48f1 + 1);
        assert_eq!(
            (runs[0].interior, runs[1].interior),
            ("sampled", "exhaustive")
        );
        let total = summary.totals();
        assert_eq!((total.runs, total.inputs), (2, 16 + 0x4a10 - 0x48f1 + 1));
    }

    /// One walk continued through consecutive territories (cut at known points, anywhere)
    /// finds exactly the runs of one walk over their union, each run once to the sink.
    #[test]
    fn a_walk_continued_across_territories_equals_one_walk() {
        let f = &Binary16;
        let l = f.layout();
        let samples: Vec<Point> = (0..0x7c00u32).step_by(0x40).map(point).collect();
        let known: Vec<Known> = samples.iter().map(|p| (p.input, classes(l, p))).collect();
        let mut whole_sink = Collect::default();
        let whole = non_finite_part(
            f,
            l,
            &mut known.clone(),
            &mut Fake,
            0..=u32::MAX,
            10,
            &mut whole_sink,
        );
        let want = serde_json::to_string(&whole.finish(&mut whole_sink).listed(f)).unwrap();
        for cuts in [
            vec![3usize],
            vec![0x48e0 / 0x40, 0x4900 / 0x40],
            (1..400).step_by(7).collect(),
        ] {
            let mut sink = Collect::default();
            let mut part = RunsPart::new(f, 10);
            let mut start = 0u32;
            let mut bounds = cuts.clone();
            bounds.push(known.len());
            let mut from = 0usize;
            for &to in &bounds {
                // The territory's own points and the known point just before it.
                let mut these: Vec<Known> = known[from.saturating_sub(1)..to].to_vec();
                let end = if to == known.len() {
                    u32::MAX
                } else {
                    known[to - 1].0
                };
                part = continue_part(part, true, l, &mut these, &mut Fake, start..=end, &mut sink);
                start = end.wrapping_add(1);
                from = to;
            }
            let got = serde_json::to_string(&part.finish(&mut sink).listed(f)).unwrap();
            assert_eq!(got, want, "{cuts:?}");
            let ends = |c: &Collect| -> Vec<String> {
                c.0.iter()
                    .map(|r| format!("{}-{}", r.first.bits, r.last.bits))
                    .collect()
            };
            assert_eq!(ends(&sink), ends(&whole_sink), "{cuts:?}");
        }
    }

    /// Maximal runs by definition: consecutive patterns of one sign with the same mismatched
    /// classes, found by a plain scan of every point.
    fn brute_force(l: Layout, points: &[Point]) -> Vec<(u32, u32, Classes)> {
        let sign = l.infinity(true) & !l.infinity(false);
        let mut runs: Vec<(u32, u32, Classes)> = Vec::new();
        for p in points {
            let Some(c) = classes(l, p).filter(|(k, r)| k != r) else {
                continue;
            };
            match runs.last_mut() {
                Some(r) if r.1 + 1 == p.input && r.2 == c && r.1 & sign == p.input & sign => {
                    r.1 = p.input
                }
                _ => runs.push((p.input, p.input, c)),
            }
        }
        runs
    }

    /// Binary32 points of a sigmoid-like kernel: NaN on 8 of every 16 patterns in two
    /// stretches, +inf over a long run that crosses binades, one crash, both signs.
    fn stress_points() -> Vec<Point> {
        let mut v = Vec::new();
        let finite = Reference {
            bits: 0x3f00_0000,
            exact: None,
            precision: 0,
        };
        let stretches = [
            0x3f7f_f000u32..0x3f80_3000,
            0x7f7f_f000..0x7f80_0004,
            0xbf7f_f800..0xbf80_0800,
            0xff7f_ff00..0xff80_0000,
        ];
        for range in stretches {
            for x in range {
                let output = match x {
                    0x3f80_1000..=0x3f80_2002 => Some(0x7f80_0000),
                    0x3f80_2500 => None,
                    _ if (x >> 3) & 1 == 1 => Some(0x7fc0_0000),
                    _ => Some(0x3f00_0000),
                };
                v.push(Point {
                    input: x,
                    second: None,
                    output,
                    reference: finite,
                    left: None,
                });
            }
        }
        v
    }

    /// Streams fed in pieces (cut anywhere, also inside runs), settled as a sweep settles them
    /// and merged in order, give exactly the runs of the definition: the same totals, the
    /// same listed runs whatever the cuts, the same per-binade cells, and every run once to
    /// the sink, in bit order.
    #[test]
    fn streamed_runs_equal_the_definition_at_any_cuts() {
        let f: &'static dyn Format = &Binary32;
        let l = f.layout();
        let points = stress_points();
        let truth = brute_force(l, &points);
        assert!(truth.len() > 1000);
        let len = points.len();
        let mut listed_before: Option<String> = None;
        for cuts in [
            vec![],
            vec![1, 2, 3],
            vec![0x1003, 0x2004, 0x4000 + 9],
            (1..len).step_by(777).collect::<Vec<_>>(),
            (1..len).step_by(8).collect::<Vec<_>>(),
        ] {
            let mut bounds = vec![0];
            bounds.extend(cuts.iter().copied());
            bounds.push(len);
            let mut sink = Collect::default();
            let mut root = NonFiniteStream::new(f, 7);
            for w in bounds.windows(2) {
                let mut part = root.fresh();
                for p in &points[w[0]..w[1]] {
                    part.add(p);
                }
                root.merge(part);
                root.settle(&mut sink, true);
            }
            let summary = root.finish(&mut sink);
            let got: Vec<(u32, u32)> = sink
                .0
                .iter()
                .map(|r| {
                    (
                        crate::format::parse_hex(f, &r.first.bits).unwrap(),
                        crate::format::parse_hex(f, &r.last.bits).unwrap(),
                    )
                })
                .collect();
            let want: Vec<(u32, u32)> = truth.iter().map(|r| (r.0, r.1)).collect();
            let first_difference = got.iter().zip(&want).position(|(g, w)| g != w);
            assert!(
                got.len() == want.len() && first_difference.is_none(),
                "{cuts:?}: {} runs against {}, first difference at {first_difference:?}",
                got.len(),
                want.len()
            );
            let inputs: u64 = truth.iter().map(|r| u64::from(r.1 - r.0) + 1).sum();
            assert_eq!(summary.totals().runs, truth.len() as u64);
            assert_eq!(summary.totals().inputs, inputs);
            let cell_inputs: u64 = summary.cells(f).iter().map(|c| c.inputs).sum();
            let cell_runs: u64 = summary.cells(f).iter().map(|c| c.runs).sum();
            assert_eq!((cell_runs, cell_inputs), (truth.len() as u64, inputs));
            let listed = serde_json::to_string(&summary.listed(f)).unwrap();
            if let Some(before) = &listed_before {
                assert_eq!(&listed, before, "{cuts:?}");
            }
            listed_before = Some(listed);
            // The longest first, ties to the lowest first input.
            let mut order = truth.clone();
            order.sort_by_key(|r| (std::cmp::Reverse(r.1 - r.0), r.0));
            let top: Vec<u32> = order.iter().take(7).map(|r| r.0).collect();
            let listed: Vec<u32> = summary
                .listed(f)
                .iter()
                .map(|r| crate::format::parse_hex(f, &r.first.bits).unwrap())
                .collect();
            assert_eq!(listed, top);
        }
    }

    /// The +inf run from 0x3f801000 to 0x3f802002 lies in one binade; the one across
    /// 0x7f7fffff..0x7f800003 does not exist (inputs of +inf/NaN have infinite references in
    /// a real sweep, here they are only patterns); cells split runs that cross a binade.
    #[test]
    fn cells_split_inputs_by_binade_and_count_each_run_once() {
        let f: &'static dyn Format = &Binary32;
        let mut summary = RunSummary::new(3);
        let nan = (ValueClass::Nan, ValueClass::Finite);
        summary.add(
            f.layout(),
            Raw {
                first: 0x3f7f_fffe,
                last: 0x3f80_0001,
                classes: nan,
                known: 4,
                exact_first: true,
                exact_last: true,
            },
        );
        let cells = summary.cells(f);
        assert_eq!(cells.len(), 2);
        assert_eq!(
            (cells[0].binade.as_str(), cells[0].runs, cells[0].inputs),
            ("+2^-1", 1, 2)
        );
        assert_eq!(
            (cells[1].binade.as_str(), cells[1].runs, cells[1].inputs),
            ("+2^0", 0, 2)
        );
        assert_eq!(summary.totals(), RunTotals { runs: 1, inputs: 4 });
    }
}
