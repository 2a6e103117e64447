//! The accumulators a streamed sweep feeds, bundled so that parts of the sweep folded in
//! parallel (or on different machines) merge into the figures of one pass in bit order.

use crate::format::{Class, Format, Layout};
use crate::measure::{
    Accuracy, AccuracyAcc, NonFiniteRun, NonFiniteStream, Point, Shape, ShapeAcc,
};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

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

    /// Adds the next point in bit order.
    pub fn add(&mut self, l: Layout, p: &Point) {
        if Self::always(l, p) {
            self.points.insert(p.input, p.clone());
        }
        if l.is_finite(p.input) && l.classify(p.reference.bits) == Class::Subnormal {
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
    accuracy: AccuracyAcc,
    shape: Option<ShapeAcc>,
    /// Exhaustive sweeps only: non-finite runs stream too.
    runs: Option<NonFiniteStream>,
    kept: Kept,
}

impl Stream {
    /// Accumulators for a sweep; `exhaustive` also streams non-finite runs.
    pub fn new(accuracy: AccuracyAcc, shape: Option<ShapeAcc>, exhaustive: bool) -> Stream {
        let format = accuracy.format();
        Stream {
            format,
            layout: format.layout(),
            accuracy,
            shape,
            runs: exhaustive.then(|| NonFiniteStream::new(format)),
            kept: Kept::default(),
        }
    }

    /// Empty accumulators with the same settings, for a later stretch to merge in.
    pub fn fresh(&self) -> Stream {
        Stream {
            format: self.format,
            layout: self.layout,
            accuracy: self.accuracy.fresh(),
            shape: self.shape.as_ref().map(|s| s.fresh()),
            runs: self
                .runs
                .as_ref()
                .map(|_| NonFiniteStream::new(self.format)),
            kept: Kept::default(),
        }
    }

    /// Adds the next point in bit order.
    pub fn add(&mut self, p: &Point) {
        self.accuracy.add(p);
        if let Some(s) = &mut self.shape {
            s.add(p);
        }
        if let Some(r) = &mut self.runs {
            r.add(p);
        }
        self.kept.add(self.layout, p);
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
        self.kept.merge(self.layout, other.kept);
    }

    /// The figures: accuracy, shape, the streamed non-finite runs (exhaustive sweeps) and the
    /// kept points.
    pub fn finish(
        self,
    ) -> (
        Accuracy,
        Option<Shape>,
        Option<Vec<NonFiniteRun>>,
        Vec<Point>,
    ) {
        (
            self.accuracy.finish(),
            self.shape.map(|s| s.finish()),
            self.runs.map(|r| r.finish()),
            self.kept.into_points(),
        )
    }
}
