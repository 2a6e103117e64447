//! The store of a binary32 set small enough to sort in memory ([`IN_MEMORY`] elements at
//! most), so its inputs may come in any order.

use super::files::RecordedFiles;
use super::group::Grouper;
use super::survey::{Fill, Group, Survey, Tally};
use crate::format::Format;
use crate::sweep::InputRange;

/// Most elements sorted in memory: 12 bytes each while sorting, and half as much again for the
/// stable sort's buffer (≈ 150 MB), within the 512 MB a check may use.
pub const IN_MEMORY: u64 = 1 << 23;

/// The distinct recorded inputs in bit order with their first outputs and g.
pub struct Sorted {
    xs: Vec<u32>,
    ys: Vec<u32>,
    gs: Option<Vec<u32>>,
}

impl Sorted {
    /// Reads the whole set and sorts it by input (stable: the first occurrence stays first).
    pub fn load(
        files: &RecordedFiles,
        format: &'static dyn Format,
        range: &InputRange,
    ) -> Result<(Sorted, Survey), String> {
        debug_assert!(files.len() <= IN_MEMORY);
        let l = format.layout();
        let mut fill = Fill::default();
        let mut entries: Vec<(u32, u32, u32)> = Vec::with_capacity(files.len() as usize);
        files.for_each_chunk(|xs, ys, gs| {
            for (i, (&x, &y)) in xs.iter().zip(ys).enumerate() {
                let g = gs.get(i).copied();
                fill.add(l, x, y, g);
                entries.push((x, y, g.unwrap_or(0)));
            }
            Ok(())
        })?;
        fill.check(files.grads.is_some())?;
        let with_g = files.grads.is_some();
        let in_order = entries.windows(2).all(|w| w[0].0 <= w[1].0);
        if !in_order {
            entries.sort_by_key(|e| e.0);
        }
        let mut tally = Tally::new(format, range, files.len());
        if !in_order {
            tally.unsorted();
        }
        let mut store = Sorted {
            xs: Vec::new(),
            ys: Vec::new(),
            gs: with_g.then(Vec::new),
        };
        let mut emit = |g: Group| {
            store.xs.push(g.input);
            store.ys.push(g.first);
            if let (Some(gs), Some(grad)) = (&mut store.gs, g.grad) {
                gs.push(grad);
            }
            tally.add(g)
        };
        let mut grouper = Grouper::default();
        for (x, y, g) in entries {
            grouper.push(x, y, with_g.then_some(g), &mut emit)?;
        }
        grouper.finish(&mut emit)?;
        Ok((store, tally.finish()?))
    }

    /// The first recorded output and g of `x`, if recorded.
    pub fn get(&self, x: u32) -> Option<(u32, Option<u32>)> {
        let i = self.xs.binary_search(&x).ok()?;
        Some((self.ys[i], self.gs.as_ref().map(|g| g[i])))
    }
}
