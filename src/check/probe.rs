//! Evaluating inputs: references in parallel (rayon), kernel calls in batches, crashes kept.

use super::kernel::{KernelCrash, KernelOutput, KernelUnderTest};
use super::CheckRole;
use crate::format::{ExactValue, Format};
use crate::measure::{ExactSpan, Point, Probe, Uniform};
use crate::reference::fast::{FastEvaluator, ScaledSpan};
use crate::reference::{floor_log2_rational, round_rational, Evaluator, Reference};
use crate::sweep::Rng;
use rayon::prelude::*;
use rug::Rational;
use std::io::IsTerminal;

/// A batch still running after this long shows a progress bar (when stderr is a terminal).
const PROGRESS_AFTER: std::time::Duration = std::time::Duration::from_secs(1);
/// Inputs per batch handed to the kernel: four of the runner's default calls, so that worker
/// processes sharing a batch (`--kernel-workers`) each get a whole call.
const CHUNK: usize = 4 * 65_536;

/// The references of one role: forward, derivative, gradient (g·f′ with seeded g).
pub struct RoleReferences {
    /// f.
    pub forward: Evaluator<'static>,
    /// f′.
    pub derivative: Evaluator<'static>,
    /// What the kernel computes.
    pub role: CheckRole,
    /// Seed of the gradient factors.
    pub seed: u64,
    /// Kinks of f′: input value and left-hand derivative.
    pub kinks: Vec<(f64, Rational)>,
    /// Fast paths for f and f′ (`--reference auto`), tried before MPFR; they never disagree
    /// with it (see `reference::fast`).
    pub fast: Option<(Option<FastEvaluator>, Option<FastEvaluator>)>,
}

/// The upstream gradient g for input x: a seeded, representable value in ±[1/2, 2), the same
/// for the same seed and x whichever batch asks.
pub fn gradient_factor(format: &dyn Format, seed: u64, x: u32) -> u32 {
    let mut rng = Rng::new(seed ^ (x as u64).wrapping_mul(0x9e37_79b9_7f4a_7c15));
    let r = rng.next_u64();
    let p = format.precision();
    let significand = (1u64 << (p - 1)) | (r & ((1u64 << (p - 1)) - 1));
    let exponent = -(p as i32 - 1) - ((r >> 40) & 1) as i32;
    format.encode((r >> 41) & 1 == 1, significand, exponent)
}

fn rounded(format: &dyn Format, q: &Rational) -> Reference {
    let binade = if q.is_zero() {
        format.emin()
    } else {
        floor_log2_rational(q).max(format.emin())
    };
    Reference {
        bits: round_rational(q, false, format),
        exact: Some(ExactValue {
            approx: q.to_f64(),
            binade,
        }),
        precision: 0,
    }
}

impl RoleReferences {
    /// The fast path's reference of f (`forward`) or f′ at x, when it has one and decides it.
    #[inline(always)]
    fn fast_reference(&self, forward: bool, x: u32) -> Option<Reference> {
        let (f, d) = self.fast.as_ref()?;
        let evaluator = if forward { f } else { d };
        evaluator.as_ref()?.try_reference(x)
    }

    /// The outputs' format.
    fn format(&self) -> &'static dyn Format {
        self.forward.format()
    }
    /// The inputs' format (x and a gradient's g).
    fn input_format(&self) -> &'static dyn Format {
        self.forward.input_format()
    }
    /// The kernel's arguments for input x.
    pub fn arguments(&self, x: u32) -> Result<(u32, Option<u32>), String> {
        match self.role {
            CheckRole::Forward | CheckRole::Derivative => Ok((x, None)),
            CheckRole::Gradient { from_output } => {
                let g = gradient_factor(self.input_format(), self.seed, x);
                let first = if from_output {
                    self.forward.reference(x).map_err(|e| e.to_string())?.bits
                } else {
                    x
                };
                Ok((first, Some(g)))
            }
        }
    }
    /// Reference (and left-hand reference at a kink) for input x.
    #[inline(always)]
    pub fn reference(&self, x: u32) -> Result<(Reference, Option<Reference>), String> {
        self.reference_via(x, true, None)
    }

    /// [`Self::reference`] for the second argument the kernel was called with: a gradient's
    /// reference scales by that g (the seeded one unless the kernel brought its own).
    #[inline(always)]
    pub fn reference_with(
        &self,
        x: u32,
        second: Option<u32>,
    ) -> Result<(Reference, Option<Reference>), String> {
        self.reference_via(x, true, second)
    }

    /// The reference at x from MPFR alone, whatever `--reference` says.
    pub fn mpfr_reference(&self, x: u32) -> Result<Reference, String> {
        self.reference_via(x, false, None).map(|(r, _)| r)
    }

    /// Whether references may come from the fast path.
    pub fn uses_fast_path(&self) -> bool {
        self.fast
            .as_ref()
            .is_some_and(|(f, d)| f.is_some() || d.is_some())
    }

    #[inline(always)]
    fn reference_via(
        &self,
        x: u32,
        allow_fast: bool,
        second: Option<u32>,
    ) -> Result<(Reference, Option<Reference>), String> {
        let format = self.format();
        let input = self.input_format();
        let g = match self.role {
            CheckRole::Forward => {
                if let Some(r) = self.fast_reference(true, x).filter(|_| allow_fast) {
                    return Ok((r, None));
                }
                return Ok((self.forward.reference(x).map_err(|e| e.to_string())?, None));
            }
            CheckRole::Derivative => None,
            CheckRole::Gradient { .. } => {
                let g = second.unwrap_or_else(|| gradient_factor(input, self.seed, x));
                // A recorded g may be anything; a non-finite one has no exact product.
                Some(Rational::from_f64(input.to_f64(g)).ok_or_else(|| {
                    format!(
                        "g = {} is not a finite number",
                        crate::format::hex(input, g)
                    )
                })?)
            }
        };
        let fast = (g.is_none() && allow_fast)
            .then(|| self.fast_reference(false, x))
            .flatten();
        let r = match &g {
            _ if fast.is_some() => Ok(fast.expect("checked")),
            None => self.derivative.reference(x),
            Some(g) => self.derivative.reference_scaled(x, Some(g)),
        }
        .map_err(|e| e.to_string())?;
        let value = input.to_f64(x);
        let left = self
            .kinks
            .iter()
            .find(|(at, _)| *at == value)
            .map(|(_, left)| {
                let q = match &g {
                    None => left.clone(),
                    Some(g) => Rational::from(left * g),
                };
                rounded(format, &q)
            });
        Ok((r, left))
    }
}

/// Evaluates inputs through the kernel and the references.
pub struct Prober<'a> {
    kernel: &'a mut dyn KernelUnderTest,
    refs: &'a RoleReferences,
    /// Crashes seen so far.
    pub crashes: Vec<KernelCrash>,
    /// Inputs evaluated so far.
    pub evaluated: u64,
    /// Inputs whose reference could not be decided, with the message; they are left out.
    pub failures: Vec<(u32, String)>,
    progress: bool,
    /// A bar shared by the calls of a streamed sweep, with its start.
    shared: Option<(indicatif::ProgressBar, std::time::Instant)>,
}

fn new_bar(len: u64) -> indicatif::ProgressBar {
    let bar = indicatif::ProgressBar::with_draw_target(
        Some(len),
        indicatif::ProgressDrawTarget::hidden(),
    );
    bar.set_style(
        indicatif::ProgressStyle::with_template("{msg} [{bar:40}] {pos}/{len} ({eta})")
            .expect("template")
            .progress_chars("=> "),
    );
    bar.set_message("checking");
    bar
}

impl<'a> Prober<'a> {
    /// Announces `total` inputs to come over several calls (one progress bar for them all);
    /// 0 ends the announcement.
    pub fn expect(&mut self, total: u64) {
        if let Some((bar, _)) = self.shared.take() {
            bar.finish_and_clear();
        }
        if self.progress && total > 0 {
            self.shared = Some((new_bar(total), std::time::Instant::now()));
        }
    }
    /// A prober; `progress` allows a progress bar on stderr.
    pub fn new(
        kernel: &'a mut dyn KernelUnderTest,
        refs: &'a RoleReferences,
        progress: bool,
    ) -> Self {
        Prober {
            kernel,
            refs,
            crashes: Vec::new(),
            evaluated: 0,
            failures: Vec::new(),
            progress: progress && std::io::stderr().is_terminal(),
            shared: None,
        }
    }
    /// The kernel itself (for hygiene and throughput).
    pub fn kernel(&mut self) -> &mut dyn KernelUnderTest {
        self.kernel
    }
    /// Kernel arguments of a sample (inputs whose arguments cannot be computed are dropped).
    pub fn arguments(&self, inputs: &[u32]) -> (Vec<u32>, Option<Vec<u32>>) {
        let args: Vec<(u32, Option<u32>)> = inputs
            .par_iter()
            .filter_map(|&x| self.refs.arguments(x).ok())
            .collect();
        let first = args.iter().map(|a| a.0).collect();
        let second = args.iter().map(|a| a.1).collect::<Option<Vec<u32>>>();
        (first, second)
    }
}

/// Inputs per task of the parallel fold (references and accumulation).
const FOLD_TASK: usize = 8192;
/// Called batches the kernel thread may run ahead of the folds.
const AHEAD: usize = 4;
/// Sweeps of at most this many inputs are evaluated on the caller's thread (probes, threshold
/// searches): starting threads would cost more than the work.
const INLINE: u64 = 2 * FOLD_TASK as u64;

/// One batch whose kernel outputs are known: inputs, second arguments, outputs, and the
/// inputs whose kernel arguments could not be computed.
struct Called {
    inputs: Vec<u32>,
    /// Per input; empty when no input has one (one-argument roles).
    seconds: Vec<Option<u32>>,
    outputs: Vec<Option<u32>>,
    failures: Vec<(u32, String)>,
}

/// How the points of a streamed sweep are folded: `fold` turns a task's points (in input
/// order) into a partial result and `join` appends a later partial to an earlier one; `fold`
/// runs on several threads at once, and `join` must be associative.
pub struct Folding<'f, S> {
    /// Points of one task → partial result.
    pub fold: &'f (dyn Fn(&[Point]) -> S + Sync),
    /// Earlier partial, later partial → the partial of both.
    pub join: &'f (dyn Fn(S, S) -> S + Sync),
    /// A task whose points differ only in their inputs → the partial `fold` would give for
    /// its points; without it such tasks are folded point by point too.
    pub uniform: Option<&'f (dyn Fn(&Uniform) -> S + Sync)>,
    /// A task whose outputs are all their references and exact → the partial `fold` would
    /// give for its points; without it such tasks are folded point by point too.
    pub exact: Option<&'f (dyn Fn(&ExactSpan) -> S + Sync)>,
}

impl<S> Folding<'_, S> {
    /// The partial of one task of a called batch: at once when its points are uniform (and
    /// `uniform` allowed), else from its points, built in `points`.
    #[allow(clippy::too_many_arguments)] // one task and the buffers it reuses
    fn task(
        &self,
        refs: &RoleReferences,
        called: &Called,
        range: std::ops::Range<usize>,
        uniform: bool,
        points: &mut Vec<Point>,
        failures: &mut Vec<(u32, String)>,
        clock: &mut stats::Clock,
    ) -> S {
        use std::sync::atomic::Ordering::Relaxed;
        stats::STATS.tasks.fetch_add(1, Relaxed);
        let fold_uniform = self.uniform.filter(|_| uniform);
        let reference = refs.constant_span(called, range.clone());
        if let (Some(fold), Some(reference)) = (fold_uniform, reference) {
            if let Some(u) = uniform_span(called, range.clone(), reference) {
                stats::STATS.uniform_tasks.fetch_add(1, Relaxed);
                clock.lap(&stats::STATS.references);
                return fold(&u);
            }
        }
        if reference.is_none() {
            if let Some(span) = refs.scaled_span(called, range.clone()) {
                return self.scaled_task(&span, called, range, uniform, points, clock);
            }
        }
        refs.points_of(called, range, reference, points, failures);
        clock.lap(&stats::STATS.references);
        (self.fold)(points)
    }

    /// The partial of a task whose references are its inputs scaled by a power of two: at
    /// once when the kernel returned every reference (and `exact` allowed), else from points
    /// whose references are written from the inputs' patterns.
    fn scaled_task(
        &self,
        span: &ScaledSpan,
        called: &Called,
        range: std::ops::Range<usize>,
        uniform: bool,
        points: &mut Vec<Point>,
        clock: &mut stats::Clock,
    ) -> S {
        use std::sync::atomic::Ordering::Relaxed;
        stats::STATS.scaled_tasks.fetch_add(1, Relaxed);
        let inputs = &called.inputs[range.clone()];
        let outputs = &called.outputs[range];
        let fold_exact = self.exact.filter(|_| uniform);
        if let Some(fold) = fold_exact {
            // The first pattern's reference is its own; after it, x + offset (one pass
            // without early exit, which the compiler vectorises).
            let offset = span.bits(inputs[1]).wrapping_sub(inputs[1]);
            let all = outputs[0] == Some(span.bits(inputs[0]))
                && inputs[1..]
                    .iter()
                    .zip(&outputs[1..])
                    .fold(true, |all, (&x, &o)| {
                        all & (o == Some(x.wrapping_add(offset)))
                    });
            if all {
                stats::STATS.exact_tasks.fetch_add(1, Relaxed);
                clock.lap(&stats::STATS.references);
                let point = |x: u32| scaled_point(span, x, Some(span.bits(x)));
                return fold(&ExactSpan {
                    first: inputs[0],
                    last: inputs[inputs.len() - 1],
                    point: &point,
                });
            }
        }
        points.clear();
        points.extend(
            inputs
                .iter()
                .zip(outputs)
                .map(|(&x, &output)| scaled_point(span, x, output)),
        );
        clock.lap(&stats::STATS.references);
        (self.fold)(points)
    }
}

/// The point of input x of a scaled span with the kernel's `output`.
#[inline(always)]
fn scaled_point(span: &ScaledSpan, x: u32, output: Option<u32>) -> Point {
    Point {
        input: x,
        second: None,
        output,
        reference: span.reference(x),
        left: None,
    }
}

/// The task `range` of a called batch as one [`Uniform`] span, given that its reference is
/// `reference` throughout: when every output is one finite-or-not value that is not a crash.
fn uniform_span(
    called: &Called,
    range: std::ops::Range<usize>,
    reference: Reference,
) -> Option<Uniform> {
    let outputs = called.outputs.get(range.clone())?;
    let output = (*outputs.first()?)?;
    if outputs.iter().any(|&o| o != Some(output)) {
        return None;
    }
    Some(Uniform {
        first: called.inputs[range.start],
        last: called.inputs[range.end - 1],
        output,
        reference,
    })
}

impl RoleReferences {
    /// The points of `range` of a called batch, into `points` (cleared first); inputs whose
    /// reference fails go to `failures`; `constant`: the task's one reference, when
    /// [`Self::constant_span`] proved one.
    fn points_of(
        &self,
        called: &Called,
        range: std::ops::Range<usize>,
        constant: Option<Reference>,
        points: &mut Vec<Point>,
        failures: &mut Vec<(u32, String)>,
    ) {
        points.clear();
        if let Some(reference) = constant {
            points.extend(
                called.inputs[range.clone()]
                    .iter()
                    .zip(range)
                    .map(|(&x, i)| Point {
                        input: x,
                        second: None,
                        output: called.outputs.get(i).copied().flatten(),
                        reference,
                        left: None,
                    }),
            );
            return;
        }
        for i in range {
            let x = called.inputs[i];
            // No second arguments at all: a one-argument role (see `batch_arguments`).
            let second = called.seconds.get(i).copied().flatten();
            match self.reference_with(x, second) {
                Ok((reference, left)) => points.push(Point {
                    input: x,
                    second,
                    output: called.outputs.get(i).copied().flatten(),
                    reference,
                    left,
                }),
                Err(e) => failures.push((x, e)),
            }
        }
    }

    /// The one reference of every input of `range`, when the fast path proves there is one
    /// (`FastEvaluator::constant_span`): a one-argument role, inputs that are consecutive
    /// patterns (so one interval of values when of one sign), and no kink among them (a kink
    /// brings a second, left-hand reference).  Saturated tails and near-constant tiny inputs,
    /// most of an exhaustive binary32 sweep for many functions, then cost no evaluation.
    fn constant_span(&self, called: &Called, range: std::ops::Range<usize>) -> Option<Reference> {
        let fast = self.span_evaluator(called, range.clone())?;
        let inputs = &called.inputs[range];
        let reference = fast.constant_span(inputs[0], inputs[inputs.len() - 1])?;
        self.span_inputs_hold(inputs).then_some(reference)
    }

    /// The references of `range` of a called batch as the inputs scaled by a power of two,
    /// when the fast path proves it (`FastEvaluator::scaled_span`), on the conditions of
    /// [`Self::constant_span`].
    fn scaled_span(&self, called: &Called, range: std::ops::Range<usize>) -> Option<ScaledSpan> {
        let fast = self.span_evaluator(called, range.clone())?;
        let inputs = &called.inputs[range];
        let span = fast.scaled_span(inputs[0], inputs[inputs.len() - 1])?;
        self.span_inputs_hold(inputs).then_some(span)
    }

    /// The fast evaluator of a span's role, when spans may be taken at all: a one-argument
    /// role and at least two inputs.
    fn span_evaluator(
        &self,
        called: &Called,
        range: std::ops::Range<usize>,
    ) -> Option<&FastEvaluator> {
        let forward = match self.role {
            CheckRole::Forward => true,
            CheckRole::Derivative => false,
            CheckRole::Gradient { .. } => return None,
        };
        if range.len() < 2 || !called.seconds.is_empty() {
            return None;
        }
        let (f, d) = self.fast.as_ref()?;
        if forward { f } else { d }.as_ref()
    }

    /// Whether a span's inputs are consecutive patterns with no kink among them (a kink brings
    /// a derivative a second, left-hand reference).
    fn span_inputs_hold(&self, inputs: &[u32]) -> bool {
        // One pass without early exit, which the compiler vectorises.
        let first = inputs[0];
        let consecutive = inputs[inputs.len() - 1].wrapping_sub(first) as usize == inputs.len() - 1
            && inputs.iter().enumerate().fold(true, |all, (i, &x)| {
                all & (x == first.wrapping_add(i as u32))
            });
        if !consecutive {
            return false;
        }
        if self.role == CheckRole::Derivative && !self.kinks.is_empty() {
            let input = self.input_format();
            let (a, b) = (
                input.to_f64(inputs[0]),
                input.to_f64(inputs[inputs.len() - 1]),
            );
            let (lo, hi) = if a <= b { (a, b) } else { (b, a) };
            if self.kinks.iter().any(|(at, _)| (lo..=hi).contains(at)) {
                return false;
            }
        }
        true
    }

    /// Kernel arguments of a batch: the inputs kept, first and second arguments; inputs whose
    /// arguments fail go to `failures`.
    fn batch_arguments(&self, batch: Vec<u32>, failures: &mut Vec<(u32, String)>) -> Arguments {
        if matches!(self.role, CheckRole::Forward | CheckRole::Derivative) {
            // The inputs are the first arguments and there are no second ones: no copies, no
            // per-input `None`s (they cost a zeroed buffer per batch).
            return (batch, None, Vec::new());
        }
        let computed: Vec<Result<(u32, Option<u32>), String>> =
            batch.par_iter().map(|&x| self.arguments(x)).collect();
        let mut kept = Vec::with_capacity(batch.len());
        let mut firsts = Vec::with_capacity(batch.len());
        let mut seconds = Vec::with_capacity(batch.len());
        for (&x, c) in batch.iter().zip(computed) {
            match c {
                Ok((f, s)) => {
                    kept.push(x);
                    firsts.push(f);
                    seconds.push(s);
                }
                Err(e) => failures.push((x, e)),
            }
        }
        (kept, Some(firsts), seconds)
    }

    /// Calls the kernel on one batch of inputs: the called batch, and the batch's crashes
    /// (with their inputs).
    fn call(
        &self,
        kernel: &mut dyn KernelUnderTest,
        batch: Vec<u32>,
    ) -> (Called, Vec<KernelCrash>) {
        let mut failures = Vec::new();
        let (kept, firsts, seconds) = self.batch_arguments(batch, &mut failures);
        let firsts = firsts.as_deref().unwrap_or(&kept);
        // Empty `seconds` (one-argument roles) means no second argument, not an empty one.
        let second: Option<Vec<u32>> = if seconds.is_empty() {
            None
        } else {
            seconds.iter().copied().collect()
        };
        let out = if firsts.is_empty() {
            KernelOutput::default()
        } else {
            kernel.run(firsts, second.as_deref())
        };
        let crashes = out
            .crashes
            .into_iter()
            .map(|crash| KernelCrash {
                input: kept[crash.index],
                ..crash
            })
            .collect();
        let called = Called {
            inputs: kept,
            seconds: out.seconds.unwrap_or(seconds),
            outputs: out.outputs,
            failures,
        };
        (called, crashes)
    }
}

/// Inputs kept, first arguments (`None`: the inputs themselves), second arguments (empty:
/// none, for every input).
type Arguments = (Vec<u32>, Option<Vec<u32>>, Vec<Option<u32>>);

/// Kernel batches of a sweep given as sorted runs `lo..=hi` of consecutive bit patterns.
pub fn run_batches<'a>(
    runs: impl Iterator<Item = (u32, u32)> + Send + 'a,
) -> impl Iterator<Item = Vec<u32>> + Send + 'a {
    let mut runs = runs;
    let mut current: Option<(u32, u32)> = None;
    std::iter::from_fn(move || {
        let mut batch = Vec::with_capacity(CHUNK);
        while batch.len() < CHUNK {
            let Some((lo, hi)) = current.take().or_else(|| runs.next()) else {
                break;
            };
            let room = (CHUNK - batch.len()) as u64;
            let n = (hi - lo) as u64 + 1;
            let take = n.min(room) as u32;
            // lo + take − 1 ≤ hi: no overflow.
            batch.extend(lo..=lo + (take - 1));
            if (take as u64) < n {
                current = Some((lo + take, hi));
            }
        }
        (!batch.is_empty()).then_some(batch)
    })
}

impl Prober<'_> {
    /// Evaluates inputs (in the order given, `total` of them, in batches of at most [`CHUNK`])
    /// and folds their points; `sink` receives one partial result per batch, in input order.
    /// Inputs whose reference fails are left out and recorded in `failures`.
    ///
    /// A kernel thread calls the kernel batch after batch, up to [`AHEAD`] batches ahead;
    /// fold threads (one per rayon thread) take tasks of [`FOLD_TASK`] inputs as they come,
    /// compute their references and fold them; the caller's thread joins the partial results
    /// in input order. Nothing waits for a whole batch to finish before the next one starts.
    pub fn probe_fold<S: Send>(
        &mut self,
        batches: impl Iterator<Item = Vec<u32>> + Send,
        total: u64,
        folding: &Folding<'_, S>,
        sink: &mut dyn FnMut(S),
    ) {
        let (bar, started, own) = match &self.shared {
            Some((bar, started)) => (Some(bar.clone()), *started, false),
            None => (
                self.progress.then(|| new_bar(total)),
                std::time::Instant::now(),
                true,
            ),
        };
        let advance = |len: usize, evaluated: &mut u64| {
            *evaluated += len as u64;
            if let Some(bar) = &bar {
                bar.inc(len as u64);
                if bar.is_hidden() && started.elapsed() > PROGRESS_AFTER {
                    bar.set_draw_target(indicatif::ProgressDrawTarget::stderr());
                }
            }
        };
        let refs = self.refs;
        // Only for tests comparing reports with and without uniform tasks.
        let uniform = std::env::var_os("ULPGAUGE_NO_UNIFORM").is_none();
        let mut failures = Vec::new();
        let mut crashes = Vec::new();
        if total <= INLINE {
            // Small sweeps: everything on this thread.
            let mut points = Vec::new();
            let mut clock = stats::Clock::start();
            for batch in batches {
                let len = batch.len();
                let (called, crashed) = refs.call(&mut *self.kernel, batch);
                crashes.extend(crashed);
                failures.extend(called.failures.iter().cloned());
                let mut joined = None;
                for start in (0..called.inputs.len()).step_by(FOLD_TASK) {
                    let end = (start + FOLD_TASK).min(called.inputs.len());
                    let part = folding.task(
                        refs,
                        &called,
                        start..end,
                        uniform,
                        &mut points,
                        &mut failures,
                        &mut clock,
                    );
                    joined = Some(match joined {
                        None => part,
                        Some(j) => (folding.join)(j, part),
                    });
                }
                if let Some(j) = joined {
                    sink(j);
                }
                advance(len, &mut self.evaluated);
            }
        } else {
            let evaluated = &mut self.evaluated;
            pipeline(
                refs,
                &mut *self.kernel,
                batches,
                folding,
                sink,
                &mut |len| advance(len, evaluated),
                &mut failures,
                &mut crashes,
                uniform,
            );
        }
        self.failures.extend(failures);
        self.crashes.extend(crashes);
        if let Some(bar) = bar.filter(|_| own) {
            bar.finish_and_clear();
        }
    }
}

/// Where the fold threads take their next task: the batch being handed out, the next input
/// of it and the next task number, and the kernel thread's batches.
struct Dispatch {
    called: Option<std::sync::Arc<Called>>,
    next: usize,
    seq: u64,
    batches: std::sync::mpsc::Receiver<(Called, usize)>,
}

/// One batch all of whose partials are joined: its joined partial (`None` when it had no
/// points), its reference failures (argument failures first) and its number of inputs.
type Finished<S> = (Option<S>, Vec<(u32, String)>, usize);

/// Where a batch handed out ends (one past its last task), its argument failures and its
/// number of inputs.
type BatchEnd = (u64, Vec<(u32, String)>, usize);

/// Partials waiting for their turn, and the batch being joined.
struct Joining<S> {
    /// The next task to join.
    next: u64,
    waiting: std::collections::BTreeMap<u64, (S, Vec<(u32, String)>)>,
    current: Option<S>,
    failures: Vec<(u32, String)>,
    /// Where each batch handed out ends.
    ends: std::collections::VecDeque<BatchEnd>,
}

impl<S> Joining<S> {
    /// Hands every batch whose tasks are all joined to the caller's thread.
    fn finish_batches(&mut self, out: &std::sync::mpsc::SyncSender<Finished<S>>) -> bool {
        while self.ends.front().is_some_and(|e| e.0 <= self.next) {
            let (_, mut failures, len) = self.ends.pop_front().expect("checked");
            failures.append(&mut self.failures);
            if out.send((self.current.take(), failures, len)).is_err() {
                return false;
            }
        }
        true
    }
}

/// Set when a fold thread panics, so that the others stop instead of waiting for its task.
struct PanicFlag<'a>(&'a std::sync::atomic::AtomicBool);

impl Drop for PanicFlag<'_> {
    fn drop(&mut self) {
        if std::thread::panicking() {
            self.0.store(true, std::sync::atomic::Ordering::SeqCst);
        }
    }
}

/// Where the threads of the pipeline spend their time (and how many fold tasks were uniform),
/// printed to stderr at exit when `ULPGAUGE_PIPELINE_STATS` is set (for profiling; see
/// DEVELOPERS.md).
pub mod stats {
    use std::sync::atomic::{AtomicU64, Ordering};
    use std::time::Instant;

    /// Nanoseconds spent per activity, summed over threads.
    #[derive(Default)]
    pub struct Stats {
        /// Kernel thread: taking the next batch of inputs.
        pub inputs: AtomicU64,
        /// Kernel thread: kernel arguments and the call through the worker.
        pub kernel: AtomicU64,
        /// Kernel thread: waiting for room (the folds are behind).
        pub kernel_blocked: AtomicU64,
        /// Fold threads: waiting for a task (the kernel is behind).
        pub fold_idle: AtomicU64,
        /// Fold threads: references and points.
        pub references: AtomicU64,
        /// Fold threads: accumulating a task's points.
        pub accumulation: AtomicU64,
        /// Fold threads: joining partials in order (lock included).
        pub join: AtomicU64,
        /// Caller's thread: waiting for a joined batch.
        pub main_idle: AtomicU64,
        /// Caller's thread: the sink (merge into the sweep's accumulators, findings).
        pub main_merge: AtomicU64,
        /// Fold tasks folded at once as uniform spans (a count).
        pub uniform_tasks: AtomicU64,
        /// Fold tasks whose references were scaled inputs (a count).
        pub scaled_tasks: AtomicU64,
        /// Of those, tasks folded at once as exact spans (a count).
        pub exact_tasks: AtomicU64,
        /// All fold tasks (a count).
        pub tasks: AtomicU64,
    }

    /// The process's figures.
    pub static STATS: Stats = Stats {
        inputs: AtomicU64::new(0),
        kernel: AtomicU64::new(0),
        kernel_blocked: AtomicU64::new(0),
        fold_idle: AtomicU64::new(0),
        references: AtomicU64::new(0),
        accumulation: AtomicU64::new(0),
        join: AtomicU64::new(0),
        main_idle: AtomicU64::new(0),
        main_merge: AtomicU64::new(0),
        uniform_tasks: AtomicU64::new(0),
        scaled_tasks: AtomicU64::new(0),
        exact_tasks: AtomicU64::new(0),
        tasks: AtomicU64::new(0),
    };

    /// A stopwatch whose laps add to one of the figures.
    pub struct Clock(Instant);

    impl Clock {
        /// Starts now.
        pub fn start() -> Clock {
            Clock(Instant::now())
        }
        /// Adds the time since the last lap to `to`.
        #[inline]
        pub fn lap(&mut self, to: &AtomicU64) {
            let now = Instant::now();
            to.fetch_add((now - self.0).as_nanos() as u64, Ordering::Relaxed);
            self.0 = now;
        }
    }

    /// The figures as one line per activity, in seconds.
    pub fn report() -> String {
        let s = &STATS;
        [
            ("kernel thread: inputs", &s.inputs),
            ("kernel thread: arguments + kernel call", &s.kernel),
            ("kernel thread: blocked (folds behind)", &s.kernel_blocked),
            ("fold threads: idle (kernel behind)", &s.fold_idle),
            ("fold threads: references + points", &s.references),
            ("fold threads: accumulation", &s.accumulation),
            ("fold threads: join in order", &s.join),
            ("main thread: idle", &s.main_idle),
            ("main thread: merge + findings", &s.main_merge),
        ]
        .iter()
        .map(|(what, v)| {
            format!(
                "{what:42} {:9.3} s\n",
                v.load(Ordering::Relaxed) as f64 * 1e-9
            )
        })
        .chain(
            [
                ("fold tasks folded as uniform spans", &s.uniform_tasks),
                ("fold tasks with scaled references", &s.scaled_tasks),
                ("fold tasks folded as exact spans", &s.exact_tasks),
            ]
            .iter()
            .map(|(what, v)| {
                format!(
                    "{what:42} {:9} of {}\n",
                    v.load(Ordering::Relaxed),
                    s.tasks.load(Ordering::Relaxed)
                )
            }),
        )
        .collect()
    }
}

/// The threads of [`Prober::probe_fold`]: a kernel thread calling the kernel batch after
/// batch; fold threads taking tasks in input order, folding them and joining the partials in
/// order (under a lock, so that no thread waits for the caller); the caller's thread, woken
/// once per batch, handing the joined batches to the sink.
#[allow(clippy::too_many_arguments)]
fn pipeline<S: Send>(
    refs: &RoleReferences,
    kernel: &mut dyn KernelUnderTest,
    batches: impl Iterator<Item = Vec<u32>> + Send,
    folding: &Folding<'_, S>,
    sink: &mut dyn FnMut(S),
    advance: &mut dyn FnMut(usize),
    failures: &mut Vec<(u32, String)>,
    crashes: &mut Vec<KernelCrash>,
    uniform: bool,
) {
    use std::sync::atomic::{AtomicBool, Ordering};
    use std::sync::{mpsc, Arc, Mutex};
    let joining = Mutex::new(Joining {
        next: 0,
        waiting: std::collections::BTreeMap::new(),
        current: None,
        failures: Vec::new(),
        ends: std::collections::VecDeque::new(),
    });
    let panicked = AtomicBool::new(false);
    let (joining, panicked) = (&joining, &panicked);
    std::thread::scope(|scope| {
        let (called_tx, called_rx) = mpsc::sync_channel::<(Called, usize)>(AHEAD);
        let feeder = scope.spawn(move || {
            let mut crashes = Vec::new();
            let mut clock = stats::Clock::start();
            for batch in batches {
                let len = batch.len();
                clock.lap(&stats::STATS.inputs);
                let (called, crashed) = refs.call(kernel, batch);
                crashes.extend(crashed);
                clock.lap(&stats::STATS.kernel);
                let sent = called_tx.send((called, len));
                clock.lap(&stats::STATS.kernel_blocked);
                if sent.is_err() {
                    break;
                }
            }
            crashes
        });
        // Only the fold threads hold the dispatch: when the last one ends, the kernel thread's
        // sends fail and it stops too.
        let dispatch = Arc::new(Mutex::new(Dispatch {
            called: None,
            next: 0,
            seq: 0,
            batches: called_rx,
        }));
        let (done_tx, done_rx) = mpsc::sync_channel::<Finished<S>>(AHEAD + 2);
        for _ in 0..rayon::current_num_threads().max(1) {
            let (dispatch, done_tx) = (Arc::clone(&dispatch), done_tx.clone());
            scope.spawn(move || {
                let _flag = PanicFlag(panicked);
                let mut points = Vec::with_capacity(FOLD_TASK);
                let mut clock = stats::Clock::start();
                while !panicked.load(Ordering::SeqCst) {
                    let task = {
                        let mut d = dispatch.lock().expect("dispatch");
                        loop {
                            if let Some(called) = d.called.clone() {
                                let n = called.inputs.len();
                                let range = d.next..(d.next + FOLD_TASK).min(n);
                                d.next = range.end;
                                let seq = d.seq;
                                d.seq += 1;
                                if d.next == n {
                                    d.called = None;
                                }
                                break Some((seq, called, range));
                            }
                            let Ok((called, len)) = d.batches.recv() else {
                                break None;
                            };
                            let n = called.inputs.len() as u64;
                            let tasks = n.div_ceil(FOLD_TASK as u64);
                            let mut j = joining.lock().expect("joining");
                            j.ends
                                .push_back((d.seq + tasks, called.failures.clone(), len));
                            if tasks == 0 {
                                // An empty batch: done at once, in its turn.
                                if !j.finish_batches(&done_tx) {
                                    break None;
                                }
                            } else {
                                d.called = Some(Arc::new(called));
                                d.next = 0;
                            }
                        }
                    };
                    clock.lap(&stats::STATS.fold_idle);
                    let Some((seq, called, range)) = task else {
                        break;
                    };
                    let mut failed = Vec::new();
                    let part = folding.task(
                        refs,
                        &called,
                        range,
                        uniform,
                        &mut points,
                        &mut failed,
                        &mut clock,
                    );
                    drop(called);
                    clock.lap(&stats::STATS.accumulation);
                    let mut j = joining.lock().expect("joining");
                    j.waiting.insert(seq, (part, failed));
                    let mut finished = true;
                    while let Some((part, mut failed)) = {
                        let next = j.next;
                        j.waiting.remove(&next)
                    } {
                        // A batch whose tasks are all joined leaves before a task of the next
                        // one joins it: each partial the sink gets is exactly one batch, so the
                        // findings are streamed at the same points of the sweep every run.
                        if !j.finish_batches(&done_tx) {
                            finished = false;
                            break;
                        }
                        j.failures.append(&mut failed);
                        j.current = Some(match j.current.take() {
                            None => part,
                            Some(c) => (folding.join)(c, part),
                        });
                        j.next += 1;
                    }
                    let finished = finished && j.finish_batches(&done_tx);
                    drop(j);
                    clock.lap(&stats::STATS.join);
                    if !finished {
                        break;
                    }
                }
            });
        }
        drop(dispatch);
        drop(done_tx);
        let mut clock = stats::Clock::start();
        for (part, failed, len) in done_rx {
            clock.lap(&stats::STATS.main_idle);
            advance(len);
            failures.extend(failed);
            if let Some(part) = part {
                sink(part);
            }
            clock.lap(&stats::STATS.main_merge);
        }
        crashes.extend(feeder.join().expect("kernel thread"));
    });
}

impl Probe for Prober<'_> {
    /// Inputs whose reference fails are left out (and recorded in `failures`).
    fn probe(&mut self, inputs: &[u32]) -> Vec<Point> {
        let mut all = Vec::with_capacity(inputs.len());
        let folding = Folding {
            fold: &|points: &[Point]| points.to_vec(),
            join: &|mut a: Vec<Point>, b: Vec<Point>| {
                a.extend(b);
                a
            },
            uniform: None,
            exact: None,
        };
        let batches = inputs.chunks(CHUNK).map(|c| c.to_vec());
        self.probe_fold(batches, inputs.len() as u64, &folding, &mut |part| {
            all.extend(part)
        });
        all
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::activation::{lookup, Constants, Role};
    use crate::check::InProcessKernel;
    use crate::format::Binary32;
    use crate::reference::ParamRounding;

    fn sigmoid_references() -> RoleReferences {
        let function = lookup("sigmoid").expect("in the catalog");
        let constants = Constants::resolve(function, &[], ParamRounding::Exact, &Binary32);
        let forward = Evaluator::new(function, Role::Forward, constants.clone(), &Binary32);
        let derivative = Evaluator::new(function, Role::Derivative, constants, &Binary32);
        let fast = Some((
            FastEvaluator::new(&forward),
            FastEvaluator::new(&derivative),
        ));
        RoleReferences {
            forward,
            derivative,
            role: CheckRole::Forward,
            seed: 1,
            kinks: Vec::new(),
            fast,
        }
    }

    /// The threaded pipeline hands every point to the sink in input order, one partial per
    /// batch, attributes crashes to their inputs, and agrees point for point with the
    /// caller's-thread path that small sweeps take (inputs: two runs of patterns, more than
    /// four batches, a short last batch; the kernel "crashes" on every 10,007th pattern).
    #[test]
    fn pipeline_keeps_input_order_and_crashes() {
        let refs = sigmoid_references();
        let runs = [
            (0x3f80_0000u32, 0x3f80_0000 + 150_000),
            (0xbf00_0000, 0xbf00_0000 + 130_000),
        ];
        let all: Vec<u32> = runs.iter().flat_map(|&(a, b)| a..=b).collect();
        let kernel = |x: u32, _: Option<u32>| (x % 10_007 != 0).then_some(x ^ 1);
        let folding = Folding {
            fold: &|points: &[Point]| points.to_vec(),
            join: &|mut a: Vec<Point>, b: Vec<Point>| {
                a.extend(b);
                a
            },
            uniform: None,
            exact: None,
        };
        let mut k = InProcessKernel::new(kernel);
        let mut prober = Prober::new(&mut k, &refs, false);
        let mut parts = Vec::new();
        prober.probe_fold(
            run_batches(runs.iter().copied()),
            all.len() as u64,
            &folding,
            &mut |p| parts.push(p),
        );
        assert_eq!(parts.len(), all.len().div_ceil(CHUNK));
        // Each partial is exactly one batch's points (the findings are settled per partial).
        for (i, part) in parts.iter().enumerate() {
            assert_eq!(part.len(), CHUNK.min(all.len() - i * CHUNK), "batch {i}");
        }
        let points: Vec<Point> = parts.into_iter().flatten().collect();
        let inputs: Vec<u32> = points.iter().map(|p| p.input).collect();
        assert_eq!(inputs, all);
        assert_eq!(prober.evaluated, all.len() as u64);
        let crashed: Vec<u32> = all.iter().copied().filter(|x| x % 10_007 == 0).collect();
        let seen: Vec<u32> = prober.crashes.iter().map(|c| c.input).collect();
        assert_eq!(seen, crashed);
        // The same inputs a small piece at a time, each on the caller's thread.
        let mut k = InProcessKernel::new(kernel);
        let mut small = Prober::new(&mut k, &refs, false);
        for (i, piece) in all.chunks(INLINE as usize).enumerate().step_by(7) {
            let got = small.probe(piece);
            let want = &points[i * INLINE as usize..][..piece.len()];
            for (g, w) in got.iter().zip(want) {
                assert_eq!(
                    (g.input, g.output, g.reference.bits),
                    (w.input, w.output, w.reference.bits)
                );
            }
        }
    }
}
