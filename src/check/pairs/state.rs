//! What a pair-check shard report carries for `merge`: which whole sweep it is a part of, its
//! accumulator (the cell grids sparsely, only the cells that saw something), and its first
//! crashes. States read back are validated against the format before they are joined.

use super::{cells, PairAcc};
use crate::format::Format;
use serde::{Deserialize, Serialize};

/// Layout of a pair shard's state (`shard.state_version` of a pair-check report): raised
/// whenever it changes shape, so that shards of different builds are refused, not misread.
pub const PAIR_STATE_VERSION: u32 = 1;

/// Most crash records a state holds (as many as a report lists).
const MAX_CRASHES: usize = 8;

/// Longest cell grid a state may declare: binary32's 514 × 514 cells fit; a file claiming
/// more is refused before anything that large is allocated.
const MAX_CELLS: usize = 1 << 20;

/// What names the whole sweep a shard is a part of: equal in every shard of one check.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct PairSweepId {
    /// `--range` as given, `None` for every pattern of a.
    pub range: Option<String>,
    /// Patterns of a in the whole (unsharded) sweep.
    pub a_total: u64,
    /// `--param` values as given (they change the reference).
    pub params: Vec<String>,
    /// `--param-rounding` as given.
    pub param_rounding: String,
}

/// What one part measured, in mergeable form.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PairShardState {
    /// Patterns of a this part measured (every b for each).
    pub a_count: u64,
    /// Its first and last pattern of a in sweep order (`None` for an empty part).
    pub a_first: Option<u32>,
    /// See `a_first`.
    pub a_last: Option<u32>,
    /// Every figure.
    pub acc: PairAcc,
    /// The first crashes (a, b, what), in sweep order.
    pub crashes: Vec<(u32, u32, String)>,
}

impl PairShardState {
    /// Checks a state read from a file: grid shape, patterns within the format, counts that
    /// add up, and a worst pair that matches the cells' maxima. Returns the offending field.
    pub fn validate(&self, format: &dyn Format) -> Result<(), String> {
        let acc = &self.acc;
        let axis = cells::axis(format);
        let patterns = format.pattern_count();
        let in_format = |bits: u32| u64::from(bits) < patterns;
        let fail = |field: &str| Err(field.to_string());
        if acc.axis() != axis
            || acc.cell_max.len() != axis * axis
            || acc.cell_spurious.len() != axis * axis
        {
            return fail("acc.axis (the cell grid is not the format's)");
        }
        if !self.a_first.map_or(true, in_format) || !self.a_last.map_or(true, in_format) {
            return fail("a_first/a_last");
        }
        if (self.a_count == 0) != self.a_first.is_none()
            || self.a_first.is_none() != self.a_last.is_none()
        {
            return fail("a_count/a_first/a_last");
        }
        if self.a_count.checked_mul(patterns) != Some(acc.pairs) {
            return fail("acc.pairs (not a_count × the format's patterns)");
        }
        let outcomes = [
            acc.crashed,
            acc.compared,
            acc.spurious_non_finite,
            acc.missing_non_finite,
        ];
        if outcomes.iter().try_fold(0u64, |s, &n| s.checked_add(n)) > Some(acc.pairs)
            || acc.exact > acc.pairs
            || acc.within_half > acc.compared
            || acc.over_one > acc.compared
        {
            return fail("acc counts (they add up to more than the pairs)");
        }
        let spurious_in_cells = acc
            .cell_spurious
            .iter()
            .try_fold(0u64, |s, &n| s.checked_add(n));
        if spurious_in_cells.map_or(true, |n| n > acc.spurious_non_finite) {
            return fail("acc.cell_spurious");
        }
        if acc
            .cell_max
            .iter()
            .any(|&m| !(m == -1.0 || (m.is_finite() && m >= 0.0)))
        {
            return fail("acc.cell_max");
        }
        let cell_top = acc.cell_max.iter().copied().fold(-1.0f32, f32::max);
        match &acc.worst {
            None if cell_top >= 0.0 || acc.compared > 0 => return fail("acc.worst (missing)"),
            Some(w) => {
                let sound = w.ulp.is_finite()
                    && w.ulp >= 0.0
                    && [w.a, w.b, w.output, w.reference].into_iter().all(in_format)
                    && w.ulp as f32 == cell_top
                    && acc.compared > 0;
                if !sound {
                    return fail("acc.worst");
                }
            }
            None => {}
        }
        if self.crashes.len() > MAX_CRASHES
            || self.crashes.len() as u64 > acc.crashed
            || self
                .crashes
                .iter()
                .any(|(a, b, _)| !in_format(*a) || !in_format(*b))
        {
            return fail("crashes");
        }
        Ok(())
    }
}

/// The `acc.cell_max` grid as `{"len", "cells": [[index, max], …]}` over the cells that
/// compared a pair (max written as f64, which holds every f32 exactly).
pub mod sparse_max {
    use super::MAX_CELLS;
    use serde::{de::Error, Deserialize, Deserializer, Serialize, Serializer};

    #[derive(Serialize, Deserialize)]
    struct Sparse {
        len: usize,
        cells: Vec<(usize, f64)>,
    }

    /// Writes the cells other than −1.
    pub fn serialize<S: Serializer>(grid: &[f32], s: S) -> Result<S::Ok, S::Error> {
        Sparse {
            len: grid.len(),
            cells: grid
                .iter()
                .enumerate()
                .filter(|(_, &m)| m != -1.0)
                .map(|(i, &m)| (i, f64::from(m)))
                .collect(),
        }
        .serialize(s)
    }

    /// Reads the grid back, −1 where no cell is listed.
    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<f32>, D::Error> {
        let sparse = Sparse::deserialize(d)?;
        if sparse.len > MAX_CELLS {
            return Err(D::Error::custom(
                "cell_max.len is larger than any format's grid",
            ));
        }
        let mut grid = vec![-1.0f32; sparse.len];
        for (i, m) in sparse.cells {
            let cell = grid
                .get_mut(i)
                .ok_or_else(|| D::Error::custom("cell_max lists a cell outside its grid"))?;
            *cell = m as f32;
        }
        Ok(grid)
    }
}

/// The `acc.cell_spurious` grid as `{"len", "cells": [[index, count], …]}` over the cells
/// with a spurious non-finite output.
pub mod sparse_count {
    use super::MAX_CELLS;
    use serde::{de::Error, Deserialize, Deserializer, Serialize, Serializer};

    #[derive(Serialize, Deserialize)]
    struct Sparse {
        len: usize,
        cells: Vec<(usize, u64)>,
    }

    /// Writes the non-zero cells.
    pub fn serialize<S: Serializer>(grid: &[u64], s: S) -> Result<S::Ok, S::Error> {
        Sparse {
            len: grid.len(),
            cells: grid
                .iter()
                .enumerate()
                .filter(|(_, &n)| n != 0)
                .map(|(i, &n)| (i, n))
                .collect(),
        }
        .serialize(s)
    }

    /// Reads the grid back, 0 where no cell is listed.
    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<u64>, D::Error> {
        let sparse = Sparse::deserialize(d)?;
        if sparse.len > MAX_CELLS {
            return Err(D::Error::custom(
                "cell_spurious.len is larger than any format's grid",
            ));
        }
        let mut grid = vec![0u64; sparse.len];
        for (i, n) in sparse.cells {
            let cell = grid
                .get_mut(i)
                .ok_or_else(|| D::Error::custom("cell_spurious lists a cell outside its grid"))?;
            *cell = n;
        }
        Ok(grid)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::Binary16;

    #[test]
    fn a_state_round_trips_through_json_and_is_validated() {
        let f = &Binary16;
        let mut acc = PairAcc::new(f);
        acc.pairs = 2 * 65536;
        acc.compared = 10;
        acc.spurious_non_finite = 3;
        acc.cell_max[5] = 0.75;
        acc.cell_spurious[7] = 3;
        acc.worst = Some(super::super::WorstPair {
            a: 1,
            b: 2,
            output: 3,
            reference: 4,
            ulp: 0.75,
        });
        let state = PairShardState {
            a_count: 2,
            a_first: Some(0x3c00),
            a_last: Some(0x3c01),
            acc,
            crashes: Vec::new(),
        };
        state.validate(f).unwrap();
        let text = serde_json::to_string(&state).unwrap();
        // Only the two cells that saw something are written.
        assert!(text.contains("\"cells\":[[5,0.75]]"), "{text}");
        let back: PairShardState = serde_json::from_str(&text).unwrap();
        assert_eq!(back, state);
        let mut bad = state.clone();
        bad.acc.cell_max[6] = 2.0;
        assert_eq!(bad.validate(f).unwrap_err(), "acc.worst");
        let mut bad = state.clone();
        bad.acc.pairs += 1;
        assert!(bad.validate(f).unwrap_err().starts_with("acc.pairs"));
        let huge = text.replace("\"len\":4356", "\"len\":999999999");
        assert!(serde_json::from_str::<PairShardState>(&huge).is_err());
    }
}
