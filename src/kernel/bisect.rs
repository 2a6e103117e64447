//! Running many inputs through the kernel in batches, splitting a failing batch down to the
//! input that fails, and knowing when to stop.
//!
//! Batches are sized by the kernel's measured pace (a small first batch measures it), and each
//! call's deadline follows from that pace ([`Runner::deadline`]), so a hang costs seconds, not a
//! whole `--timeout` per step.  A failing batch is split in [`SPLIT`] parts, not two: each step
//! that fails costs a deadline, and eight-way splits need a third of the steps.  The input a
//! split ends on is called again alone in a fresh worker before it is named; if it returns
//! there, the failure depends on what the worker did before, and the record names the batch.
//!
//! Every failed call (crash, hang, a reply the kernel forged) ends its worker, so bisection
//! costs a worker start per failure.  Two limits bound that cost ([`RunnerOptions`]): the
//! number of failed calls and the time they took.  A kernel that fails on every call is caught
//! long before either: once the first calls have all failed (a few in a row, or one hang), a
//! few single inputs spread over the batch are tried in fresh workers, and if none returns
//! either the runner stops, naming the failure "on every call".  Once stopped, the runner calls
//! the kernel no more: later inputs get no output and no crash record, so what the caller keeps
//! stays bounded whatever the kernel does.

use super::runner::{CallError, CrashRecord, RunOutcome, Runner, RunnerOptions};
use std::time::Duration;

/// Failed calls in a row, with none returned yet, that make the runner ask whether every call
/// fails.
const EVERY_CALL_STREAK: u32 = 8;
/// Hangs in a row (each costs a whole timeout while no call has returned) that do the same.
const EVERY_CALL_HANGS: u32 = 1;
/// Single inputs, spread over the batch, tried to answer it.
const EVERY_CALL_SAMPLES: usize = 3;
/// The same after a hang, where each costs a whole timeout: one of each sign.
const EVERY_CALL_HANG_SAMPLES: usize = 2;
/// Parts a failing batch is split into.
pub const SPLIT: usize = 8;
/// Elements of the first batch while the kernel's pace is unknown.
const CALIBRATION: usize = 256;

/// Largest `--max-restarts`: the crash records a runner keeps grow with it.
pub const MAX_RESTARTS_LIMIT: u64 = 1_000_000;
/// Largest `--max-fault-time`, in seconds (a day).
pub const MAX_FAULT_TIME_LIMIT: f64 = 86_400.0;

/// Validates `--max-restarts` and `--max-fault-time` (seconds); the error is one line.
pub fn fault_limits(max_restarts: u64, max_fault_time: f64) -> Result<(u64, Duration), String> {
    if max_restarts > MAX_RESTARTS_LIMIT {
        return Err(format!(
            "--max-restarts must be at most {MAX_RESTARTS_LIMIT}, got {max_restarts}"
        ));
    }
    if !(max_fault_time.is_finite()
        && max_fault_time > 0.0
        && max_fault_time <= MAX_FAULT_TIME_LIMIT)
    {
        return Err(format!(
            "--max-fault-time must be a number of seconds above 0 and at most \
             {MAX_FAULT_TIME_LIMIT}, got {max_fault_time}"
        ));
    }
    Ok((max_restarts, Duration::from_secs_f64(max_fault_time)))
}

/// Validates a per-batch timeout in seconds (`--timeout`, a spec's `kernel.timeout`): above 0
/// and at most a day, so that it is a valid duration; `what` names the option in the error.
pub fn batch_timeout(seconds: f64, what: &str) -> Result<Duration, String> {
    if !(seconds.is_finite() && seconds > 0.0 && seconds <= MAX_FAULT_TIME_LIMIT) {
        return Err(format!(
            "{what} must be a number of seconds above 0 and at most {MAX_FAULT_TIME_LIMIT}, \
             got {}",
            short_number(seconds)
        ));
    }
    Ok(Duration::from_secs_f64(seconds))
}

/// A number as a one-line error shows it: plain when it is moderate, in exponent form otherwise
/// (so that `1e300` is not printed with its 301 digits).
fn short_number(x: f64) -> String {
    if x.is_finite() && x != 0.0 && !(1e-4..1e9).contains(&x.abs()) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// Inputs pinned alone in a fresh worker that are remembered (and not called again).
const PINNED_KEPT: usize = 1024;

impl Runner {
    /// Remembers an input that failed alone in a fresh worker, up to [`PINNED_KEPT`] of them.
    fn remember(&mut self, first: u32, second: Option<u32>, label: String) {
        if self.pinned.len() < PINNED_KEPT {
            self.pinned.insert((first, second), label);
        }
    }
}

/// Calls that failed, the time they took, and whether the runner stopped.
#[derive(Debug, Default)]
pub(crate) struct Faults {
    /// Calls that returned.
    ok: u64,
    /// Calls that failed; each ended its worker.
    failed: u64,
    /// Failed calls since the last call that returned.
    streak: u32,
    /// Hangs since the last call that returned.
    streak_hangs: u32,
    /// Time spent in calls that failed.
    time: Duration,
    /// Whether the every-call question was asked.
    asked: bool,
    /// Why the runner stopped calling the kernel.
    pub(crate) stopped: Option<String>,
}

impl Faults {
    /// A call returned.
    pub(crate) fn succeeded(&mut self) {
        self.ok += 1;
        self.streak = 0;
        self.streak_hangs = 0;
    }

    /// A call failed with `e` after `took`; stops the runner once a limit is passed.
    pub(crate) fn failed(&mut self, e: &CallError, took: Duration, options: &RunnerOptions) {
        self.failed += 1;
        self.streak += 1;
        self.streak_hangs += u32::from(matches!(e, CallError::Hang));
        self.time += took;
        if self.stopped.is_some() {
            return;
        }
        if self.failed > options.max_restarts {
            self.stopped = Some(format!(
                "{}; gave up after {} failed calls, each ending its worker (--max-restarts {})",
                e.label(),
                self.failed,
                options.max_restarts
            ));
        } else if self.time >= options.max_fault_time {
            self.stopped = Some(format!(
                "{}; gave up after {:.1} s spent in calls that crashed or hung \
                 (--max-fault-time {})",
                e.label(),
                self.time.as_secs_f64(),
                options.max_fault_time.as_secs_f64()
            ));
        }
    }

    /// Whether no call has returned yet and the every-call question was not asked.
    fn nothing_returned(&self) -> bool {
        !self.asked && self.ok == 0
    }

    /// Whether the calls so far look like a kernel that fails on every call.
    fn every_call_suspected(&self) -> bool {
        !self.asked
            && self.ok == 0
            && (self.streak >= EVERY_CALL_STREAK || self.streak_hangs >= EVERY_CALL_HANGS)
    }
}

/// Calls each worker takes per shared round at most (so a long run is not copied into the
/// partners' queues all at once).
const SHARED_ROUNDS: usize = 4;

impl Runner {
    /// Calls the kernel on `first` (x, or y for from-output gradient kernels) and optional
    /// `second` (g), in batches.
    pub fn run(&mut self, first: &[u32], second: Option<&[u32]>) -> RunOutcome {
        let mut outcome = RunOutcome {
            outputs: vec![None; first.len()],
            crashes: Vec::new(),
        };
        if second.is_some_and(|s| s.len() != first.len()) || second.is_none() == self.gradient() {
            outcome.crashes.push(CrashRecord {
                input: first.first().copied().unwrap_or(0),
                index: 0,
                signal: "worker error: gradient kernels take x and g of equal length".into(),
            });
            return outcome;
        }
        let mut stop = self.faults.stopped.is_some();
        let mut lo = 0;
        while lo < first.len() && !stop {
            let key = (first[lo], second.map(|s| s[lo]));
            if let Some(label) = self.pinned.get(&key).cloned() {
                // Pinned before, alone in a fresh worker: not called again.
                let record = CrashRecord {
                    input: first[lo],
                    index: lo,
                    signal: label,
                };
                self.record(record, &mut outcome, &mut stop);
                lo += 1;
                continue;
            }
            let size = match self.pace() {
                None => CALIBRATION.min(self.options.batch_size),
                Some(_) => self.elements_for(self.options.batch_size, 1),
            };
            let mut hi = (lo + size).min(first.len());
            if !self.pinned.is_empty() {
                hi = (lo + 1..hi)
                    .find(|&i| self.pinned.contains_key(&(first[i], second.map(|s| s[i]))))
                    .unwrap_or(hi);
            }
            if let Some(end) = self.run_shared(lo, size, first, second, &mut outcome, &mut stop) {
                lo = end;
                continue;
            }
            self.run_range(lo, hi, (lo, hi), first, second, &mut outcome, &mut stop);
            lo = hi;
        }
        outcome
    }

    /// Calls the kernel on the calls of `size` inputs from `lo` (at most [`SHARED_ROUNDS`]
    /// per worker) in `workers` worker processes at once: call k goes to worker k mod
    /// `workers`, this runner's own worker being 0; each partner's calls queue in its thread
    /// and run one after the other without waiting for this one.  Returns where the run
    /// continues, or `None` when the calls are not to be shared (one worker, a pace not yet
    /// known, a failure seen, pinned inputs, `--stop-on-crash`, or inputs for one call only).
    /// A share whose partner fails is run again here, split as [`Self::run_range`] splits, and
    /// partners end.
    fn run_shared(
        &mut self,
        lo: usize,
        size: usize,
        first: &[u32],
        second: Option<&[u32]>,
        outcome: &mut RunOutcome,
        stop: &mut bool,
    ) -> Option<usize> {
        let healthy = self.faults.failed == 0 && self.faults.stopped.is_none();
        if self.options.workers < 2
            || self.partners_ended
            || self.options.stop_on_crash
            || !healthy
            || !self.pinned.is_empty()
            || self.pace().is_none()
        {
            return None;
        }
        // Shares are the calls one worker would make one after the other (`size` inputs
        // each), so a kernel whose outputs depend on where a call starts or ends (a ragged
        // tail) gives the same outputs whatever the number of workers.
        let size = size.max(1);
        let span = (first.len() - lo).min(SHARED_ROUNDS * self.options.workers * size);
        let shares = span.div_ceil(size);
        if shares < 2 {
            return None;
        }
        let workers = self.options.workers.min(shares);
        let bound = |k: usize| (lo + k * size).min(lo + span);
        while self.partners.len() < workers - 1 {
            let partner = super::partner::Partner::start(self.spec(), &self.options);
            self.partners.push(partner);
        }
        // Every partner's calls are queued first, so that each runs its next call as soon as
        // the last returns, while this runner makes its own.
        let mut sent = vec![false; shares];
        for (k, slot) in sent
            .iter_mut()
            .enumerate()
            .filter(|(k, _)| k % workers != 0)
        {
            let (a, b) = (bound(k), bound(k + 1));
            *slot = self.partners[k % workers - 1].send(&first[a..b], second.map(|s| &s[a..b]));
        }
        for k in (0..shares).step_by(workers) {
            let (a, b) = (bound(k), bound(k + 1));
            self.run_range(a, b, (a, b), first, second, outcome, stop);
        }
        let mut again = Vec::new();
        // Each partner answers its calls in the order they were sent.
        for k in (0..shares).filter(|k| k % workers != 0) {
            let (a, b) = (bound(k), bound(k + 1));
            let w = k % workers - 1;
            let (result, change) = if sent[k] {
                self.partners[w].receive()
            } else {
                (Err(CallError::Worker("no partner".into())), None)
            };
            if self.call_env_change.is_none() {
                self.call_env_change = change;
            }
            match result {
                Ok(ys) => {
                    self.shared_calls += 1;
                    for (slot, &y) in outcome.outputs[a..b].iter_mut().zip(&ys) {
                        *slot = Some(y);
                    }
                    self.partners[w].recycle(ys);
                }
                Err(_) => again.push((a, b)),
            }
        }
        if !again.is_empty() {
            self.partners_ended = true;
            self.partners.clear();
            for (a, b) in again {
                self.run_range(a, b, (a, b), first, second, outcome, stop);
            }
        }
        Some(bound(shares))
    }

    /// Calls the kernel on `lo..hi`, part of the batch `root` as first sent, splitting it when
    /// the call fails.
    #[allow(clippy::too_many_arguments)]
    fn run_range(
        &mut self,
        lo: usize,
        hi: usize,
        root: (usize, usize),
        first: &[u32],
        second: Option<&[u32]>,
        outcome: &mut RunOutcome,
        stop: &mut bool,
    ) {
        if *stop || lo >= hi {
            return;
        }
        let mut ys = std::mem::take(&mut self.spare);
        let called = self.call_plain_into(&first[lo..hi], second.map(|s| &s[lo..hi]), &mut ys);
        if called.is_ok() {
            for (slot, &y) in outcome.outputs[lo..hi].iter_mut().zip(&ys) {
                *slot = Some(y);
            }
        }
        self.spare = ys;
        match called {
            Ok(()) => {}
            Err(CallError::Worker(message)) => {
                // Not the kernel's doing: bisecting would only start more failing workers.
                outcome.crashes.push(CrashRecord {
                    input: first[lo],
                    index: lo,
                    signal: format!("worker error: {message}"),
                });
                *stop = true;
            }
            // Recorded where the runner stopped.
            Err(CallError::Stopped(_)) => *stop = true,
            Err(e) => {
                // A split reaches a single input in a few steps: with nothing returned yet,
                // ask before pinning anything.
                if self.faults.every_call_suspected()
                    || (hi - lo == 1 && self.faults.nothing_returned())
                {
                    self.ask_every_call(first, second, &e);
                }
                if let Some(reason) = &self.faults.stopped {
                    outcome.crashes.push(CrashRecord {
                        input: first[lo],
                        index: lo,
                        signal: reason.clone(),
                    });
                    *stop = true;
                } else if hi - lo == 1 {
                    if let Some(record) = self.name_alone(lo, root, first, second, &e, outcome) {
                        self.record(record, outcome, stop);
                    }
                } else {
                    let failed = self.faults.failed;
                    let parts = SPLIT.min(hi - lo);
                    for k in 0..parts {
                        let a = lo + (hi - lo) * k / parts;
                        let b = lo + (hi - lo) * (k + 1) / parts;
                        self.run_range(a, b, root, first, second, outcome, stop);
                    }
                    // Every part returned: what failed was the call history, not an input.  A
                    // hang is not named so: its deadline came from the pace, which a batch
                    // slower than the ones before can overrun.
                    if self.faults.failed == failed && !*stop && !matches!(e, CallError::Hang) {
                        let record = self.history(&e, root, first);
                        self.record(record, outcome, stop);
                    }
                }
            }
        }
    }

    /// Keeps a crash record (a batch whose failures depend on call history once), and stops
    /// there under `--stop-on-crash`.
    fn record(&mut self, record: CrashRecord, outcome: &mut RunOutcome, stop: &mut bool) {
        let label = record.signal.clone();
        if outcome.crashes.last() != Some(&record) {
            outcome.crashes.push(record);
        }
        if self.faults.stopped.is_none() && self.options.stop_on_crash {
            self.faults.stopped = Some(format!("{label}; stopped there (--stop-on-crash)"));
        }
        *stop |= self.faults.stopped.is_some();
    }

    /// The record of a failure `e` that did not come back when the inputs of the batch `root`
    /// were called again in a fresh worker: it names the batch.
    fn history(&self, e: &CallError, root: (usize, usize), first: &[u32]) -> CrashRecord {
        let format = self.spec().format;
        let hex = |b: u32| crate::format::hex(format, b);
        CrashRecord {
            input: first[root.0],
            index: root.0,
            signal: format!(
                "{} depends on call history: it came in the batch of {} inputs from {} to {}, \
                 whose inputs returned when called again from a fresh worker",
                e.label(),
                root.1 - root.0,
                hex(first[root.0]),
                hex(first[root.1 - 1]),
            ),
        }
    }

    /// Names the failure `e` of the single input `i`, called again alone in a fresh worker
    /// unless the failed call was its worker's first already: the same failure is pinned to
    /// the input; a return means the failure depends on the worker's earlier calls, and the
    /// record names the batch `root` instead (the output from the fresh worker is kept), and a
    /// hang that does not come back is no record at all (its deadline was the pace's guess).
    fn name_alone(
        &mut self,
        i: usize,
        root: (usize, usize),
        first: &[u32],
        second: Option<&[u32]>,
        e: &CallError,
        outcome: &mut RunOutcome,
    ) -> Option<CrashRecord> {
        let pinned = |signal: String| CrashRecord {
            input: first[i],
            index: i,
            signal,
        };
        if self.last_call_fresh {
            self.remember(first[i], second.map(|s| s[i]), e.label());
            return Some(pinned(e.label()));
        }
        match self.call_plain(&first[i..=i], second.map(|s| &s[i..=i])) {
            Ok(y) => {
                outcome.outputs[i] = y.first().copied();
                if matches!(e, CallError::Hang) {
                    return None;
                }
                Some(self.history(e, root, first))
            }
            Err(CallError::Stopped(reason)) => Some(pinned(reason)),
            Err(again) => {
                self.remember(first[i], second.map(|s| s[i]), again.label());
                Some(pinned(again.label()))
            }
        }
    }

    /// Tries a few single inputs spread over `first` in fresh workers, the middle one with its
    /// sign flipped (a run's inputs often share a sign, a kernel's failures often follow it);
    /// when none returns, the kernel fails on every call and the runner stops.  Their outputs
    /// are not kept: each input is called again in its own batch.
    fn ask_every_call(&mut self, first: &[u32], second: Option<&[u32]>, e: &CallError) {
        self.faults.asked = true;
        let len = first.len();
        let sign = 1u32 << (self.spec().format.width() - 1);
        let samples = if matches!(e, CallError::Hang) {
            EVERY_CALL_HANG_SAMPLES
        } else {
            EVERY_CALL_SAMPLES
        };
        let mut picks: Vec<usize> = (0..samples)
            .map(|k| (2 * k + 1) * len / (2 * samples))
            .collect();
        picks.dedup();
        for (k, &i) in picks.iter().enumerate() {
            let x = if k == samples / 2 {
                first[i] ^ sign
            } else {
                first[i]
            };
            match self.call_plain(&[x], second.map(|s| &s[i..=i])) {
                Ok(_) | Err(CallError::Worker(_) | CallError::Stopped(_)) => return,
                Err(_) => {}
            }
        }
        if self.faults.stopped.is_none() {
            self.faults.stopped = Some(format!(
                "{} on every call ({} calls tried, whole batches and single inputs of both \
                 signs spread over them; none returned)",
                e.label(),
                self.faults.failed
            ));
        }
    }
}
