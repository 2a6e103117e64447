//! ulp accuracy over the points where kernel output and reference are both finite.

use super::{is_finite, ExactSum, Point};
use crate::format::{step_distance, ulp_error, Class, ExactValue, Format};
use crate::reference::Reference;
use crate::report::BitsValue;
use serde::Serialize;

/// The worst point.
#[derive(Clone, Debug, Serialize)]
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
#[derive(Clone, Debug)]
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
    let mut out: Vec<Bucket> = (0..BUCKETS)
        .map(|k| Bucket {
            lo: lo + k * width,
            hi: lo + (k + 1) * width - 1,
            points: 0,
            max_ulp: 0.0,
        })
        .filter(|b| b.lo <= hi)
        .collect();
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

fn binade_label(format: &dyn Format, bits: u32) -> String {
    let sign = if format.is_sign_negative(bits) {
        "-"
    } else {
        "+"
    };
    match format.classify(bits) {
        Class::Zero | Class::Subnormal => format!("{sign}subnormal"),
        _ => {
            // The binary64 exponent field is exact, unlike a computed log2.
            let e = ((format.to_f64(bits).to_bits() >> 52) & 0x7ff) as i32 - 1023;
            format!("{sign}2^{e}")
        }
    }
}

#[derive(Default)]
struct Acc {
    points: u64,
    max: f64,
    worst: Option<usize>,
    sum: ExactSum,
    correct: u64,
    first: u32,
    last: u32,
}

impl Acc {
    fn add(&mut self, i: usize, input: u32, error: f64, correct: bool) {
        if self.points == 0 {
            self.first = input;
        }
        self.last = input;
        self.points += 1;
        // Strict comparison keeps the lowest input on ties: points arrive in bit order.
        if self.worst.is_none() || error > self.max {
            self.max = error;
            self.worst = Some(i);
        }
        self.sum.add(error);
        self.correct += correct as u64;
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

/// Accuracy over `points` (the measured inputs, any order).
///
/// `list_over`: points with a larger error are listed in `over_limit` (for CSV).
pub fn accuracy(
    format: &dyn Format,
    points: &[Point],
    abs_floor: Option<f64>,
    list_over: Option<f64>,
) -> Accuracy {
    let mut order: Vec<&Point> = points.iter().collect();
    order.sort_by_key(|p| p.input);
    let mut total = Acc::default();
    let mut faithful = 0u64;
    let mut histogram = vec![0u64; BINS.len() + 1];
    let mut binades: Vec<(String, Acc)> = Vec::new();
    let mut regions: Vec<(Acc, f64)> = (0..REGIONS.len()).map(|_| (Acc::default(), 0.0)).collect();
    let mut floor_max: (f64, Option<usize>) = (0.0, None);
    let mut ftz = 0u64;
    let mut excluded = 0u64;
    let mut judged: Vec<Option<Judged>> = Vec::with_capacity(order.len());
    let mut samples: Vec<(i64, f64)> = Vec::new();
    let mut over_limit = Vec::new();
    for (i, p) in order.iter().enumerate() {
        let input_finite = is_finite(format, p.input);
        let j = match p.output {
            Some(out) if input_finite && is_finite(format, out) => judge_point(format, p, out),
            _ => None,
        };
        let Some(j) = j else {
            if input_finite && p.output.is_some() {
                excluded += 1;
            }
            judged.push(None);
            continue;
        };
        let out = p.output.expect("judged");
        if format.classify(j.reference) == Class::Subnormal && format.classify(out) == Class::Zero {
            ftz += 1;
            judged.push(None);
            continue;
        }
        total.add(i, p.input, j.error, j.correct);
        samples.push((format.ordinal(p.input), j.error));
        if list_over.is_some_and(|limit| j.error > limit) {
            over_limit.push(worst_of(format, p, &j, j.error));
        }
        faithful += j.faithful as u64;
        let bin = BINS
            .iter()
            .position(|&b| j.error <= b)
            .unwrap_or(BINS.len());
        histogram[bin] += 1;
        let label = binade_label(format, p.input);
        match binades.last_mut() {
            Some((l, acc)) if *l == label => acc.add(i, p.input, j.error, j.correct),
            _ => {
                let mut acc = Acc::default();
                acc.add(i, p.input, j.error, j.correct);
                binades.push((label, acc));
            }
        }
        let region = region_of(format.to_f64(p.input));
        regions[region].0.add(i, p.input, j.error, j.correct);
        if let Some(a) = abs_floor {
            let ulp = j.exact.ulp(format);
            let floored = j.error * ulp / ulp.max(a);
            regions[region].1 = regions[region].1.max(floored);
            if floor_max.1.is_none() || floored > floor_max.0 {
                floor_max = (floored, Some(i));
            }
        }
        judged.push(Some(j));
    }
    let fraction = |n: u64| {
        if total.points == 0 {
            0.0
        } else {
            n as f64 / total.points as f64
        }
    };
    let worst = total.worst.map(|i| {
        let j = judged[i].as_ref().expect("worst is judged");
        worst_of(format, order[i], j, j.error)
    });
    // Binades in increasing x: negative rows were met in increasing bit order, i.e. decreasing x.
    let (mut negative, positive): (Vec<_>, Vec<_>) =
        binades.into_iter().partition(|(l, _)| l.starts_with('-'));
    negative.reverse();
    let per_binade = negative
        .into_iter()
        .chain(positive)
        .map(|(label, acc)| {
            let (lo, hi) = if label.starts_with('-') {
                (acc.last, acc.first)
            } else {
                (acc.first, acc.last)
            };
            BinadeRow {
                binade: label,
                first: BitsValue::new(format, lo),
                last: BitsValue::new(format, hi),
                points: acc.points,
                max_ulp: acc.max,
                mean_ulp: acc.sum.mean(),
                correctly_rounded: acc.correct as f64 / acc.points as f64,
                worst_input: BitsValue::new(
                    format,
                    order[acc.worst.expect("row has points")].input,
                ),
            }
        })
        .collect();
    let regions = regions
        .into_iter()
        .enumerate()
        .map(|(k, (acc, floored))| RegionRow {
            region: REGIONS[k],
            points: acc.points,
            max_ulp: acc.max,
            max_floored: abs_floor.map(|_| floored),
        })
        .collect();
    let abs_floor = abs_floor.map(|a| FloorView {
        floor: a,
        max: floor_max.0,
        worst: floor_max.1.map(|i| {
            let j = judged[i].as_ref().expect("judged");
            worst_of(format, order[i], j, floor_max.0)
        }),
    });
    let mut bounds: Vec<Option<f64>> = BINS.iter().map(|&b| Some(b)).collect();
    bounds.push(None);
    Accuracy {
        points: total.points,
        max_ulp: total.max,
        worst,
        mean_ulp: total.sum.mean(),
        rms_ulp: total.sum.rms(),
        correctly_rounded: fraction(total.correct),
        faithful: fraction(faithful),
        histogram: bounds
            .into_iter()
            .zip(histogram)
            .map(|(up_to, count)| HistogramBin { up_to, count })
            .collect(),
        per_binade,
        regions,
        abs_floor,
        flush_to_zero_outputs: ftz,
        excluded_non_finite: excluded,
        buckets: buckets(&samples),
        over_limit,
    }
}
