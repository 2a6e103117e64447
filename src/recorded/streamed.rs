//! The store of a large binary32 set kept on disk: the inputs must be in increasing bit order
//! (as `ulpgauge inputs` writes them), and answers are read window by window, so memory stays
//! a few windows whatever the size of the files.

use super::files::{RecordedFiles, CHUNK};
use super::group::Grouper;
use super::survey::{Fill, Group, Survey, Tally};
use crate::format::{hex, Format};
use crate::sweep::InputRange;

/// Largest window read at once; a window after a jump starts at [`FIRST_WINDOW`] elements and
/// doubles while the lookups walk forward, so scattered probes read little.
const MAX_WINDOW: usize = 1 << 16;
const FIRST_WINDOW: usize = 256;

/// A set read from disk on demand.
pub struct Streamed {
    files: RecordedFiles,
    /// Position of `xs[0]` in the files.
    start: u64,
    xs: Vec<u32>,
    ys: Vec<u32>,
    gs: Vec<u32>,
    next_window: usize,
}

impl Streamed {
    /// Surveys the set in one pass; fails unless its inputs are in increasing bit order.
    pub fn load(
        files: RecordedFiles,
        format: &'static dyn Format,
        range: &InputRange,
    ) -> Result<(Streamed, Survey), String> {
        let l = format.layout();
        let mut fill = Fill::default();
        let mut tally = Tally::new(format, range, files.len());
        let mut grouper = Grouper::default();
        let mut emit = |g: Group| tally.add(g);
        let mut previous: Option<u32> = None;
        let mut position = 0u64;
        files.for_each_chunk(|xs, ys, gs| {
            for (i, (&x, &y)) in xs.iter().zip(ys).enumerate() {
                if previous.is_some_and(|p| p > x) {
                    return Err(format!(
                        "{}: element {position} ({}) comes after a larger bit pattern: a set of more than {} elements must list its inputs in increasing bit order (as `ulpgauge inputs` writes them), or be split with `ulpgauge inputs --shard`",
                        files.inputs.name(),
                        hex(format, x),
                        super::sorted::IN_MEMORY
                    ));
                }
                previous = Some(x);
                position += 1;
                let g = gs.get(i).copied();
                fill.add(l, x, y, g);
                grouper.push(x, y, g, &mut emit)?;
            }
            Ok(())
        })?;
        grouper.finish(&mut emit)?;
        fill.check(files.grads.is_some())?;
        let survey = tally.finish()?;
        Ok((
            Streamed {
                files,
                start: 0,
                xs: Vec::new(),
                ys: Vec::new(),
                gs: Vec::new(),
                next_window: FIRST_WINDOW,
            },
            survey,
        ))
    }

    /// Position of the first element whose input is at least `x` (binary search on disk).
    fn lower_bound(&self, x: u32) -> Result<u64, String> {
        let (mut lo, mut hi) = (0u64, self.files.len());
        while lo < hi {
            let mid = lo + (hi - lo) / 2;
            if self.files.inputs.at(mid)? < x {
                lo = mid + 1;
            } else {
                hi = mid;
            }
        }
        Ok(lo)
    }

    /// The first recorded output and g of `x`, if recorded.
    pub fn get(&mut self, x: u32) -> Result<Option<(u32, Option<u32>)>, String> {
        let within = self.xs.first().is_some_and(|&a| a <= x) && self.xs.last() >= Some(&x);
        if within {
            let i = self.xs.partition_point(|&v| v < x);
            // A window may begin inside a run of repeats; the first element of the run is the
            // one measured, so an answer at the window's start is looked up again.
            if i > 0 || self.start == 0 {
                return Ok(self.answer(i, x));
            }
        }
        let at = self.lower_bound(x)?;
        if at >= self.files.len() || self.files.inputs.at(at)? != x {
            return Ok(None);
        }
        let end = self.start + self.xs.len() as u64;
        self.next_window = if at == end {
            (self.next_window * 2).min(MAX_WINDOW)
        } else {
            FIRST_WINDOW
        };
        self.files.read(
            at,
            self.next_window.min(CHUNK),
            &mut self.xs,
            &mut self.ys,
            &mut self.gs,
        )?;
        self.start = at;
        Ok(self.answer(0, x))
    }

    fn answer(&self, i: usize, x: u32) -> Option<(u32, Option<u32>)> {
        (self.xs.get(i) == Some(&x)).then(|| (self.ys[i], self.gs.get(i).copied()))
    }
}
