//! The six hygiene checks.  Each compares the kernel against itself (never against the
//! reference): same input, same output, whatever n, position, alignment, thread or repetition;
//! nothing written outside y; x untouched; FP control state left alone.  Strided kernels get
//! five more (`strided.rs`): gaps, negative strides, the stride-0 broadcast, stride pairs against
//! the contiguous call, ragged n.

mod strided;

use super::protocol::{CallRequest, Layout};
use super::runner::{CallError, Runner};
use super::KernelRole;
use crate::format::{hex, Format};
use serde::Serialize;

/// One entry of a report's `hygiene` list.
#[derive(Clone, Debug, PartialEq, Eq, Serialize)]
pub struct HygieneCheck {
    /// `tail`, `alignment`, `bounds`, `input-untouched`, `fp-environment` or `determinism`;
    /// for strided kernels also `stride-gaps`, `stride-negative`, `stride-broadcast`,
    /// `stride-equivalence` or `stride-ragged`.
    pub check: &'static str,
    /// Whether the kernel passed; a check that could not run did not pass.
    pub passed: bool,
    /// What was tried, or the first n, offset or input where the failure shows.
    pub detail: String,
}

/// The check names, in report order.
pub const CHECKS: [&str; 6] = [
    "tail",
    "alignment",
    "bounds",
    "input-untouched",
    "fp-environment",
    "determinism",
];

pub use strided::STRIDED_CHECKS;

/// The checks a kernel of this signature gets, in report order.
fn names(strided: bool) -> Vec<&'static str> {
    let mut v = CHECKS.to_vec();
    if strided {
        v.extend(STRIDED_CHECKS);
    }
    v
}

/// Sizes tried by the tail and bounds checks: every n up to 129 (past a 128-wide block) and a
/// few around larger powers of two.
fn sizes() -> Vec<usize> {
    let mut v: Vec<usize> = (1..=129).collect();
    v.extend([200, 255, 256, 257, 511, 512, 513, 1000, 1024, 1025]);
    v
}

/// Inputs the kernel computed in the bulk run, with their bulk outputs.
struct Pool {
    first: Vec<u32>,
    second: Option<Vec<u32>>,
    expected: Vec<u32>,
}

/// A window of the pool: n consecutive entries from `start`, wrapping around.
struct Window {
    first: Vec<u32>,
    second: Option<Vec<u32>>,
    expected: Vec<u32>,
}

impl Pool {
    fn window(&self, start: usize, n: usize) -> Window {
        let len = self.first.len();
        let idx: Vec<usize> = (0..n).map(|i| (start + i) % len).collect();
        Window {
            first: idx.iter().map(|&i| self.first[i]).collect(),
            second: self
                .second
                .as_ref()
                .map(|g| idx.iter().map(|&i| g[i]).collect()),
            expected: idx.iter().map(|&i| self.expected[i]).collect(),
        }
    }
}

struct Ctx<'a> {
    runner: &'a mut Runner,
    pool: Pool,
    format: &'static dyn Format,
    /// The format of x and g (the output's unless the kernel mixes formats).
    in_format: &'static dyn Format,
    eb: usize,
    /// Name of the first input array in messages.
    first_name: &'static str,
    /// The strides the sweep calls with ((1, 1) for contiguous kernels).
    strides: (i32, i32),
}

impl Ctx<'_> {
    fn request(&self, w: &Window, layout: Layout) -> CallRequest {
        CallRequest {
            layout,
            x_offset: 0,
            y_offset: 0,
            threads: 1,
            reps: 1,
            first: w.first.clone(),
            second: w.second.clone(),
            strides: self.strides,
        }
    }
    fn hex(&self, bits: u32) -> String {
        hex(self.format, bits)
    }
    fn hex_in(&self, bits: u32) -> String {
        hex(self.in_format, bits)
    }
    /// "input 0x… gave 0x… but 0x… in the bulk run" for the first position that differs.
    fn mismatch(&self, w: &Window, got: &[u32], baseline: &str) -> Option<(usize, String)> {
        let i = got.iter().zip(&w.expected).position(|(a, b)| a != b)?;
        let input = match &w.second {
            Some(g) => format!(
                "input {}={} g={}",
                self.first_name,
                self.hex_in(w.first[i]),
                self.hex_in(g[i])
            ),
            None => format!("input {}", self.hex_in(w.first[i])),
        };
        Some((
            i,
            format!(
                "{input} gave {} but {} {baseline}",
                self.hex(got[i]),
                self.hex(w.expected[i])
            ),
        ))
    }
}

fn failed_to_run(e: &CallError, at: &str) -> String {
    match e {
        CallError::Crashed { signal, fault } => {
            // Only a real fault has an address; a raised signal has a sender instead.
            let addr = fault
                .filter(|f| f.faulted)
                .map_or(String::new(), |f| format!(" at address 0x{:x}", f.addr));
            format!("not passed: the kernel crashed ({signal}{addr}) at {at}")
        }
        CallError::OutOfMemory { .. } => format!("not passed: {} at {at}", e.label()),
        CallError::Hang => format!("not passed: the kernel hung at {at}"),
        CallError::Channel(_) => format!("not passed: {} at {at}", e.label()),
        CallError::Stopped(reason) => format!("could not run: {reason}"),
        CallError::Worker(m) => format!("could not run: worker error at {at}: {m}"),
    }
}

/// Runs the six checks (tail, alignment, bounds, input-untouched, fp-environment, determinism,
/// in that order) on a sample of inputs and g for gradient kernels; every entry is present
/// whatever happens.
pub fn run_checks(
    runner: &mut Runner,
    sample: &[u32],
    second: Option<&[u32]>,
) -> Vec<HygieneCheck> {
    let spec = runner.spec().clone();
    let is_strided = spec.signature != super::Signature::Contiguous;
    let checks = names(is_strided);
    let bulk = runner.run(sample, second);
    if let Some(reason) = runner.stopped() {
        let why = format!("could not run: {reason}");
        return checks
            .iter()
            .map(|&check| HygieneCheck {
                check,
                passed: false,
                detail: why.clone(),
            })
            .collect();
    }
    let keep: Vec<usize> = (0..sample.len())
        .filter(|&i| bulk.outputs[i].is_some())
        .collect();
    let note = if bulk.crashes.is_empty() {
        String::new()
    } else {
        format!(
            "; {} sample input(s) that crash or hang the kernel left out",
            bulk.crashes.len()
        )
    };
    let strides = runner.strides();
    // The six checks call at the sweep's strides; say so where they are not the only ones.
    let at_sweep = if is_strided {
        format!(
            "; called with strides ({},{}) as in the sweep",
            strides.0, strides.1
        )
    } else {
        String::new()
    };
    if keep.is_empty() {
        let why = if sample.is_empty() {
            "could not run: empty sample".to_string()
        } else if let Some(c) = bulk
            .crashes
            .first()
            .filter(|c| c.signal.starts_with("worker"))
        {
            format!("could not run: {}", c.signal)
        } else {
            "could not run: the kernel crashed or hung on every sample input".to_string()
        };
        return checks
            .iter()
            .map(|&check| HygieneCheck {
                check,
                passed: false,
                detail: why.clone(),
            })
            .collect();
    }
    let pool = Pool {
        first: keep.iter().map(|&i| sample[i]).collect(),
        second: second.map(|g| keep.iter().map(|&i| g[i]).collect()),
        expected: keep
            .iter()
            .map(|&i| bulk.outputs[i].expect("kept"))
            .collect(),
    };
    let eb = runner.elem_bytes();
    let mut ctx = Ctx {
        runner,
        pool,
        format: spec.format,
        in_format: spec.input_format,
        eb,
        first_name: if spec.role == (KernelRole::Gradient { from_output: true }) {
            "y"
        } else {
            "x"
        },
        strides,
    };
    let mut results = vec![
        tail(&mut ctx),
        alignment(&mut ctx),
        bounds(&mut ctx),
        input_untouched(&mut ctx, spec.in_place),
        fp_environment(&mut ctx),
        determinism(&mut ctx, spec.thread_safe),
    ];
    if is_strided {
        results.extend(strided::run(&mut ctx));
    }
    checks
        .iter()
        .zip(results)
        .enumerate()
        .map(|(k, (&check, (passed, detail)))| HygieneCheck {
            check,
            passed,
            detail: match (passed, k < CHECKS.len()) {
                (true, true) => detail + &note + &at_sweep,
                (true, false) => detail + &note,
                (false, _) => detail,
            },
        })
        .collect()
}

type Verdict = (bool, String);

fn tail(c: &mut Ctx) -> Verdict {
    let mut start = 0;
    let mut used = std::collections::HashSet::new();
    for n in sizes() {
        let w = c.pool.window(start, n);
        start += n;
        used.extend(w.first.iter().copied());
        let reply = match c.runner.call(&c.request(&w, Layout::Padded)) {
            Ok(r) => r,
            Err(e) => return (false, failed_to_run(&e, &format!("n={n}"))),
        };
        if let Some((i, what)) = c.mismatch(&w, &reply.outputs[0], "in the bulk run") {
            return (false, format!("n={n}, position {i}: {what}"));
        }
    }
    (
        true,
        format!(
            "same outputs as the bulk run for every n from 1 to 129 and 10 larger n, at every position ({} distinct inputs)",
            used.len()
        ),
    )
}

fn alignment(c: &mut Ctx) -> Verdict {
    // Baseline: the same window at offset 0, so that a tail defect does not show up here.
    let n = 67;
    let mut tried = 0;
    for (k, off) in (0..64).step_by(c.eb).enumerate() {
        let mut w = c.pool.window(k * n, n);
        match c.runner.call(&c.request(&w, Layout::Padded)) {
            Ok(r) => w.expected = r.outputs[0].clone(),
            Err(e) => {
                return (
                    false,
                    failed_to_run(&e, &format!("aligned buffers (n={n})")),
                )
            }
        }
        for (xo, yo) in [(off, off), (off, 0), (0, off)] {
            if off == 0 && xo + yo > 0 {
                continue;
            }
            let mut req = c.request(&w, Layout::Padded);
            req.x_offset = xo as u32;
            req.y_offset = yo as u32;
            let at = format!("x at byte offset {xo}, y at byte offset {yo} (n={n})");
            let reply = match c.runner.call(&req) {
                Ok(r) => r,
                Err(e) => return (false, failed_to_run(&e, &at)),
            };
            tried += 1;
            if let Some((i, what)) =
                c.mismatch(&w, &reply.outputs[0], "with 64-byte-aligned buffers")
            {
                return (false, format!("{at}, position {i}: {what}"));
            }
        }
    }
    (
        true,
        format!(
            "same outputs with x and y at every {}-byte-aligned offset 0..63 ({tried} placements)",
            c.eb
        ),
    )
}

fn bounds(c: &mut Ctx) -> Verdict {
    let mut start = 0;
    for n in sizes() {
        for layout in [Layout::GuardAfter, Layout::GuardBefore] {
            let w = c.pool.window(start, n);
            start += n;
            let ob = c.format.width().div_ceil(8) as usize;
            let n_bytes = (n * ob) as i64;
            let place = |off: i64, what: &str| {
                if c.strides.1 == 1 {
                    outside(off, n_bytes, what)
                } else {
                    format!(
                        "a write at byte offset {off} from y[0] ({}) {what}",
                        super::stride::where_in(off, n, ob, c.strides.1)
                    )
                }
            };
            match c.runner.call(&c.request(&w, layout)) {
                Ok(reply) => {
                    if let Some(off) = reply.canary {
                        return (
                            false,
                            format!("n={n}: {}", place(off, "overwrote a canary byte")),
                        );
                    }
                }
                Err(CallError::Crashed { fault: Some(f), .. }) if f.in_guard && f.y_base != 0 => {
                    let off = f.addr as i64 - f.y_base as i64;
                    return (
                        false,
                        format!("n={n}: {}", place(off, "touched the guard page")),
                    );
                }
                Err(e) => return (false, failed_to_run(&e, &format!("n={n}"))),
            }
        }
    }
    (
        true,
        "nothing written outside y[0..n) for every n from 1 to 129 and 10 larger n (guard pages after and before y, canaries on the other side)".to_string(),
    )
}

/// Where byte offset `off` from y[0] lies relative to y[0..n).
fn outside(off: i64, n_bytes: i64, what: &str) -> String {
    if off >= n_bytes {
        format!(
            "a write at byte offset {off} from y[0] ({} bytes past the end of y[0..n)) {what}",
            off - n_bytes
        )
    } else if off < 0 {
        format!(
            "a write at byte offset {off} from y[0] ({} bytes before y[0]) {what}",
            -off
        )
    } else {
        format!("an access at byte offset {off} from y[0] {what}")
    }
}

fn input_untouched(c: &mut Ctx, in_place: bool) -> Verdict {
    let mut ns: Vec<usize> = (1..=33).collect();
    ns.extend([64, 129, 1000]);
    let mut start = 0;
    for &n in &ns {
        let mut w = c.pool.window(start, n);
        start += n;
        let layout = if in_place {
            Layout::InPlace
        } else {
            Layout::Padded
        };
        if in_place {
            // Baseline: the same window out of place.
            match c.runner.call(&c.request(&w, Layout::Padded)) {
                Ok(r) => w.expected = r.outputs[0].clone(),
                Err(e) => return (false, failed_to_run(&e, &format!("n={n}"))),
            }
        }
        let reply = match c.runner.call(&c.request(&w, layout)) {
            Ok(r) => r,
            Err(e) => return (false, failed_to_run(&e, &format!("n={n}"))),
        };
        if in_place {
            if let Some((i, what)) = c.mismatch(&w, &reply.outputs[0], "out of place") {
                return (
                    false,
                    format!("in-place call (y == x), n={n}, position {i}: {what}"),
                );
            }
        } else if let Some((which, i, now)) = reply.input_changed {
            let (name, arr) = if which == 0 {
                (c.first_name, &w.first)
            } else {
                ("g", w.second.as_ref().unwrap_or(&w.first))
            };
            return (
                false,
                format!(
                    "n={n}: {name}[{i}] changed from {} to {}",
                    c.hex_in(arr[i as usize]),
                    c.hex_in(now)
                ),
            );
        }
    }
    if in_place {
        (
            true,
            "in-place declared: x may be overwritten; calls with y == x give the out-of-place results".to_string(),
        )
    } else {
        (
            true,
            "inputs unchanged after calls with n = 1..33, 64, 129, 1000".to_string(),
        )
    }
}

fn fp_environment(c: &mut Ctx) -> Verdict {
    use super::fpenv::{control_bits, describe_change};
    let Some((before, after)) = c.runner.load_env else {
        return (
            false,
            format!(
                "could not run: ulpgauge cannot read the FP control register on {}",
                std::env::consts::ARCH
            ),
        );
    };
    if control_bits(before) != control_bits(after) {
        return (
            false,
            format!(
                "loading the library changed it: {}",
                describe_change(before, after)
            ),
        );
    }
    // One more call, so the verdict never rests on zero calls.
    let w = c.pool.window(0, 64);
    if let Err(e) = c.runner.call(&c.request(&w, Layout::Padded)) {
        return (false, failed_to_run(&e, "n=64"));
    }
    if let Some((n, b, a)) = c.runner.call_env_change {
        return (
            false,
            format!("a call with n={n} changed it: {}", describe_change(b, a)),
        );
    }
    (
        true,
        format!("control word 0x{before:04x} unchanged by loading the library and by every call"),
    )
}

/// Elements per call that keep a call of `reps` repetitions near a tenth of a second at the
/// kernel's measured pace, between `least` and `most`: a slow kernel gets smaller calls, never
/// a deadline it cannot meet.
fn paced(c: &Ctx, most: usize, least: usize, reps: usize) -> usize {
    match c.runner.pace() {
        Some(p) if p > 0.0 => ((0.1 / (p * reps as f64)) as usize).clamp(least, most),
        _ => most,
    }
}

fn determinism(c: &mut Ctx, thread_safe: bool) -> Verdict {
    let n = paced(c, 1024, 64, 4);
    let w = c.pool.window(7, n);
    let mut req = c.request(&w, Layout::Padded);
    req.reps = 4;
    let reply = match c.runner.call(&req) {
        Ok(r) => r,
        Err(e) => return (false, failed_to_run(&e, &format!("repeated calls, n={n}"))),
    };
    let first = Window {
        expected: reply.outputs[0].clone(),
        first: w.first.clone(),
        second: w.second.clone(),
    };
    for (k, out) in reply.outputs.iter().enumerate().skip(1) {
        if let Some((i, what)) = c.mismatch(&first, out, "in the first call") {
            return (
                false,
                format!(
                    "repeated calls differ: call {}, n={n}, position {i}: {what}",
                    k + 1
                ),
            );
        }
    }
    if !thread_safe {
        return (
            true,
            format!(
                "{} repeated calls agree; threads not tried (declared not thread-safe)",
                req.reps
            ),
        );
    }
    // Each thread gets its own slice; the baseline is each slice called alone.
    let threads = 4;
    let reps = 16;
    let m = paced(c, 4096, 16, threads * reps);
    let w = c.pool.window(11, threads * m);
    let mut alone = Vec::with_capacity(threads * m);
    for k in 0..threads {
        let part = Window {
            first: w.first[k * m..(k + 1) * m].to_vec(),
            second: w.second.as_ref().map(|g| g[k * m..(k + 1) * m].to_vec()),
            expected: Vec::new(),
        };
        match c.runner.call(&c.request(&part, Layout::Padded)) {
            Ok(r) => alone.extend_from_slice(&r.outputs[0]),
            Err(e) => return (false, failed_to_run(&e, &format!("n={m}"))),
        }
    }
    let baseline = Window {
        expected: alone,
        first: w.first.clone(),
        second: w.second.clone(),
    };
    // Races show only when threads really overlap, which a loaded machine makes rarer: keep
    // trying for a while (at least 3 rounds, at most 64 or about half a second).
    let (min_rounds, max_rounds) = (3, 64);
    let budget = std::time::Duration::from_millis(500);
    let started = std::time::Instant::now();
    let mut rounds = 0;
    for round in 0..max_rounds {
        if round >= min_rounds && started.elapsed() > budget {
            break;
        }
        rounds = round + 1;
        let mut req = c.request(&w, Layout::Padded);
        req.threads = threads as u32;
        req.reps = reps as u32;
        let reply = match c.runner.call(&req) {
            Ok(r) => r,
            Err(e) => {
                return (
                    false,
                    failed_to_run(&e, &format!("{threads} concurrent threads")),
                )
            }
        };
        for (rep, out) in reply.outputs.iter().enumerate() {
            if let Some((i, what)) = c.mismatch(&baseline, out, "when called alone") {
                return (
                    false,
                    format!(
                        "concurrent calls differ: thread {} of {threads}, round {}, call {}, position {}: {what}",
                        i / m + 1,
                        round + 1,
                        rep + 1,
                        i % m
                    ),
                );
            }
        }
    }
    (
        true,
        format!(
            "4 repeated calls agree; {threads} threads × {reps} calls × {rounds} rounds on {m} inputs each agree with lone calls"
        ),
    )
}
