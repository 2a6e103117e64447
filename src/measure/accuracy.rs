//! ulp accuracy over the points where kernel output and reference are both finite.

use super::rounding::{RoundingCounts, RoundingDiagnosis};
use super::{ExactSum, FindingSink, Point};
use crate::format::{ulp_error_in, Class, ExactValue, Format, Layout};
use crate::reference::Reference;
use crate::report::BitsValue;
use serde::{Deserialize, Serialize};

mod valid;

/// The worst point.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Worst {
    /// Input x.
    pub input: BitsValue,
    /// Kernel output ŷ.
    pub output: BitsValue,
    /// RN(y).
    pub reference: BitsValue,
    /// y to binary64 precision.
    pub exact: f64,
    /// Its error in ulps.
    pub ulp: f64,
}

/// One histogram bin: errors in (previous bound, `up_to`].
#[derive(Clone, Debug, Serialize)]
pub struct HistogramBin {
    /// Upper bound in ulps, inclusive (`null`: unbounded).
    pub up_to: Option<f64>,
    /// Points in the bin.
    pub count: u64,
}

/// Figures of one binade of the input.
#[derive(Clone, Debug, Serialize)]
pub struct BinadeRow {
    /// "+2^3", "-2^-1", "+subnormal" (zeros belong to the subnormal row).
    pub binade: String,
    /// Smallest measured input of the row (in bit order).
    pub first: BitsValue,
    /// Largest measured input of the row.
    pub last: BitsValue,
    /// Points measured.
    pub points: u64,
    /// Largest error.
    pub max_ulp: f64,
    /// Mean error.
    pub mean_ulp: f64,
    /// Fraction correctly rounded.
    pub correctly_rounded: f64,
    /// Input with the largest error.
    pub worst_input: BitsValue,
}

/// Figures of one region of x.
#[derive(Clone, Debug, Serialize)]
pub struct RegionRow {
    /// "x <= -8", "-8 < x <= -1", "-1 < x < 1", "1 <= x < 8", "x >= 8".
    pub region: &'static str,
    /// Points measured.
    pub points: u64,
    /// Largest raw ulp error.
    pub max_ulp: f64,
    /// Largest error with the absolute floor (`null` without --abs-floor).
    pub max_floored: Option<f64>,
}

/// The absolute-floor view: error = |ŷ − y| / max(ulp(y), A).
#[derive(Clone, Debug, Serialize)]
pub struct FloorView {
    /// A.
    pub floor: f64,
    /// Largest floored error.
    pub max: f64,
    /// Where.
    pub worst: Option<Worst>,
}

/// The accuracy object of a report.
#[derive(Clone, Debug, Serialize)]
pub struct Accuracy {
    /// Points counted: finite input, finite output, finite reference.
    pub points: u64,
    /// Largest ulp error (0 without points).
    pub max_ulp: f64,
    /// The point of largest error, ties to the lowest input bit pattern.
    pub worst: Option<Worst>,
    /// Mean ulp error, from an exact sum.
    pub mean_ulp: f64,
    /// Root mean square ulp error, from an exact sum of squares.
    pub rms_ulp: f64,
    /// Fraction with ŷ = RN(y).
    pub correctly_rounded: f64,
    /// Fraction with ŷ one of the two representable neighbours of y.
    pub faithful: f64,
    /// Error histogram.
    pub histogram: Vec<HistogramBin>,
    /// Per-binade figures of the input, in increasing x.
    pub per_binade: Vec<BinadeRow>,
    /// Per-region figures.
    pub regions: Vec<RegionRow>,
    /// The absolute-floor view, beside the raw figures.
    pub abs_floor: Option<FloorView>,
    /// Points whose subnormal reference the kernel flushed to zero; named, not counted above.
    pub flush_to_zero_outputs: u64,
    /// Points where output or reference is non-finite (see non_finite).
    pub excluded_non_finite: u64,
    /// Which rounding rule explains the outputs one step off RN(y) (see `measure::rounding`).
    pub rounding: RoundingDiagnosis,
    /// Max error per bucket of input ordinals, for plots.
    #[serde(skip)]
    pub buckets: Vec<Bucket>,
    /// Points whose error exceeds the listing limit (`--csv-points-over`), all handed to
    /// the finding sink in bit order; absent without a limit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub points_over_limit: Option<u64>,
}

/// Largest error over a span of input ordinals.
#[derive(Clone, Copy, Debug, Serialize, Deserialize)]
pub struct Bucket {
    /// First ordinal of the span.
    pub lo: i64,
    /// Last ordinal of the span.
    pub hi: i64,
    /// Points in it.
    pub points: u64,
    /// Their largest error.
    pub max_ulp: f64,
    /// The point of that error, ties to the lowest input bit pattern (`None`: no points).
    pub worst: Option<BucketPoint>,
}

/// A bucket's worst point as bit patterns: what the interactive plot shows on hover.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct BucketPoint {
    /// Input x.
    pub input: u32,
    /// Kernel output.
    pub output: u32,
    /// RN(y), the correctly rounded reference.
    pub reference: u32,
}

/// Whether (error, point) beats the bucket's current worst: a larger error, or an equal one
/// at a lower input bit pattern, so the choice is independent of the order points and
/// partial accumulators are joined in (shard merges stay exact).
fn beats(error: f64, point: BucketPoint, max: f64, worst: Option<BucketPoint>) -> bool {
    match worst {
        None => true,
        Some(w) => error > max || (error == max && point.input < w.input),
    }
}

impl Bucket {
    /// Counts `points` points whose largest error `max` is at `worst`.
    fn take(&mut self, points: u64, max: f64, worst: BucketPoint) {
        self.points += points;
        if beats(max, worst, self.max_ulp, self.worst) {
            self.max_ulp = max;
            self.worst = Some(worst);
        }
    }
}

/// Number of plot buckets.
const BUCKETS: i64 = 480;

/// One plot sample: input ordinal, error, and the point.
type Sample = (i64, f64, BucketPoint);

fn buckets(samples: &[Sample]) -> Vec<Bucket> {
    let (Some(lo), Some(hi)) = (
        samples.iter().map(|s| s.0).min(),
        samples.iter().map(|s| s.0).max(),
    ) else {
        return Vec::new();
    };
    let width = ((hi - lo + 1) + BUCKETS - 1) / BUCKETS;
    let mut out = grid(lo, hi);
    for &(o, e, point) in samples {
        out[((o - lo) / width) as usize].take(1, e, point);
    }
    out
}

/// Upper bounds of the histogram bins.
const BINS: [f64; 11] = [
    0.5, 1.0, 2.0, 4.0, 8.0, 16.0, 64.0, 256.0, 1024.0, 65536.0, 16777216.0,
];

/// Region bounds on |x|.
const REGIONS: [&str; 5] = [
    "x <= -8",
    "-8 < x <= -1",
    "-1 < x < 1",
    "1 <= x < 8",
    "x >= 8",
];

fn region_of(x: f64) -> usize {
    match x {
        x if x <= -8.0 => 0,
        x if x <= -1.0 => 1,
        x if x < 1.0 => 2,
        x if x < 8.0 => 3,
        _ => 4,
    }
}

/// Error of one output against one reference, and whether it is correctly rounded and faithful.
struct Judged {
    error: f64,
    exact: ExactValue,
    correct: bool,
    faithful: bool,
    reference: u32,
}

#[inline(always)]
fn judge(l: Layout, output: u32, r: &Reference) -> Option<Judged> {
    let exact = r.exact?;
    if !l.is_finite(r.bits) {
        return None;
    }
    Some(judged(l, output, r.bits, exact))
}

/// [`judge`] of a finite reference `bits` whose exact value is known.
#[inline(always)]
fn judged(l: Layout, output: u32, bits: u32, exact: ExactValue) -> Judged {
    let error = ulp_error_in(l, output, &exact);
    let (out, rn) = (l.ordinal(output), l.ordinal(bits));
    let correct = out == rn;
    // y lies between RN(y) and the neighbour on its side; that neighbour is also faithful.
    let rv = l.to_f64(bits);
    let faithful =
        correct || (exact.approx > rv && out == rn + 1) || (exact.approx < rv && out == rn - 1);
    Judged {
        error,
        exact,
        correct,
        faithful,
        reference: bits,
    }
}

/// The error at a point: at a kink either one-sided value is accepted, whichever is closer.
#[inline(always)]
fn judge_point(l: Layout, p: &Point, output: u32) -> Option<Judged> {
    let right = judge(l, output, &p.reference);
    let left = p.left.as_ref().and_then(|l_ref| judge(l, output, l_ref));
    match (right, left) {
        (Some(r), Some(l)) if l.error < r.error => Some(l),
        (r, _) => r,
    }
}

/// The input binade of a row: sign and binary64 exponent (`None`: zeros and subnormals).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
struct BinadeKey {
    negative: bool,
    exponent: Option<i32>,
}

fn binade_key(l: Layout, bits: u32) -> BinadeKey {
    let exponent = match l.classify(bits) {
        Class::Zero | Class::Subnormal => None,
        // The binary64 exponent field is exact, unlike a computed log2.
        _ => Some(((l.to_f64(bits).to_bits() >> 52) & 0x7ff) as i32 - 1023),
    };
    BinadeKey {
        negative: l.is_sign_negative(bits),
        exponent,
    }
}

impl BinadeKey {
    /// "+2^3", "-2^-1", "+subnormal" (zeros belong to the subnormal row).
    fn label(self) -> String {
        let sign = if self.negative { "-" } else { "+" };
        match self.exponent {
            None => format!("{sign}subnormal"),
            Some(e) => format!("{sign}2^{e}"),
        }
    }
}

#[derive(Default, Serialize, Deserialize)]
struct Acc {
    points: u64,
    max: f64,
    worst: Option<u32>,
    sum: ExactSum,
    correct: u64,
    first: u32,
    last: u32,
}

impl Acc {
    /// Adds n points of equal error, inputs `input..=last`.
    #[inline(always)]
    fn add(&mut self, input: u32, last: u32, error: f64, correct: bool, n: u64) {
        if self.points == 0 {
            self.first = input;
        }
        self.last = last;
        self.points += n;
        // Strict comparison keeps the lowest input on ties: points arrive in bit order.
        if self.worst.is_none() || error > self.max {
            self.max = error;
            self.worst = Some(input);
        }
        if n == 1 {
            self.sum.add(error);
        } else {
            self.sum.add_times(error, n);
        }
        self.correct += correct as u64 * n;
    }
}

impl Acc {
    /// Joins the figures of later inputs (all above ours in bit order).
    fn merge(&mut self, other: &Acc) {
        if other.points == 0 {
            return;
        }
        if self.points == 0 {
            self.first = other.first;
        }
        self.last = other.last;
        self.points += other.points;
        // Ties keep ours: our inputs are the lower ones.
        if self.worst.is_none() || other.max > self.max {
            self.max = other.max;
            self.worst = other.worst;
        }
        self.sum.merge(&other.sum);
        self.correct += other.correct;
    }
}

/// A worst point as bit patterns; made into a [`Worst`] only when reported.
#[derive(Clone, Copy, Debug, Serialize, Deserialize)]
struct RawWorst {
    input: u32,
    output: u32,
    reference: u32,
    exact: f64,
    ulp: f64,
}

impl RawWorst {
    fn of(p: &Point, j: &Judged, error: f64) -> RawWorst {
        RawWorst {
            input: p.input,
            output: p.output.unwrap_or(0),
            reference: j.reference,
            exact: j.exact.approx,
            ulp: error,
        }
    }
    fn report(self, input: &dyn Format, format: &dyn Format) -> Worst {
        Worst {
            input: BitsValue::new(input, self.input),
            output: BitsValue::new(format, self.output),
            reference: BitsValue::new(format, self.reference),
            exact: self.exact,
            ulp: self.ulp,
        }
    }
}

/// Largest ordinal span whose errors are kept one per ordinal for the plot buckets; wider
/// streamed sweeps bucket over a fixed grid (see [`AccuracyAcc::new`]).
const DENSE_BUCKET_SPAN: i64 = 1 << 20;

/// Where plot samples go.
#[derive(Serialize, Deserialize)]
enum Samples {
    /// Every (ordinal, error, point): buckets span the samples exactly (small, in-memory
    /// sweeps).
    All(Vec<Sample>),
    /// Largest error per ordinal of a span known in advance (NaN: no point) and that
    /// point's output and reference (an ordinal is one input, but for ±0), then bucketed
    /// over the samples' own span like `All`.
    Dense {
        lo: i64,
        max: Vec<f64>,
        at: Vec<BucketPoint>,
    },
    /// Buckets fixed in advance over the ordinals `lo..=hi` (wide streamed sweeps); only the
    /// touched ones are kept, as (bucket index, points, largest error, its point), an index
    /// possibly more than once.
    Grid {
        lo: i64,
        hi: i64,
        touched: Vec<Touched>,
    },
}

/// A grid bucket's share of a stretch: index, points, largest error and its point.
type Touched = (usize, u64, f64, BucketPoint);

/// Consecutive points sharing the input's sign, binade (hence region) and plot bucket: their
/// figures are gathered here and joined into the rows when the stretch ends, so that each
/// point costs one exact-sum update instead of one per row.
#[derive(Serialize, Deserialize)]
struct Stretch {
    /// Sign and exponent field of the inputs.
    key: u32,
    /// Grid bucket (index, first and last ordinal), on a grid.
    bucket: Option<(usize, i64, i64)>,
    acc: Acc,
    /// Output and reference of the stretch's worst point (`acc.worst`), for the plot.
    worst_at: (u32, u32),
    /// Largest floored error (with --abs-floor).
    floored: f64,
}

/// Accuracy figures accumulated point by point, in increasing input bit order, with memory
/// independent of the number of points (apart from `list_over` listings).
#[derive(Serialize, Deserialize)]
pub struct AccuracyAcc {
    /// The output format (errors are ulps of it).
    #[serde(with = "crate::format::by_name_serde")]
    format: &'static dyn Format,
    /// The format's bit arithmetic, inlined in the per-point work.
    layout: Layout,
    /// The input format when it differs from the output's (mixed-format kernels): rows,
    /// regions and plot buckets are binades and ordinals of the inputs.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    input: Option<crate::format::Side>,
    abs_floor: Option<f64>,
    list_over: Option<f64>,
    total: Acc,
    faithful: u64,
    histogram: Vec<u64>,
    binades: Vec<(BinadeKey, Acc)>,
    regions: Vec<(Acc, f64)>,
    /// The points since the rows were last brought up to date.
    stretch: Option<Stretch>,
    worst: Option<RawWorst>,
    floor_max: (f64, Option<RawWorst>),
    ftz: u64,
    excluded: u64,
    /// The off-by-one points by rounding rule (absent in states of older versions).
    #[serde(default)]
    rounding: RoundingCounts,
    samples: Samples,
    /// Points over the listing limit not yet handed to the sink, in bit order.
    over_limit: Vec<Worst>,
    /// Points over the listing limit handed to the sink.
    listed: u64,
    last_input: Option<u32>,
}

/// Joins the entries of each touched bucket into one, in bucket order.
fn compact(touched: &mut Vec<Touched>) {
    touched.sort_by_key(|t| t.0);
    let mut joined: Vec<Touched> = Vec::with_capacity(touched.len());
    for &(index, points, max, point) in touched.iter() {
        match joined.last_mut() {
            Some(last) if last.0 == index => {
                last.1 += points;
                if beats(max, point, last.2, Some(last.3)) {
                    last.2 = max;
                    last.3 = point;
                }
            }
            _ => joined.push((index, points, max, point)),
        }
    }
    *touched = joined;
}

fn grid(lo: i64, hi: i64) -> Vec<Bucket> {
    let width = ((hi - lo + 1) + BUCKETS - 1) / BUCKETS;
    (0..BUCKETS)
        .map(|k| Bucket {
            lo: lo + k * width,
            hi: lo + (k + 1) * width - 1,
            points: 0,
            max_ulp: 0.0,
            worst: None,
        })
        .filter(|b| b.lo <= hi)
        .collect()
}

/// The filled slots of a dense span as samples.
fn dense_list(lo: i64, max: &[f64], at: &[BucketPoint]) -> Vec<Sample> {
    max.iter()
        .zip(at)
        .enumerate()
        .filter(|(_, (e, _))| !e.is_nan())
        .map(|(i, (&e, &point))| (lo + i as i64, e, point))
        .collect()
}

impl AccuracyAcc {
    /// An empty accumulator. `span`: the ordinals of every finite input the caller will add,
    /// when known in advance (streamed sweeps); without it every sample is kept for the plot.
    pub fn new(
        format: &'static dyn Format,
        abs_floor: Option<f64>,
        list_over: Option<f64>,
        span: Option<(i64, i64)>,
    ) -> Self {
        let samples = match span {
            None => Samples::All(Vec::new()),
            Some((lo, hi)) if hi - lo < DENSE_BUCKET_SPAN => {
                let span = (hi - lo + 1).max(0) as usize;
                let none = BucketPoint {
                    input: 0,
                    output: 0,
                    reference: 0,
                };
                Samples::Dense {
                    lo,
                    max: vec![f64::NAN; span],
                    at: vec![none; span],
                }
            }
            Some((lo, hi)) => Samples::Grid {
                lo,
                hi,
                touched: Vec::new(),
            },
        };
        AccuracyAcc {
            format,
            layout: format.layout(),
            input: None,
            abs_floor,
            list_over,
            total: Acc::default(),
            faithful: 0,
            histogram: vec![0u64; BINS.len() + 1],
            binades: Vec::new(),
            regions: (0..REGIONS.len()).map(|_| (Acc::default(), 0.0)).collect(),
            stretch: None,
            worst: None,
            floor_max: (0.0, None),
            ftz: 0,
            excluded: 0,
            rounding: RoundingCounts::default(),
            samples,
            over_limit: Vec::new(),
            listed: 0,
            last_input: None,
        }
    }

    /// The output format of the points.
    pub fn format(&self) -> &'static dyn Format {
        self.format
    }

    /// The same accumulator for inputs in another format (mixed-format kernels).
    pub fn with_input(mut self, input: &'static dyn Format) -> Self {
        self.input = (input.name() != self.format.name()).then(|| crate::format::Side::of(input));
        self
    }

    /// The input format of the points.
    pub fn input_format(&self) -> &'static dyn Format {
        self.input.map_or(self.format, |s| s.format)
    }

    #[inline(always)]
    fn in_layout(&self) -> Layout {
        self.input.map_or(self.layout, |s| s.layout)
    }

    /// An empty accumulator with the same settings, for inputs that will be merged into this
    /// one (a dense plot span is not allocated again: its samples are kept as a list).
    pub fn fresh(&self) -> Self {
        let mut acc = AccuracyAcc::new(self.format, self.abs_floor, self.list_over, None);
        acc.input = self.input;
        if let Samples::Grid { lo, hi, .. } = self.samples {
            acc.samples = Samples::Grid {
                lo,
                hi,
                touched: Vec::new(),
            };
        }
        acc
    }

    /// The grid bucket of an ordinal: index, first and last ordinal (`None` off a grid).
    fn bucket_of(&self, ordinal: i64) -> Option<(usize, i64, i64)> {
        let Samples::Grid { lo, hi, .. } = self.samples else {
            return None;
        };
        let width = ((hi - lo + 1) + BUCKETS - 1) / BUCKETS;
        let index = (ordinal - lo) / width;
        let first = lo + index * width;
        Some((index as usize, first, first + width - 1))
    }

    /// Joins the current stretch into the rows, the total and the plot grid.
    fn settle(&mut self) {
        let Some(stretch) = self.stretch.take() else {
            return;
        };
        let l = self.in_layout();
        let first = stretch.acc.first;
        let region = region_of(l.to_f64(first));
        debug_assert_eq!(region, region_of(l.to_f64(stretch.acc.last)));
        if let (Samples::Grid { touched, .. }, Some((index, _, _)), Some(input)) =
            (&mut self.samples, stretch.bucket, stretch.acc.worst)
        {
            let (output, reference) = stretch.worst_at;
            let point = BucketPoint {
                input,
                output,
                reference,
            };
            touched.push((index, stretch.acc.points, stretch.acc.max, point));
        }
        let row = &mut self.regions[region];
        row.0.merge(&stretch.acc);
        row.1 = row.1.max(stretch.floored);
        self.total.merge(&stretch.acc);
        let key = binade_key(l, first);
        match self.binades.last_mut() {
            Some((k, acc)) if *k == key => acc.merge(&stretch.acc),
            _ => self.binades.push((key, stretch.acc)),
        }
    }

    /// Keeps a dense plot span as a list of its samples, so that the state holds no NaN
    /// (JSON has none); the figures do not change.
    pub fn make_portable(&mut self) {
        self.settle();
        if let Samples::Dense { lo, max, at } = &self.samples {
            self.samples = Samples::All(dense_list(*lo, max, at));
        }
    }

    /// Adds one point; points must come in strictly increasing input bit order.
    pub fn add(&mut self, p: &Point) {
        self.add_points(self.layout, self.in_layout(), p, p.input, 1);
    }

    /// [`Self::add`] with the output and input layouts passed in (they must be this
    /// accumulator's): a caller that knows them at compile time gets them folded into the
    /// per-point arithmetic.
    #[inline(always)]
    pub fn add_in(&mut self, l: Layout, il: Layout, p: &Point) {
        debug_assert!(l == self.layout && il == self.in_layout());
        self.add_points(l, il, p, p.input, 1);
    }

    /// Adds a run of points (consecutive bit patterns of one sign and one exponent field,
    /// finite and nonzero, no left-hand reference), each with the first one's error,
    /// correctness and faithfulness — its output and reference, or any exact output (error 0)
    /// when its is — and no subnormal reference: the figures of adding them one by one.
    pub fn add_run(&mut self, run: &[Point]) {
        let (Some(p), Some(last)) = (run.first(), run.last()) else {
            return;
        };
        let l = self.in_layout();
        // Listed points and points off a fixed grid are recorded one by one, each with its own
        // output and reference (a plot bucket shows its worst point's).
        if !self.takes_run_at_once(p.input, last.input) {
            for q in run {
                self.add(q);
            }
            return;
        }
        self.add_points(self.layout, l, p, last.input, run.len() as u64);
    }

    /// Whether a run of inputs `first..=last` can be added at once: no listing limit and one
    /// plot bucket holding both ends (else its points go one by one).
    fn takes_run_at_once(&self, first: u32, last: u32) -> bool {
        let l = self.in_layout();
        self.list_over.is_none()
            && self
                .bucket_of(l.ordinal(first))
                .is_some_and(|(_, lo, hi)| (lo..=hi).contains(&l.ordinal(last)))
    }

    /// [`Self::add_run`] for the run `p.input..=last` of a [`super::Uniform`] span (one sign and one
    /// exponent field, finite and nonzero inputs, p's output and reference finite, none
    /// subnormal), without its points: the same figures, the same fallback to one point at
    /// a time.
    pub fn add_uniform_run(&mut self, p: &Point, last: u32) {
        let l = self.in_layout();
        if !self.takes_run_at_once(p.input, last) {
            let mut q = p.clone();
            for x in p.input..=last {
                q.input = x;
                self.add(&q);
            }
            return;
        }
        self.add_points(self.layout, l, p, last, (last - p.input) as u64 + 1);
    }

    /// [`Self::add_run`] for the exact run `p.input..=last.input` of a [`super::ExactSpan`]
    /// (its first and last points, the others built by `point` only when they must be added
    /// one by one): the same figures, the same fallback to one point at a time.
    pub fn add_exact_run(&mut self, p: &Point, last: &Point, point: &dyn Fn(u32) -> Point) {
        let l = self.in_layout();
        if !self.takes_run_at_once(p.input, last.input) {
            for x in p.input..=last.input {
                self.add(&point(x));
            }
            return;
        }
        let n = (last.input - p.input) as u64 + 1;
        self.add_points(self.layout, l, p, last.input, n);
    }

    /// [`Self::add`] for `n` equal points from p.input to `last` (n > 1 only on a grid and
    /// without listing, see [`Self::add_run`]).
    #[inline(always)]
    fn add_points(&mut self, l: Layout, il: Layout, p: &Point, last: u32, n: u64) {
        debug_assert!(self.last_input.map_or(true, |before| before < p.input));
        self.last_input = Some(last);
        let input_finite = il.is_finite(p.input);
        let j = match p.output {
            Some(out) if input_finite && l.is_finite(out) => judge_point(l, p, out),
            _ => None,
        };
        let Some(j) = j else {
            if input_finite && p.output.is_some() {
                self.excluded += n;
            }
            return;
        };
        let out = p.output.expect("judged");
        if l.classify(j.reference) == Class::Subnormal && l.classify(out) == Class::Zero {
            self.ftz += n;
            return;
        }
        self.record(l, il, p, out, j, last, n);
    }

    /// [`Self::add_in`] for a plain point: finite input, finite output `out`, no left-hand
    /// reference, a normal reference whose exact value is `exact` (most points outside runs).
    /// The tests that cannot fail for it are skipped: it is judged (no exclusion) and not a
    /// flushed subnormal.
    #[inline(always)]
    pub fn add_plain(&mut self, l: Layout, il: Layout, p: &Point, out: u32, exact: ExactValue) {
        debug_assert!(l == self.layout && il == self.in_layout());
        debug_assert!(il.is_finite(p.input) && l.is_finite(out) && p.left.is_none());
        debug_assert!(p.output == Some(out) && p.reference.exact == Some(exact));
        debug_assert!(l.classify(p.reference.bits) == Class::Normal);
        debug_assert!(self.last_input.map_or(true, |before| before < p.input));
        self.last_input = Some(p.input);
        let j = judged(l, out, p.reference.bits, exact);
        self.record(l, il, p, out, j, p.input, 1);
    }

    /// The figures of `n` points from p.input to `last` judged `j` (output `out`), past the
    /// exclusions of [`Self::add_points`].
    #[inline(always)]
    #[allow(clippy::too_many_arguments)]
    fn record(&mut self, l: Layout, il: Layout, p: &Point, out: u32, j: Judged, last: u32, n: u64) {
        let format = self.format;
        let input_format = self.input_format();
        // Strict comparison keeps the lowest input on ties: points arrive in bit order.
        if self.worst.as_ref().map_or(true, |w| j.error > w.ulp) {
            self.worst = Some(RawWorst::of(p, &j, j.error));
        }
        let ordinal = il.ordinal(p.input);
        let key = il.sign_and_exponent(p.input);
        let continues = self.stretch.as_ref().is_some_and(|s| {
            s.key == key
                && s.bucket
                    .map_or(true, |(_, lo, hi)| lo <= ordinal && ordinal <= hi)
        });
        if !continues {
            self.settle();
            self.stretch = Some(Stretch {
                key,
                bucket: self.bucket_of(ordinal),
                acc: Acc::default(),
                worst_at: (0, 0),
                floored: 0.0,
            });
        }
        let point = BucketPoint {
            input: p.input,
            output: out,
            reference: j.reference,
        };
        match &mut self.samples {
            Samples::All(v) => v.push((ordinal, j.error, point)),
            Samples::Dense { lo, max, at } => {
                let k = (ordinal - *lo) as usize;
                // NaN marks an empty slot.
                if max[k].is_nan() || beats(j.error, point, max[k], Some(at[k])) {
                    max[k] = j.error;
                    at[k] = point;
                }
            }
            Samples::Grid { .. } => {}
        }
        if self.list_over.is_some_and(|limit| j.error > limit) {
            self.over_limit
                .push(RawWorst::of(p, &j, j.error).report(input_format, format));
        }
        self.faithful += j.faithful as u64 * n;
        if j.faithful && !j.correct {
            self.rounding.add(
                l.ordinal(out),
                l.ordinal(j.reference),
                l.to_f64(out),
                l.to_f64(j.reference),
                j.exact.approx,
                n,
            );
        }
        let bin = BINS
            .iter()
            .position(|&b| j.error <= b)
            .unwrap_or(BINS.len());
        self.histogram[bin] += n;
        let stretch = self.stretch.as_mut().expect("started above");
        // Acc::add's own rule for a new worst point (inputs arrive in bit order).
        if stretch.acc.worst.is_none() || j.error > stretch.acc.max {
            stretch.worst_at = (out, j.reference);
        }
        stretch.acc.add(p.input, last, j.error, j.correct, n);
        if let Some(a) = self.abs_floor {
            let ulp = j.exact.ulp(format);
            let floored = j.error * ulp / ulp.max(a);
            stretch.floored = stretch.floored.max(floored);
            if self.floor_max.1.is_none() || floored > self.floor_max.0 {
                self.floor_max = (floored, Some(RawWorst::of(p, &j, floored)));
            }
        }
    }

    /// Joins an accumulator of later inputs (every one above ours in bit order, same
    /// settings): the result is the accumulator of all the inputs fed one by one.
    pub fn merge(&mut self, mut other: AccuracyAcc) {
        self.settle();
        other.settle();
        let new_worst = match (&self.worst, &other.worst) {
            (_, None) => false,
            (None, Some(_)) => true,
            (Some(mine), Some(theirs)) => theirs.ulp > mine.ulp,
        };
        if new_worst {
            self.worst = other.worst;
        }
        self.total.merge(&other.total);
        self.faithful += other.faithful;
        for (h, o) in self.histogram.iter_mut().zip(other.histogram) {
            *h += o;
        }
        let mut rows = other.binades.into_iter();
        // Their first row continues our last when both are the same binade.
        if let Some((label, acc)) = rows.next() {
            match self.binades.last_mut() {
                Some((l, mine)) if *l == label => mine.merge(&acc),
                _ => self.binades.push((label, acc)),
            }
        }
        self.binades.extend(rows);
        for (mine, (acc, floored)) in self.regions.iter_mut().zip(other.regions) {
            mine.0.merge(&acc);
            mine.1 = mine.1.max(floored);
        }
        if other.floor_max.1.is_some()
            && (self.floor_max.1.is_none() || other.floor_max.0 > self.floor_max.0)
        {
            self.floor_max = other.floor_max;
        }
        self.ftz += other.ftz;
        self.excluded += other.excluded;
        self.rounding.merge(&other.rounding);
        match (&mut self.samples, other.samples) {
            (Samples::All(mine), Samples::All(theirs)) => mine.extend(theirs),
            (Samples::Dense { lo, max, at }, Samples::All(theirs)) => {
                for (ordinal, e, point) in theirs {
                    let k = (ordinal - *lo) as usize;
                    if max[k].is_nan() || beats(e, point, max[k], Some(at[k])) {
                        max[k] = e;
                        at[k] = point;
                    }
                }
            }
            (
                Samples::Dense { max, at, .. },
                Samples::Dense {
                    max: their_max,
                    at: their_at,
                    ..
                },
            ) => {
                for (k, (e, point)) in their_max.into_iter().zip(their_at).enumerate() {
                    if !e.is_nan() && (max[k].is_nan() || beats(e, point, max[k], Some(at[k]))) {
                        max[k] = e;
                        at[k] = point;
                    }
                }
            }
            (
                Samples::Grid { touched: mine, .. },
                Samples::Grid {
                    touched: theirs, ..
                },
            ) => {
                mine.extend(theirs);
                if mine.len() > 4 * BUCKETS as usize {
                    compact(mine);
                }
            }
            _ => panic!("merging accumulators of different settings"),
        }
        self.over_limit.extend(other.over_limit);
        self.listed += other.listed;
        self.last_input = other.last_input.or(self.last_input);
    }

    /// Hands the points over the listing limit met so far to the sink, in bit order.
    pub fn settle_listed(&mut self, sink: &mut dyn FindingSink) {
        for p in self.over_limit.drain(..) {
            sink.point(&p);
            self.listed += 1;
        }
    }

    /// The figures; the points over the listing limit still held go to the sink.
    pub fn finish(mut self, sink: &mut dyn FindingSink) -> Accuracy {
        self.settle();
        self.settle_listed(sink);
        let format = self.format;
        let input_format = self.input_format();
        let total = self.total;
        let fraction = |n: u64| {
            if total.points == 0 {
                0.0
            } else {
                n as f64 / total.points as f64
            }
        };
        // Binades in increasing x: negative rows were met in increasing bit order, i.e.
        // decreasing x.
        let (mut negative, positive): (Vec<_>, Vec<_>) =
            self.binades.into_iter().partition(|(k, _)| k.negative);
        negative.reverse();
        let per_binade = negative
            .into_iter()
            .chain(positive)
            .map(|(key, acc)| {
                let (lo, hi) = if key.negative {
                    (acc.last, acc.first)
                } else {
                    (acc.first, acc.last)
                };
                BinadeRow {
                    binade: key.label(),
                    first: BitsValue::new(input_format, lo),
                    last: BitsValue::new(input_format, hi),
                    points: acc.points,
                    max_ulp: acc.max,
                    mean_ulp: acc.sum.mean(),
                    correctly_rounded: acc.correct as f64 / acc.points as f64,
                    worst_input: BitsValue::new(input_format, acc.worst.expect("row has points")),
                }
            })
            .collect();
        let abs_floor = self.abs_floor;
        let regions = self
            .regions
            .into_iter()
            .enumerate()
            .map(|(k, (acc, floored))| RegionRow {
                region: REGIONS[k],
                points: acc.points,
                max_ulp: acc.max,
                max_floored: abs_floor.map(|_| floored),
            })
            .collect();
        let floor_max = self.floor_max;
        let abs_floor = abs_floor.map(|a| FloorView {
            floor: a,
            max: floor_max.0,
            worst: floor_max.1.map(|w| w.report(input_format, format)),
        });
        let mut bounds: Vec<Option<f64>> = BINS.iter().map(|&b| Some(b)).collect();
        bounds.push(None);
        let buckets = match self.samples {
            Samples::All(v) => buckets(&v),
            Samples::Dense { lo, max, at } => buckets(&dense_list(lo, &max, &at)),
            Samples::Grid { lo, hi, touched } => {
                let mut buckets = grid(lo, hi);
                for (index, points, max, point) in touched {
                    buckets[index].take(points, max, point);
                }
                buckets
            }
        };
        Accuracy {
            points: total.points,
            max_ulp: total.max,
            worst: self.worst.map(|w| w.report(input_format, format)),
            mean_ulp: total.sum.mean(),
            rms_ulp: total.sum.rms(),
            correctly_rounded: fraction(total.correct),
            faithful: fraction(self.faithful),
            histogram: bounds
                .into_iter()
                .zip(self.histogram)
                .map(|(up_to, count)| HistogramBin { up_to, count })
                .collect(),
            per_binade,
            regions,
            abs_floor,
            flush_to_zero_outputs: self.ftz,
            excluded_non_finite: self.excluded,
            rounding: self.rounding.diagnose(total.points),
            buckets,
            points_over_limit: self.list_over.map(|_| self.listed),
        }
    }
}

/// Accuracy over `points` (the measured inputs, any order).
///
/// `list_over`: points with a larger error go to the sink.
pub fn accuracy(
    format: &'static dyn Format,
    points: &[Point],
    abs_floor: Option<f64>,
    list_over: Option<f64>,
    sink: &mut dyn FindingSink,
) -> Accuracy {
    let mut order: Vec<&Point> = points.iter().collect();
    order.sort_by_key(|p| p.input);
    let mut acc = AccuracyAcc::new(format, abs_floor, list_over, None);
    for p in order {
        acc.add(p);
    }
    acc.finish(sink)
}
