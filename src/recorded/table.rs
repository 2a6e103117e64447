//! The store of a 16-bit set: one slot per bit pattern, so the inputs may come in any order.

use super::files::RecordedFiles;
use super::survey::{Fill, Group, Survey, Tally};
use crate::format::Format;
use crate::sweep::InputRange;

#[derive(Clone, Copy, Default)]
struct Slot {
    count: u64,
    first: u32,
    other: Option<u32>,
    grad: Option<u32>,
    other_grad: Option<u32>,
}

/// Every recorded input of a 16-bit format with its first output and g.
pub struct Table {
    slots: Vec<Slot>,
}

impl Table {
    /// Reads the whole set (at most 2^16 distinct inputs, any order, any repeats).
    pub fn load(
        files: &RecordedFiles,
        format: &'static dyn Format,
        range: &InputRange,
    ) -> Result<(Table, Survey), String> {
        let l = format.layout();
        let mut slots = vec![Slot::default(); 1 << 16];
        let mut fill = Fill::default();
        let mut previous = None;
        let mut in_order = true;
        files.for_each_chunk(|xs, ys, gs| {
            for (i, (&x, &y)) in xs.iter().zip(ys).enumerate() {
                let g = gs.get(i).copied();
                fill.add(l, x, y, g);
                in_order &= previous.map_or(true, |p| p <= x);
                previous = Some(x);
                let s = &mut slots[x as usize];
                if s.count == 0 {
                    *s = Slot {
                        count: 1,
                        first: y,
                        other: None,
                        grad: g,
                        other_grad: None,
                    };
                    continue;
                }
                s.count += 1;
                if y != s.first && s.other.is_none() {
                    s.other = Some(y);
                }
                if g != s.grad && s.other_grad.is_none() {
                    s.other_grad = g;
                }
            }
            Ok(())
        })?;
        fill.check(files.grads.is_some())?;
        let mut tally = Tally::new(format, range, files.len());
        if !in_order {
            tally.unsorted();
        }
        for (x, s) in slots.iter().enumerate().filter(|(_, s)| s.count > 0) {
            tally.add(Group {
                input: x as u32,
                count: s.count,
                first: s.first,
                other: s.other,
                grad: s.grad,
                other_grad: s.other_grad,
            })?;
        }
        Ok((Table { slots }, tally.finish()?))
    }

    /// The first recorded output and g of `x`, if recorded.
    pub fn get(&self, x: u32) -> Option<(u32, Option<u32>)> {
        let s = self.slots.get(x as usize)?;
        (s.count > 0).then_some((s.first, s.grad))
    }
}
