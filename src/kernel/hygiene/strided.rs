//! The five checks of strided kernels.  Each calls the kernel at some stride pairs and compares
//! with the contiguous call (strides 1,1) on the same inputs: the outputs must agree element by
//! element, no byte of y outside its elements may change (the worker fills y's gaps and a page
//! on either side with canary bytes), and no element of x may change.  x's gaps and a page on
//! either side hold the format's NaN, so a kernel that reads one instead of an element is seen
//! in its output.

use super::{failed_to_run, Ctx, Pool, Verdict, Window};
use crate::format::Class;
use crate::kernel::protocol::Layout;
use crate::kernel::stride::where_in;

/// The check names, in report order (after the six of every kernel).
pub const STRIDED_CHECKS: [&str; 5] = [
    "stride-gaps",
    "stride-negative",
    "stride-broadcast",
    "stride-equivalence",
    "stride-ragged",
];

/// Runs the five checks in [`STRIDED_CHECKS`] order, on inputs whose bulk outputs differ from
/// each other (a sweep in bit order starts with long runs of equal outputs, which would hide a
/// kernel that reads the neighbouring element).
pub(super) fn run(c: &mut Ctx) -> Vec<Verdict> {
    // NaN stays out too: a NaN read from a gap must not look like a neighbour's result.
    let nan = |b: u32| c.format.classify(b) == Class::Nan;
    let mut seen = std::collections::HashSet::new();
    let keep: Vec<usize> = (0..c.pool.first.len())
        .filter(|&i| !nan(c.pool.first[i]) && !nan(c.pool.expected[i]))
        .filter(|&i| seen.insert(c.pool.expected[i]))
        .collect();
    if keep.len() > 1 {
        c.pool = Pool {
            first: keep.iter().map(|&i| c.pool.first[i]).collect(),
            second: None,
            expected: keep.iter().map(|&i| c.pool.expected[i]).collect(),
        };
    }
    run_all(c)
}

fn run_all(c: &mut Ctx) -> Vec<Verdict> {
    let some_n = [1, 2, 3, 5, 8, 17, 64, 67];
    let every_n: Vec<usize> = (1..=33).chain([63, 64, 65, 127, 128, 129]).collect();
    vec![
        pairs(
            c,
            &[(1, 2), (2, 3), (3, -2), (-2, -4), (1, 7)],
            &some_n,
            "no gap between y's elements and no byte past either end of its span written",
        ),
        pairs(
            c,
            &[(-1, 1), (1, -1), (-1, -1), (-2, -3), (-3, 2)],
            &[1, 2, 5, 16, 67],
            "negative strides (x[0] and y[0] at the top of their spans) give the contiguous outputs",
        ),
        pairs(
            c,
            &[(0, 1), (0, 2), (0, -1)],
            &[1, 4, 33, 67],
            "x stride 0 gives f(x[0]) in every y",
        ),
        pairs(
            c,
            &[(2, 1), (1, 3), (-1, 1), (3, -2)],
            &[64, 67, 256, 1000],
            "outputs equal the contiguous call's",
        ),
        pairs(
            c,
            &[(2, 3), (-1, 2)],
            &every_n,
            "outputs equal the contiguous call's for every n from 1 to 33 and around 64 and 128",
        ),
    ]
}

/// Calls every pair at every n and compares with the contiguous call on the same window.
fn pairs(c: &mut Ctx, strides: &[(i32, i32)], ns: &[usize], claim: &str) -> Verdict {
    let mut calls = 0;
    let mut start = 3;
    for &n in ns {
        let w = c.pool.window(start, n);
        start += n;
        let mut base = c.request(&w, Layout::Padded);
        base.strides = (1, 1);
        let base = match c.runner.call(&base) {
            Ok(r) => r.outputs[0].clone(),
            Err(e) => return (false, failed_to_run(&e, &format!("strides (1,1), n={n}"))),
        };
        for &(sx, sy) in strides {
            let at = format!("strides ({sx},{sy}), n={n}");
            let mut req = c.request(&w, Layout::Padded);
            req.strides = (sx, sy);
            let reply = match c.runner.call(&req) {
                Ok(r) => r,
                Err(e) => return (false, failed_to_run(&e, &at)),
            };
            calls += 1;
            if let Some(off) = reply.canary {
                return (
                    false,
                    format!(
                        "{at}: a write at byte offset {off} from y[0] ({}) overwrote a canary byte",
                        where_in(off, n, c.eb, sy)
                    ),
                );
            }
            let got = &reply.outputs[0];
            if let Some(i) = (0..n).find(|&i| got[i] != expected(&base, sx, i)) {
                return (
                    false,
                    format!("{at}, element {i}: {}", c.wrong(&w, &base, got, sx, i)),
                );
            }
            if let Some((_, i, now)) = reply.input_changed {
                return (
                    false,
                    format!(
                        "{at}: x[{i}] changed from {} to {}",
                        c.hex(w.first[i as usize]),
                        c.hex(now)
                    ),
                );
            }
        }
    }
    let list: Vec<String> = strides.iter().map(|(a, b)| format!("({a},{b})")).collect();
    (
        true,
        format!(
            "{claim}: strides {} at n = {} ({calls} calls)",
            list.join(", "),
            shown_ns(ns)
        ),
    )
}

/// The contiguous output element i must equal: x[0]'s for x stride 0.
fn expected(base: &[u32], sx: i32, i: usize) -> u32 {
    if sx == 0 {
        base[0]
    } else {
        base[i]
    }
}

/// "1..33, 63, 64" for a list of sizes.
fn shown_ns(ns: &[usize]) -> String {
    let run = ns.iter().take_while(|&&n| n <= ns[0] + 32).count();
    if run > 3 && ns[..run].windows(2).all(|p| p[1] == p[0] + 1) {
        let rest: Vec<String> = ns[run..].iter().map(|n| n.to_string()).collect();
        let head = format!("{}..{}", ns[0], ns[run - 1]);
        return std::iter::once(head)
            .chain(rest)
            .collect::<Vec<_>>()
            .join(", ");
    }
    ns.iter()
        .map(|n| n.to_string())
        .collect::<Vec<_>>()
        .join(", ")
}

impl Ctx<'_> {
    /// What is wrong with element i: its value against the contiguous call's, and which
    /// element the kernel seems to have read instead.
    fn wrong(&self, w: &Window, base: &[u32], got: &[u32], sx: i32, i: usize) -> String {
        let want = expected(base, sx, i);
        let source = if sx == 0 { 0 } else { i };
        let head = format!(
            "y[{i}] is {} but the contiguous call gives {} for x[{source}] = {}",
            self.hex(got[i]),
            self.hex(want),
            self.hex(w.first[source])
        );
        // A neighbouring element whose contiguous result is what came out: read instead.
        let near = (1..=4usize)
            .flat_map(|d| [i.checked_add(d), i.checked_sub(d)])
            .flatten()
            .filter(|&j| j < base.len() && j != source && base[j] != want)
            .find(|&j| base[j] == got[i]);
        let nan = |b: u32| self.format.classify(b) == Class::Nan;
        if nan(got[i]) && !nan(want) {
            format!("{head}: NaN, so a gap of x or a place past its ends was read (ulpgauge fills them with NaN)")
        } else if let Some(j) = near {
            format!("{head}: wrong element read (x[{j}]'s result)")
        } else if got[i] == 0xa5a5_a5a5 >> (32 - 8 * self.eb as u32) {
            format!("{head}: the canary ulpgauge put there, so y[{i}] was not written")
        } else {
            head
        }
    }
}
