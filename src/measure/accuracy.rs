//! ulp accuracy over the points where kernel output and reference are both finite.

use super::{is_finite, ExactSum, Point};
use crate::format::{step_distance, ulp_error, Class, ExactValue, Format};
use crate::reference::Reference;
use crate::report::BitsValue;
use serde::{Deserialize, Serialize};

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
    /// Max error per bucket of input ordinals, for plots.
    #[serde(skip)]
    pub buckets: Vec<Bucket>,
    /// Every point whose error exceeds the listing limit, in bit order.
    #[serde(skip)]
    pub over_limit: Vec<Worst>,
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
}

/// Number of plot buckets.
const BUCKETS: i64 = 480;

fn buckets(samples: &[(i64, f64)]) -> Vec<Bucket> {
    let (Some(lo), Some(hi)) = (
        samples.iter().map(|s| s.0).min(),
        samples.iter().map(|s| s.0).max(),
    ) else {
        return Vec::new();
    };
    let width = ((hi - lo + 1) + BUCKETS - 1) / BUCKETS;
    let mut out = grid(lo, hi);
    for &(o, e) in samples {
        let b = &mut out[((o - lo) / width) as usize];
        b.points += 1;
        b.max_ulp = b.max_ulp.max(e);
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

fn judge(format: &dyn Format, output: u32, r: &Reference) -> Option<Judged> {
    let exact = r.exact?;
    if !is_finite(format, r.bits) {
        return None;
    }
    let error = ulp_error(format, output, &exact);
    let correct = step_distance(format, output, r.bits) == 0;
    // y lies between RN(y) and the neighbour on its side; that neighbour is also faithful.
    let rv = format.to_f64(r.bits);
    let other = if exact.approx > rv {
        Some(format.next_up(r.bits))
    } else if exact.approx < rv {
        Some(format.next_down(r.bits))
    } else {
        None
    };
    let faithful = correct || other.is_some_and(|o| step_distance(format, output, o) == 0);
    Some(Judged {
        error,
        exact,
        correct,
        faithful,
        reference: r.bits,
    })
}

/// The error at a point: at a kink either one-sided value is accepted, whichever is closer.
fn judge_point(format: &dyn Format, p: &Point, output: u32) -> Option<Judged> {
    let right = judge(format, output, &p.reference);
    let left = p.left.as_ref().and_then(|l| judge(format, output, l));
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

fn binade_key(format: &dyn Format, bits: u32) -> BinadeKey {
    let exponent = match format.classify(bits) {
        Class::Zero | Class::Subnormal => None,
        // The binary64 exponent field is exact, unlike a computed log2.
        _ => Some(((format.to_f64(bits).to_bits() >> 52) & 0x7ff) as i32 - 1023),
    };
    BinadeKey {
        negative: format.is_sign_negative(bits),
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
    fn add(&mut self, input: u32, error: f64, correct: bool) {
        if self.points == 0 {
            self.first = input;
        }
        self.last = input;
        self.points += 1;
        // Strict comparison keeps the lowest input on ties: points arrive in bit order.
        if self.worst.is_none() || error > self.max {
            self.max = error;
            self.worst = Some(input);
        }
        self.sum.add(error);
        self.correct += correct as u64;
    }
}

impl Acc {
    /// Joins the figures of later inputs (all above ours in bit order).
    fn merge(&mut self, other: Acc) {
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

fn worst_of(format: &dyn Format, p: &Point, j: &Judged, error: f64) -> Worst {
    Worst {
        input: BitsValue::new(format, p.input),
        output: BitsValue::new(format, p.output.unwrap_or(0)),
        reference: BitsValue::new(format, j.reference),
        exact: j.exact.approx,
        ulp: error,
    }
}

/// Largest ordinal span whose errors are kept one per ordinal for the plot buckets; wider
/// streamed sweeps bucket over a fixed grid (see [`AccuracyAcc::new`]).
const DENSE_BUCKET_SPAN: i64 = 1 << 20;

/// Where plot samples go.
#[derive(Serialize, Deserialize)]
enum Samples {
    /// Every (ordinal, error): buckets span the samples exactly (small, in-memory sweeps).
    All(Vec<(i64, f64)>),
    /// Largest error per ordinal of a span known in advance (NaN: no point), then bucketed
    /// over the samples' own span like `All`.
    Dense { lo: i64, max: Vec<f64> },
    /// Buckets fixed in advance over a span (wide streamed sweeps).
    Grid(Vec<Bucket>),
}

/// Accuracy figures accumulated point by point, in increasing input bit order, with memory
/// independent of the number of points (apart from `list_over` listings).
#[derive(Serialize, Deserialize)]
pub struct AccuracyAcc {
    #[serde(with = "crate::format::by_name_serde")]
    format: &'static dyn Format,
    abs_floor: Option<f64>,
    list_over: Option<f64>,
    total: Acc,
    faithful: u64,
    histogram: Vec<u64>,
    binades: Vec<(BinadeKey, Acc)>,
    regions: Vec<(Acc, f64)>,
    worst: Option<Worst>,
    floor_max: (f64, Option<Worst>),
    ftz: u64,
    excluded: u64,
    samples: Samples,
    over_limit: Vec<Worst>,
    last_input: Option<u32>,
}

fn grid(lo: i64, hi: i64) -> Vec<Bucket> {
    let width = ((hi - lo + 1) + BUCKETS - 1) / BUCKETS;
    (0..BUCKETS)
        .map(|k| Bucket {
            lo: lo + k * width,
            hi: lo + (k + 1) * width - 1,
            points: 0,
            max_ulp: 0.0,
        })
        .filter(|b| b.lo <= hi)
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
            Some((lo, hi)) if hi - lo < DENSE_BUCKET_SPAN => Samples::Dense {
                lo,
                max: vec![f64::NAN; (hi - lo + 1).max(0) as usize],
            },
            Some((lo, hi)) => Samples::Grid(grid(lo, hi)),
        };
        AccuracyAcc {
            format,
            abs_floor,
            list_over,
            total: Acc::default(),
            faithful: 0,
            histogram: vec![0u64; BINS.len() + 1],
            binades: Vec::new(),
            regions: (0..REGIONS.len()).map(|_| (Acc::default(), 0.0)).collect(),
            worst: None,
            floor_max: (0.0, None),
            ftz: 0,
            excluded: 0,
            samples,
            over_limit: Vec::new(),
            last_input: None,
        }
    }

    /// The format of the points.
    pub fn format(&self) -> &'static dyn Format {
        self.format
    }

    /// An empty accumulator with the same settings, for inputs that will be merged into this
    /// one (a dense plot span is not allocated again: its samples are kept as a list).
    pub fn fresh(&self) -> Self {
        let mut acc = AccuracyAcc::new(self.format, self.abs_floor, self.list_over, None);
        if let Samples::Grid(buckets) = &self.samples {
            acc.samples = Samples::Grid(
                buckets
                    .iter()
                    .map(|b| Bucket {
                        points: 0,
                        max_ulp: 0.0,
                        ..*b
                    })
                    .collect(),
            );
        }
        acc
    }

    /// Keeps a dense plot span as a list of its samples, so that the state holds no NaN
    /// (JSON has none); the figures do not change.
    pub fn make_portable(&mut self) {
        if let Samples::Dense { lo, max } = &self.samples {
            let list = max
                .iter()
                .enumerate()
                .filter(|(_, e)| !e.is_nan())
                .map(|(i, &e)| (lo + i as i64, e))
                .collect();
            self.samples = Samples::All(list);
        }
    }

    /// Adds one point; points must come in strictly increasing input bit order.
    pub fn add(&mut self, p: &Point) {
        let format = self.format;
        debug_assert!(self.last_input.map_or(true, |l| l < p.input));
        self.last_input = Some(p.input);
        let input_finite = is_finite(format, p.input);
        let j = match p.output {
            Some(out) if input_finite && is_finite(format, out) => judge_point(format, p, out),
            _ => None,
        };
        let Some(j) = j else {
            if input_finite && p.output.is_some() {
                self.excluded += 1;
            }
            return;
        };
        let out = p.output.expect("judged");
        if format.classify(j.reference) == Class::Subnormal && format.classify(out) == Class::Zero {
            self.ftz += 1;
            return;
        }
        let new_worst = self.total.worst.is_none() || j.error > self.total.max;
        self.total.add(p.input, j.error, j.correct);
        if new_worst {
            self.worst = Some(worst_of(format, p, &j, j.error));
        }
        let ordinal = format.ordinal(p.input);
        match &mut self.samples {
            Samples::All(v) => v.push((ordinal, j.error)),
            Samples::Dense { lo, max } => {
                let slot = &mut max[(ordinal - *lo) as usize];
                // NaN marks an empty slot; f64::max ignores it.
                *slot = slot.max(j.error);
            }
            Samples::Grid(buckets) => {
                let (lo, width) = (buckets[0].lo, buckets[0].hi - buckets[0].lo + 1);
                let b = &mut buckets[((ordinal - lo) / width) as usize];
                b.points += 1;
                b.max_ulp = b.max_ulp.max(j.error);
            }
        }
        if self.list_over.is_some_and(|limit| j.error > limit) {
            self.over_limit.push(worst_of(format, p, &j, j.error));
        }
        self.faithful += j.faithful as u64;
        let bin = BINS
            .iter()
            .position(|&b| j.error <= b)
            .unwrap_or(BINS.len());
        self.histogram[bin] += 1;
        let key = binade_key(format, p.input);
        match self.binades.last_mut() {
            Some((k, acc)) if *k == key => acc.add(p.input, j.error, j.correct),
            _ => {
                let mut acc = Acc::default();
                acc.add(p.input, j.error, j.correct);
                self.binades.push((key, acc));
            }
        }
        let region = region_of(format.to_f64(p.input));
        self.regions[region].0.add(p.input, j.error, j.correct);
        if let Some(a) = self.abs_floor {
            let ulp = j.exact.ulp(format);
            let floored = j.error * ulp / ulp.max(a);
            self.regions[region].1 = self.regions[region].1.max(floored);
            if self.floor_max.1.is_none() || floored > self.floor_max.0 {
                self.floor_max = (floored, Some(worst_of(format, p, &j, floored)));
            }
        }
    }

    /// Joins an accumulator of later inputs (every one above ours in bit order, same
    /// settings): the result is the accumulator of all the inputs fed one by one.
    pub fn merge(&mut self, other: AccuracyAcc) {
        let new_worst = other.total.worst.is_some()
            && (self.total.worst.is_none() || other.total.max > self.total.max);
        if new_worst {
            self.worst = other.worst;
        }
        self.total.merge(other.total);
        self.faithful += other.faithful;
        for (h, o) in self.histogram.iter_mut().zip(other.histogram) {
            *h += o;
        }
        let mut rows = other.binades.into_iter();
        // Their first row continues our last when both are the same binade.
        if let Some((label, acc)) = rows.next() {
            match self.binades.last_mut() {
                Some((l, mine)) if *l == label => mine.merge(acc),
                _ => self.binades.push((label, acc)),
            }
        }
        self.binades.extend(rows);
        for (mine, (acc, floored)) in self.regions.iter_mut().zip(other.regions) {
            mine.0.merge(acc);
            mine.1 = mine.1.max(floored);
        }
        if other.floor_max.1.is_some()
            && (self.floor_max.1.is_none() || other.floor_max.0 > self.floor_max.0)
        {
            self.floor_max = other.floor_max;
        }
        self.ftz += other.ftz;
        self.excluded += other.excluded;
        match (&mut self.samples, other.samples) {
            (Samples::All(mine), Samples::All(theirs)) => mine.extend(theirs),
            (Samples::Dense { lo, max }, Samples::All(theirs)) => {
                for (ordinal, e) in theirs {
                    let slot = &mut max[(ordinal - *lo) as usize];
                    *slot = slot.max(e);
                }
            }
            (Samples::Dense { max: mine, .. }, Samples::Dense { max: theirs, .. }) => {
                for (m, t) in mine.iter_mut().zip(theirs) {
                    *m = m.max(t);
                }
            }
            (Samples::Grid(mine), Samples::Grid(theirs)) => {
                for (m, t) in mine.iter_mut().zip(theirs) {
                    m.points += t.points;
                    m.max_ulp = m.max_ulp.max(t.max_ulp);
                }
            }
            _ => panic!("merging accumulators of different settings"),
        }
        self.over_limit.extend(other.over_limit);
        self.last_input = other.last_input.or(self.last_input);
    }

    /// The figures.
    pub fn finish(self) -> Accuracy {
        let format = self.format;
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
                    first: BitsValue::new(format, lo),
                    last: BitsValue::new(format, hi),
                    points: acc.points,
                    max_ulp: acc.max,
                    mean_ulp: acc.sum.mean(),
                    correctly_rounded: acc.correct as f64 / acc.points as f64,
                    worst_input: BitsValue::new(format, acc.worst.expect("row has points")),
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
            worst: floor_max.1,
        });
        let mut bounds: Vec<Option<f64>> = BINS.iter().map(|&b| Some(b)).collect();
        bounds.push(None);
        let buckets = match self.samples {
            Samples::All(v) => buckets(&v),
            Samples::Dense { lo, max } => {
                let v: Vec<(i64, f64)> = max
                    .iter()
                    .enumerate()
                    .filter(|(_, e)| !e.is_nan())
                    .map(|(i, &e)| (lo + i as i64, e))
                    .collect();
                buckets(&v)
            }
            Samples::Grid(b) => b,
        };
        Accuracy {
            points: total.points,
            max_ulp: total.max,
            worst: self.worst,
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
            buckets,
            over_limit: self.over_limit,
        }
    }
}

/// Accuracy over `points` (the measured inputs, any order).
///
/// `list_over`: points with a larger error are listed in `over_limit` (for CSV).
pub fn accuracy(
    format: &'static dyn Format,
    points: &[Point],
    abs_floor: Option<f64>,
    list_over: Option<f64>,
) -> Accuracy {
    let mut order: Vec<&Point> = points.iter().collect();
    order.sort_by_key(|p| p.input);
    let mut acc = AccuracyAcc::new(format, abs_floor, list_over, None);
    for p in order {
        acc.add(p);
    }
    acc.finish()
}
