//! What a pair sweep measures, in a bounded accumulator that joins exactly (shards, threads):
//! counts, the worst pair, and per (cell of a, cell of b) the max ulp and the non-finite
//! outputs where the exact value is finite.

use super::cells;
use crate::format::{ulp_error_in, Class, Format};
use crate::reference::Reference;
use serde::{Deserialize, Serialize};

/// One measured pair, as reports show it.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct WorstPair {
    /// a's pattern.
    pub a: u32,
    /// b's pattern.
    pub b: u32,
    /// The kernel's output pattern.
    pub output: u32,
    /// The correctly rounded reference pattern.
    pub reference: u32,
    /// |output − y| in ulps of y.
    pub ulp: f64,
}

/// Accumulated figures of a set of pairs (serialized into a shard report's state, the cell
/// vectors sparsely: see [`super::state`]).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PairAcc {
    axis: usize,
    /// Pairs measured.
    pub pairs: u64,
    /// Pairs the kernel crashed or hung on (no output).
    pub crashed: u64,
    /// Pairs with a finite reference and a finite output (the ulp figures).
    pub compared: u64,
    /// Compared pairs whose output equals the reference (a subset of `compared`: matching
    /// non-finite outputs are the pairs no other count holds).
    pub exact: u64,
    /// Compared pairs within half an ulp (correctly rounded up to ties).
    pub within_half: u64,
    /// Compared pairs more than one ulp off.
    pub over_one: u64,
    /// Non-finite outputs where the exact value rounds to a finite number.
    pub spurious_non_finite: u64,
    /// Finite (or wrongly signed or NaN) outputs where the reference is ±∞, and non-NaN outputs
    /// where it is NaN.
    pub missing_non_finite: u64,
    /// The largest ulp error with its pair (ties to the lowest (a, b)).
    pub worst: Option<WorstPair>,
    /// Max ulp per cell (row a, column b); −1 where no pair was compared.
    #[serde(with = "super::state::sparse_max")]
    pub cell_max: Vec<f32>,
    /// Spurious non-finite outputs per cell.
    #[serde(with = "super::state::sparse_count")]
    pub cell_spurious: Vec<u64>,
}

impl PairAcc {
    /// An empty accumulator for a format's grid.
    pub fn new(format: &dyn Format) -> PairAcc {
        let axis = cells::axis(format);
        PairAcc {
            axis,
            pairs: 0,
            crashed: 0,
            compared: 0,
            exact: 0,
            within_half: 0,
            over_one: 0,
            spurious_non_finite: 0,
            missing_non_finite: 0,
            worst: None,
            cell_max: vec![-1.0; axis * axis],
            cell_spurious: vec![0; axis * axis],
        }
    }

    /// Cells along each axis.
    pub fn axis(&self) -> usize {
        self.axis
    }

    /// Adds one pair: the kernel's output (`None`: it crashed) against the reference.
    pub fn add(&mut self, format: &dyn Format, a: u32, b: u32, out: Option<u32>, r: &Reference) {
        self.pairs += 1;
        let Some(out) = out else {
            self.crashed += 1;
            return;
        };
        // The layout is a plain value: per-pair tests without a virtual call each.
        let layout = format.layout();
        let nan = |x| layout.classify(x) == Class::Nan;
        let finite = |x| layout.is_finite(x);
        let cell = match (cells::cell(format, a), cells::cell(format, b)) {
            (Some(i), Some(j)) => Some(i * self.axis + j),
            _ => None,
        };
        if !finite(r.bits) {
            if out != r.bits && !(nan(out) && nan(r.bits)) {
                self.missing_non_finite += 1;
            }
            return;
        }
        if !finite(out) {
            self.spurious_non_finite += 1;
            if let Some(c) = cell {
                self.cell_spurious[c] += 1;
            }
            return;
        }
        let Some(exact) = r.exact else { return };
        let ulp = ulp_error_in(layout, out, &exact);
        self.compared += 1;
        if out == r.bits {
            self.exact += 1;
        }
        if ulp <= 0.5 {
            self.within_half += 1;
        }
        if ulp > 1.0 {
            self.over_one += 1;
        }
        if let Some(c) = cell {
            self.cell_max[c] = self.cell_max[c].max(ulp as f32);
        }
        let candidate = WorstPair {
            a,
            b,
            output: out,
            reference: r.bits,
            ulp,
        };
        if better(&candidate, self.worst.as_ref()) {
            self.worst = Some(candidate);
        }
    }

    /// Joins another accumulator of the same format (order-free: every figure is a sum or a
    /// maximum with a fixed tie rule).
    pub fn join(&mut self, other: &PairAcc) {
        self.pairs += other.pairs;
        self.crashed += other.crashed;
        self.compared += other.compared;
        self.exact += other.exact;
        self.within_half += other.within_half;
        self.over_one += other.over_one;
        self.spurious_non_finite += other.spurious_non_finite;
        self.missing_non_finite += other.missing_non_finite;
        if let Some(w) = &other.worst {
            if better(w, self.worst.as_ref()) {
                self.worst = Some(*w);
            }
        }
        for (m, o) in self.cell_max.iter_mut().zip(&other.cell_max) {
            *m = m.max(*o);
        }
        for (s, o) in self.cell_spurious.iter_mut().zip(&other.cell_spurious) {
            *s += o;
        }
    }

    /// The largest ulp error seen, 0 when nothing was compared.
    pub fn max_ulp(&self) -> f64 {
        self.worst.map_or(0.0, |w| w.ulp)
    }
}

/// Larger error first, then the lower (a, b) pair, so joins in any order agree.
fn better(candidate: &WorstPair, current: Option<&WorstPair>) -> bool {
    match current {
        None => true,
        Some(c) => {
            candidate.ulp > c.ulp
                || (candidate.ulp == c.ulp && (candidate.a, candidate.b) < (c.a, c.b))
        }
    }
}

/// A rectangle of cells (inclusive ranges along a and b) holding spurious non-finite outputs.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Region {
    /// First and last cell of a.
    pub a: (usize, usize),
    /// First and last cell of b.
    pub b: (usize, usize),
    /// Spurious non-finite outputs inside.
    pub pairs: u64,
}

/// The cells holding spurious non-finite outputs as rectangles: runs of adjacent cells along
/// b in each row of a, merged down the rows while a run spans the same columns; all of them,
/// largest first (at most axis²/2, bounded by the format).
pub fn regions(acc: &PairAcc) -> Vec<Region> {
    let n = acc.axis;
    let mut open: Vec<Region> = Vec::new();
    let mut done: Vec<Region> = Vec::new();
    for i in 0..n {
        let row = &acc.cell_spurious[i * n..(i + 1) * n];
        let mut runs = Vec::new();
        let mut j = 0;
        while j < n {
            if row[j] == 0 {
                j += 1;
                continue;
            }
            let start = j;
            let mut sum = 0;
            while j < n && row[j] > 0 {
                sum += row[j];
                j += 1;
            }
            runs.push((start, j - 1, sum));
        }
        let mut next = Vec::new();
        for (lo, hi, sum) in runs {
            match open.iter().position(|r| r.b == (lo, hi) && r.a.1 + 1 == i) {
                Some(k) => {
                    let mut r = open.swap_remove(k);
                    r.a.1 = i;
                    r.pairs += sum;
                    next.push(r);
                }
                None => next.push(Region {
                    a: (i, i),
                    b: (lo, hi),
                    pairs: sum,
                }),
            }
        }
        done.append(&mut open);
        open = next;
    }
    done.append(&mut open);
    done.sort_by(|x, y| y.pairs.cmp(&x.pairs).then((x.a, x.b).cmp(&(y.a, y.b))));
    done
}
