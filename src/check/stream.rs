//! The accumulators a streamed sweep feeds, bundled so that parts of the sweep folded in
//! parallel (or on different machines) merge into the figures of one pass in bit order.

use crate::format::{Class, ExactValue, Format, Layout};
use crate::measure::{
    Accuracy, AccuracyAcc, ExactSpan, FindingSink, NonFiniteStream, Point, RunSummary, Shape,
    ShapeAcc, Uniform,
};
use serde::{Deserialize, Serialize};

mod valid;
use std::collections::BTreeMap;

/// binary32's layout as a constant: the per-point work of binary32 sweeps is compiled with
/// its field widths folded in (the layouts of other formats are read at run time).
const BINARY32: Layout = Layout::new(8, 23);

/// What an exhaustive sweep keeps of its points besides the accumulators: the few points
/// that special-value rules and kink reports look at.
#[derive(Default, Serialize, Deserialize)]
pub struct Kept {
    /// Measured points at ±0, at kinks, and the first and last of each sign whose reference
    /// is subnormal; by input.
    points: BTreeMap<u32, Point>,
    /// Inputs of the first and last subnormal-reference point of each sign (+, −).
    subnormal_ends: [Option<(u32, u32)>; 2],
}

impl Kept {
    /// Whether a point is kept whatever its reference: a zero or a kink.
    fn always(l: Layout, p: &Point) -> bool {
        let sign = l.infinity(true) & !l.infinity(false);
        p.input & !sign == 0 || p.left.is_some()
    }

    /// Drops a former subnormal end unless it is kept for another reason.
    fn release(&mut self, l: Layout, input: u32) {
        if self.points.get(&input).is_some_and(|q| !Self::always(l, q)) {
            self.points.remove(&input);
        }
    }

    /// Adds the next point in bit order (`l` the inputs' layout, `out` the outputs').
    #[inline(always)]
    pub fn add(&mut self, l: Layout, out: Layout, p: &Point) {
        if Self::always(l, p) {
            self.points.insert(p.input, p.clone());
        }
        if l.is_finite(p.input) && out.classify(p.reference.bits) == Class::Subnormal {
            let side = l.is_sign_negative(p.input) as usize;
            match self.subnormal_ends[side] {
                None => self.subnormal_ends[side] = Some((p.input, p.input)),
                Some((first, last)) => {
                    self.subnormal_ends[side] = Some((first, p.input));
                    if last != first {
                        self.release(l, last);
                    }
                }
            }
            self.points.insert(p.input, p.clone());
        }
    }

    /// Joins the kept points of later inputs (all above ours in bit order).
    pub fn merge(&mut self, l: Layout, other: Kept) {
        // Ends that are ends no longer: our last and their first, when each is not also
        // the other end of its own side.
        let mut former = Vec::new();
        for side in 0..2 {
            match (self.subnormal_ends[side], other.subnormal_ends[side]) {
                (Some((first, last)), Some((their_first, their_last))) => {
                    self.subnormal_ends[side] = Some((first, their_last));
                    if last != first {
                        former.push(last);
                    }
                    if their_first != their_last {
                        former.push(their_first);
                    }
                }
                (None, theirs) => self.subnormal_ends[side] = theirs,
                (Some(_), None) => {}
            }
        }
        self.points.extend(other.points);
        for input in former {
            self.release(l, input);
        }
    }

    /// The kept points in bit order.
    pub fn into_points(self) -> Vec<Point> {
        self.points.into_values().collect()
    }
}

/// The accumulators of one stretch of a sweep, in bit order.
#[derive(Serialize, Deserialize)]
pub struct Stream {
    #[serde(with = "crate::format::by_name_serde")]
    format: &'static dyn Format,
    /// The format's bit arithmetic, inlined in the per-point work.
    layout: Layout,
    /// The input layout when it differs from the output's (mixed-format kernels).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    in_layout: Option<Layout>,
    accuracy: AccuracyAcc,
    shape: Option<ShapeAcc>,
    /// Exhaustive sweeps only: non-finite runs stream too.
    runs: Option<NonFiniteStream>,
    kept: Kept,
}

impl Stream {
    /// Accumulators for a sweep; `exhaustive` also streams non-finite runs, listing the
    /// `keep` longest.
    pub fn new(
        accuracy: AccuracyAcc,
        shape: Option<ShapeAcc>,
        exhaustive: bool,
        keep: usize,
    ) -> Stream {
        let format = accuracy.format();
        let input = accuracy.input_format();
        Stream {
            format,
            layout: format.layout(),
            in_layout: (input.name() != format.name()).then(|| input.layout()),
            accuracy,
            shape,
            runs: exhaustive.then(|| NonFiniteStream::new(input, keep).with_output(format)),
            kept: Kept::default(),
        }
    }

    /// The output format's bit arithmetic.
    pub fn layout(&self) -> Layout {
        self.layout
    }

    /// The input format's bit arithmetic.
    fn il(&self) -> Layout {
        self.in_layout.unwrap_or(self.layout)
    }

    /// Empty accumulators with the same settings, for a later stretch to merge in.
    pub fn fresh(&self) -> Stream {
        Stream {
            format: self.format,
            layout: self.layout,
            in_layout: self.in_layout,
            accuracy: self.accuracy.fresh(),
            shape: self.shape.as_ref().map(|s| s.fresh()),
            runs: self.runs.as_ref().map(NonFiniteStream::fresh),
            kept: Kept::default(),
        }
    }

    /// Adds the next point in bit order.
    pub fn add(&mut self, p: &Point) {
        self.add_in(self.layout, self.il(), p);
    }

    /// [`Self::add`] with the output and input layouts passed in (this stream's own).
    #[inline(always)]
    fn add_in(&mut self, l: Layout, il: Layout, p: &Point) {
        self.accuracy.add_in(l, il, p);
        if let Some(s) = &mut self.shape {
            s.add_in(l, il, p);
        }
        if let Some(r) = &mut self.runs {
            r.add_in(l, p);
        }
        self.kept.add(il, l, p);
    }

    /// [`Self::add_in`] for a point that could start a run ([`Self::runnable`]) and has a
    /// normal reference with its exact value, output `out`: each accumulator skips the tests
    /// such a point passes, and it is not a kept point (its input is nonzero, it has no
    /// left-hand value and its reference is not subnormal).
    #[inline(always)]
    fn add_plain(&mut self, l: Layout, il: Layout, p: &Point, out: u32, exact: ExactValue) {
        debug_assert!(!Kept::always(il, p) && l.classify(p.reference.bits) == Class::Normal);
        self.accuracy.add_plain(l, il, p, out, exact);
        if let Some(s) = &mut self.shape {
            s.add_finite(l, il, p.input, out, p.reference.bits);
        }
        if let Some(r) = &mut self.runs {
            r.add_finite(p.input);
        }
    }

    /// Adds points in bit order, taking runs at once (see [`Self::add_run`]).
    pub fn add_all(&mut self, points: &[Point]) {
        // One copy of the per-point path with binary32's field widths as constants, one with
        // the layout read at run time.
        if self.layout == BINARY32 && self.in_layout.is_none() {
            self.add_all_in(BINARY32, BINARY32, points);
        } else {
            self.add_all_in(self.layout, self.il(), points);
        }
    }

    /// [`Self::add_all`] with the output and input layouts passed in (this stream's own).
    #[inline(always)]
    fn add_all_in(&mut self, l: Layout, il: Layout, points: &[Point]) {
        let mut i = 0;
        while i < points.len() {
            let p = &points[i];
            let mut end = i + 1;
            let runnable = self.runnable(l, p);
            if runnable {
                let exact = Self::exact(l, p);
                while end < points.len()
                    && self.continues(l, p, exact, &points[end - 1], &points[end], end - i)
                {
                    end += 1;
                }
            }
            if end - i > 1 {
                self.add_run(&points[i..end]);
            } else if let (true, Some(out), Some(exact), Class::Normal) = (
                runnable,
                p.output,
                p.reference.exact,
                l.classify(p.reference.bits),
            ) {
                self.add_plain(l, il, p, out, exact);
            } else {
                self.add_in(l, il, p);
            }
            i = end;
        }
    }

    /// Adds the points of a uniform span in bit order, as [`Self::add_all`] adds them (the
    /// same runs, the same single points) without building them: the span's points are equal
    /// but for the input, so a run goes on to the end of its sign and exponent field.
    pub fn add_uniform(&mut self, u: &Uniform) {
        let (l, il) = (self.layout, self.il());
        // Patterns sharing a sign and exponent field with x end at x with every trailing
        // significand bit set.
        let field = (1u32 << (il.precision() - 1)) - 1;
        let mut p = u.point(u.first);
        loop {
            let end = if self.runnable(l, &p) {
                (p.input | field).min(u.last)
            } else {
                p.input
            };
            if end > p.input {
                self.add_uniform_run(&p, end);
            } else {
                self.add_in(l, il, &p);
            }
            if end >= u.last {
                break;
            }
            p.input = end + 1;
        }
    }

    /// Adds the points of an exact span as [`Self::add_all`] adds them, without building the
    /// points in between: one sign and exponent field, every point exact, the references never
    /// stepping back, so `add_all` takes the span as one run when its first point can start one.
    pub fn add_exact(&mut self, span: &ExactSpan) {
        let (l, il) = (self.layout, self.il());
        let p = (span.point)(span.first);
        if span.first == span.last {
            self.add_in(l, il, &p);
            return;
        }
        let last = (span.point)(span.last);
        let one_run = self.runnable(l, &p)
            && Self::exact(l, &p)
            && Self::exact(l, &last)
            && l.sign_and_exponent(p.input) == l.sign_and_exponent(last.input);
        if !one_run {
            let points: Vec<Point> = (span.first..=span.last).map(span.point).collect();
            self.add_all(&points);
            return;
        }
        self.accuracy.add_exact_run(&p, &last, span.point);
        if let Some(s) = &mut self.shape {
            s.add_run(&p, &last);
        }
        if let Some(r) = &mut self.runs {
            r.add_run(&p, last.input);
        }
    }

    /// [`Self::add_run`] for the points `p.input..=last`, each p but for the input.
    fn add_uniform_run(&mut self, p: &Point, last: u32) {
        self.accuracy.add_uniform_run(p, last);
        if let Some(s) = &mut self.shape {
            let mut end = p.clone();
            end.input = last;
            s.add_run(p, &end);
        }
        if let Some(r) = &mut self.runs {
            r.add_run(p, last);
        }
    }

    /// Whether a point can start a run: finite nonzero input, finite output, a reference that
    /// is finite and not subnormal (such points are kept one by one), no left-hand value.
    #[inline(always)]
    fn runnable(&self, l: Layout, p: &Point) -> bool {
        // Runs compare inputs and outputs in one layout; mixed formats go point by point.
        self.in_layout.is_none()
            && p.left.is_none()
            && p.second.is_none()
            && matches!(l.classify(p.input), Class::Normal | Class::Subnormal)
            && p.output.is_some_and(|o| l.is_finite(o))
            && matches!(l.classify(p.reference.bits), Class::Normal | Class::Zero)
    }

    /// Whether the output is the reference and equals the exact value: error 0.
    #[inline(always)]
    fn exact(l: Layout, p: &Point) -> bool {
        let r = p.reference;
        p.output == Some(r.bits)
            && r.exact
                .is_some_and(|e| e.approx.to_bits() == l.to_f64(r.bits).to_bits())
    }

    /// Whether `q`, `offset` points after the run's first point `p` (just after `previous`),
    /// continues the run: the next bit pattern, same sign and exponent field, no left-hand
    /// value, and either the same output and reference as p, or both exact (`p_exact` and
    /// [`Self::exact`]) with a reference that does not step back from the previous one.
    #[inline(always)]
    fn continues(
        &self,
        l: Layout,
        p: &Point,
        p_exact: bool,
        previous: &Point,
        q: &Point,
        offset: usize,
    ) -> bool {
        // Plain branches rather than closures: a closure here was compiled out of line,
        // without the layout's constants.
        let (a, b) = (p.reference, q.reference);
        if !(q.input.wrapping_sub(p.input) as usize == offset
            && l.sign_and_exponent(q.input) == l.sign_and_exponent(p.input)
            && q.left.is_none()
            && q.second.is_none())
        {
            return false;
        }
        let equal = q.output == p.output
            && a.bits == b.bits
            && a.precision == b.precision
            && match (a.exact, b.exact) {
                (Some(x), Some(y)) => {
                    x.binade == y.binade && x.approx.to_bits() == y.approx.to_bits()
                }
                (None, None) => true,
                _ => false,
            };
        if equal {
            return true;
        }
        if !p_exact || !Self::exact(l, q) {
            return false;
        }
        let (before, now) = (l.ordinal(previous.reference.bits), l.ordinal(b.bits));
        // Bit order is increasing x for x ≥ 0 and decreasing x for x < 0.
        let forward = if l.is_sign_negative(q.input) {
            now <= before
        } else {
            now >= before
        };
        forward && matches!(l.classify(b.bits), Class::Normal | Class::Zero)
    }

    /// Adds a run of points (consecutive inputs, checked by [`Self::add_all`]): either every
    /// point equals the first but for the input, or every output is its reference
    /// and equals the exact value (error 0), the references never stepping back.  Each
    /// accumulator takes the run at once, with the figures of adding the points one by one;
    /// none of them is a kept point.
    fn add_run(&mut self, run: &[Point]) {
        let (first, last) = (&run[0], &run[run.len() - 1]);
        self.accuracy.add_run(run);
        if let Some(s) = &mut self.shape {
            s.add_run(first, last);
        }
        if let Some(r) = &mut self.runs {
            r.add_run(first, last.input);
        }
    }

    /// Makes the state writable as JSON (see [`AccuracyAcc::make_portable`]).
    pub fn make_portable(&mut self) {
        self.accuracy.make_portable();
    }

    /// Joins the accumulators of a later stretch (all its inputs above ours in bit order).
    pub fn merge(&mut self, other: Stream) {
        self.accuracy.merge(other.accuracy);
        if let (Some(mine), Some(theirs)) = (&mut self.shape, other.shape) {
            mine.merge(theirs);
        }
        if let (Some(mine), Some(theirs)) = (&mut self.runs, other.runs) {
            mine.merge(theirs);
        }
        self.kept.merge(self.il(), other.kept);
    }

    /// Hands the findings finished so far (non-finite runs, points over the listing limit)
    /// to the sink, so that memory does not grow with them; `leftmost`: no input before ours
    /// belongs to the sweep.
    pub fn settle(&mut self, sink: &mut dyn FindingSink, leftmost: bool) {
        self.accuracy.settle_listed(sink);
        if let Some(r) = &mut self.runs {
            r.settle(sink, leftmost);
        }
    }

    /// The figures: accuracy, shape, the summary of the streamed non-finite runs (exhaustive
    /// sweeps) and the kept points; the findings still held go to the sink.
    pub fn finish(
        self,
        sink: &mut dyn FindingSink,
    ) -> (Accuracy, Option<Shape>, Option<RunSummary>, Vec<Point>) {
        let accuracy = self.accuracy.finish(sink);
        (
            accuracy,
            self.shape.map(|s| s.finish()),
            self.runs.map(|r| r.finish(sink)),
            self.kept.into_points(),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::{Binary32, ExactValue};
    use crate::reference::Reference;

    fn reference(bits: u32, approx: f64, binade: i32) -> Reference {
        Reference {
            bits,
            exact: Some(ExactValue { approx, binade }),
            precision: 64,
        }
    }

    /// Points of binary32 inputs with long stretches of equal output and reference — across
    /// a binade edge, plot-bucket edges, both signs, zeros — broken by a few differing
    /// outputs, a NaN output, subnormal references and a lone point.
    fn points() -> Vec<Point> {
        let mut v = Vec::new();
        let mut push = |input: u32, output: Option<u32>, r: Reference| {
            v.push(Point {
                input,
                second: None,
                output,
                reference: r,
                left: None,
            })
        };
        let one = reference(0x3f80_0000, 1.0, 0);
        let zero = reference(0x8000_0000, -0.0, -126);
        let tiny = reference(0x0000_0003, 3.0 * 2f64.powi(-149), -126);
        for x in 0u32..=3 {
            push(x, Some(0), reference(0, 0.0, -126));
        }
        for x in 0x4100_0000u32 - 9000..0x4100_0000 + 9000 {
            let output = match x % 4099 {
                0 => Some(0x3f80_0001),
                7 => Some(0x7fc0_0000),
                _ => Some(0x3f80_0000),
            };
            push(x, output, one);
        }
        for x in 0x4200_0000u32..0x4200_0002 {
            push(
                x,
                Some(0x3f80_0000),
                reference(0x3f80_0000, 1.0 - 1e-12, -1),
            );
        }
        for x in 0x8000_0000u32..0x8000_0100 {
            push(x, Some(0x8000_0000), zero);
        }
        for x in 0x8100_0000u32..0x8100_0300 {
            push(x, Some(if x % 5 == 0 { 0 } else { 3 }), tiny);
        }
        for x in 0xc100_0000u32 - 6000..0xc100_0000 + 6000 {
            push(x, Some(0x8000_0000), zero);
        }
        // Exact outputs that change from point to point (an identity), a few off by one ulp,
        // and a stretch whose reference steps back (only a kernel error could show it).
        for x in 0x4400_0000u32 - 5000..0x4400_0000 + 5000 {
            let value = f32::from_bits(x) as f64;
            let output = if x % 3001 == 0 { x + 1 } else { x };
            push(x, Some(output), reference(x, value, 0));
        }
        for x in 0x4500_0000u32..0x4500_0040 {
            let r = 0x4600_0000 - (x & 7);
            push(x, Some(r), reference(r, f32::from_bits(r) as f64, 13));
        }
        v
    }

    /// A uniform span added at once leaves exactly the state that adding its points leaves:
    /// spans across exponent fields and plot-bucket edges, both signs, with and without a
    /// listing limit; outputs exact, wrong, non-finite; references normal, zero, subnormal.
    #[test]
    fn uniform_spans_add_like_their_points() {
        let one = reference(0x3f80_0000, 1.0, 0);
        let zero = reference(0x8000_0000, -0.0, -126);
        let tiny = reference(0x0000_0003, 3.0 * 2f64.powi(-149), -126);
        let spans = [
            (0x4100_0000u32 - 700, 0x4100_0000 + 1347, 0x3f80_0000, one),
            (0x4100_0000 - 700, 0x4100_0000 + 1347, 0x3f80_0001, one),
            (0x4100_0000 - 1, 0x4100_0000, 0x3f7f_ffff, one),
            (0x4100_0005, 0x4100_0005, 0x3f80_0000, one),
            (0x4180_0000, 0x4180_07ff, 0x7f80_0000, one),
            (0x4180_0000, 0x4180_07ff, 0x7fc0_0000, one),
            (0xc100_0000 - 1000, 0xc100_0000 + 1047, 0x8000_0000, zero),
            (0xc100_0000 - 1000, 0xc100_0000 + 1047, 0x0000_0001, zero),
            (0x8100_0000, 0x8100_07ff, 0x0000_0003, tiny),
            (0x0000_0001, 0x0000_0800, 0x0000_0000, zero),
            (0xff7f_fc00, 0xff7f_ffff, 0x8000_0000, zero),
        ];
        let span = Some((-(1i64 << 31), 1i64 << 31));
        let narrow = Some((-(1i64 << 21), 1i64 << 21));
        for (grid, list_over) in [
            (span, None),
            (narrow, None),
            (span, Some(0.5)),
            (None, None),
        ] {
            let new = || binary32_stream(None, list_over, grid);
            let (mut by_points, mut at_once) = (new(), new());
            for &(first, last, output, reference) in &spans {
                let u = Uniform {
                    first,
                    last,
                    output,
                    reference,
                };
                let points: Vec<Point> = (first..=last).map(|x| u.point(x)).collect();
                let (mut a, mut b) = (by_points.fresh(), at_once.fresh());
                a.add_all(&points);
                b.add_uniform(&u);
                by_points.merge(a);
                at_once.merge(b);
            }
            by_points.make_portable();
            at_once.make_portable();
            let text = |s: &Stream| serde_json::to_string(s).unwrap();
            assert!(
                text(&by_points) == text(&at_once),
                "{grid:?} {list_over:?}: states differ"
            );
        }
    }

    /// Folds `points` into two streams from `new`, in parts of 2048 merged in order as the
    /// sweep folds them: one taking each point alone (`add`), one taking each part at once
    /// (`add_all`, runs and plain points); both made portable for comparison.
    fn one_by_one_and_at_once(points: &[Point], new: impl Fn() -> Stream) -> (Stream, Stream) {
        let (mut single, mut all) = (new(), new());
        for chunk in points.chunks(2048) {
            let (mut one_by_one, mut at_once) = (single.fresh(), all.fresh());
            for p in chunk {
                one_by_one.add(p);
            }
            at_once.add_all(chunk);
            single.merge(one_by_one);
            all.merge(at_once);
        }
        single.make_portable();
        all.make_portable();
        (single, all)
    }

    /// An empty binary32 stream with accuracy and shape accumulators and runs kept.
    fn binary32_stream(
        abs_floor: Option<f64>,
        list_over: Option<f64>,
        grid: Option<(i64, i64)>,
    ) -> Stream {
        Stream::new(
            AccuracyAcc::new(&Binary32, abs_floor, list_over, grid),
            Some(ShapeAcc::new(&Binary32, true)),
            true,
            10,
        )
    }

    /// Points like those of a leading-term band: y = x/2 + x²/4 (binary64, its exact value
    /// for the test), outputs RN(y) most of the time and one or two ulps off (either side)
    /// otherwise, so that no two neighbours form a run; both signs, several binades and plot
    /// buckets, a few zero inputs, subnormal references and NaN outputs in between.
    fn band_points() -> Vec<Point> {
        let mut v = Vec::new();
        let mut state = 0x2545_f491_4f6c_dd1du64;
        let starts = [
            0x3000_0000u32 - 3000,
            0x3380_0000,
            0xb000_0000 - 3000,
            0xb380_0000,
        ];
        for start in starts {
            for x in start..start + 6000 {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                let xv = f32::from_bits(x) as f64;
                let y = xv / 2.0 + xv * xv / 4.0;
                let rn = y as f32;
                let binade = (((y.to_bits() >> 52) & 0x7ff) as i32 - 1023).max(-126);
                let reference = reference(rn.to_bits(), y, binade);
                let output = match state % 29 {
                    0 => rn.to_bits() + 1,
                    1 => rn.to_bits() - 1,
                    2 => rn.to_bits() + 2,
                    3 => 0x7fc0_0000,
                    _ => rn.to_bits(),
                };
                v.push(Point {
                    input: x,
                    second: None,
                    output: Some(output),
                    reference,
                    left: None,
                });
            }
        }
        for x in [0x8000_0000u32, 0x8000_0001] {
            v.push(Point {
                input: x,
                second: None,
                output: Some(0),
                reference: reference(0x8000_0002, -3.0 * 2f64.powi(-149), -126),
                left: None,
            });
        }
        v.sort_by_key(|p| p.input);
        v
    }

    /// A sink writing down every finding it gets.
    struct Listed(String);

    impl FindingSink for Listed {
        fn run(&mut self, run: &crate::measure::NonFiniteRun) {
            self.0 += &format!("{run:?}");
        }
        fn point(&mut self, point: &crate::measure::Worst) {
            self.0 += &format!("{point:?}");
        }
    }

    /// The path of plain points (finite normal references, no runs) leaves exactly the state
    /// of the general path taking the points one by one, with and without listing, floor and
    /// grid.
    #[test]
    fn plain_points_add_like_the_general_path() {
        let points = band_points();
        let plain = points
            .iter()
            .filter(|p| p.output != Some(0x7fc0_0000) && p.reference.bits & 0x7f80_0000 != 0)
            .count();
        assert!(plain > 20_000, "{plain} plain points");
        let span = Some((-(1i64 << 31), 1i64 << 31));
        for (grid, list_over, abs_floor) in [
            (span, None, None),
            (span, Some(0.75), Some(1e-9)),
            (None, Some(1.5), None),
            (None, None, Some(1e-12)),
        ] {
            let (single, all) =
                one_by_one_and_at_once(&points, || binary32_stream(abs_floor, list_over, grid));
            let text = |s: &Stream| serde_json::to_string(s).unwrap();
            assert!(
                text(&single) == text(&all),
                "{grid:?} {list_over:?} {abs_floor:?}: states differ"
            );
            let figures = |s: Stream| {
                let mut sink = Listed(String::new());
                let (accuracy, shape, runs, kept) = s.finish(&mut sink);
                format!("{accuracy:?} {shape:?} {runs:?} {kept:?} {}", sink.0)
            };
            let (a, b) = (figures(single), figures(all));
            assert!(
                a == b,
                "{grid:?} {list_over:?} {abs_floor:?}: figures differ"
            );
        }
    }

    /// Runs taken at once leave exactly the state that adding the points one by one leaves.
    #[test]
    fn runs_add_like_single_points() {
        let points = points();
        let span = Some((-(1i64 << 31), 1i64 << 31));
        let narrow = Some((-(1i64 << 21), 1i64 << 21));
        for (span, list_over, abs_floor) in [
            (span, None, None),
            (narrow, None, Some(1e-6)),
            (span, Some(0.5), None),
            (None, None, None),
        ] {
            let (single, runs) =
                one_by_one_and_at_once(&points, || binary32_stream(abs_floor, list_over, span));
            let text = |s: &Stream| serde_json::to_string(s).unwrap();
            let (a, b) = (text(&single), text(&runs));
            let at = a.bytes().zip(b.bytes()).position(|(x, y)| x != y);
            let around =
                |t: &str, i: usize| t[i.saturating_sub(300)..(i + 100).min(t.len())].to_string();
            assert!(
                a == b,
                "{span:?} {list_over:?} {abs_floor:?}: one by one {} vs runs {}",
                around(&a, at.unwrap_or(0)),
                around(&b, at.unwrap_or(0))
            );
        }
    }
}
