//! `--shard I/N`: the I-th of N disjoint, contiguous parts of a sweep's measured inputs.

use serde::{Deserialize, Serialize};

/// The layout of the state a shard report carries for `merge` (`shard.state_version`): raised
/// whenever a serialized accumulator changes shape, so that shards written by different
/// builds are refused rather than misread.  Reports without it predate the field.
pub const STATE_VERSION: u32 = 4;

/// One part of a sweep: `index` counts from 1 to `count`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    /// Which part, 1-based.
    pub index: u64,
    /// How many parts.
    pub count: u64,
}

impl Shard {
    /// Parses "I/N" with 1 ≤ I ≤ N.
    pub fn parse(text: &str) -> Result<Shard, String> {
        let bad = || format!("--shard {text:?}: expected I/N with 1 <= I <= N, e.g. 3/8");
        let (i, n) = text.split_once('/').ok_or_else(bad)?;
        let index: u64 = i.trim().parse().map_err(|_| bad())?;
        let count: u64 = n.trim().parse().map_err(|_| bad())?;
        if count == 0 || index == 0 || index > count {
            return Err(bad());
        }
        Ok(Shard { index, count })
    }

    /// Positions [from, to) of this part among `len` measured inputs in bit order: as equal as
    /// integer division allows, the parts of 1..=N tiling 0..len.
    pub fn bounds(&self, len: u64) -> (u64, u64) {
        let at = |k: u64| ((k as u128 * len as u128) / self.count as u128) as u64;
        (at(self.index - 1), at(self.index))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parts_tile_the_sweep() {
        for len in [0u64, 1, 7, 100, 1 << 32] {
            for count in [1u64, 2, 3, 7, 64] {
                let mut next = 0;
                for index in 1..=count {
                    let (from, to) = Shard { index, count }.bounds(len);
                    assert_eq!(from, next);
                    assert!(to >= from);
                    next = to;
                }
                assert_eq!(next, len);
            }
        }
    }

    #[test]
    fn parse_accepts_only_one_based_parts() {
        assert_eq!(Shard::parse("3/8"), Ok(Shard { index: 3, count: 8 }));
        for bad in ["0/4", "5/4", "1/0", "1", "a/b", "-1/4", "1/4/2", ""] {
            assert!(Shard::parse(bad).is_err(), "{bad}");
        }
    }
}
