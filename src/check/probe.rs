//! Evaluating inputs: references in parallel (rayon), kernel calls in batches, crashes kept.

use super::kernel::{KernelCrash, KernelOutput, KernelUnderTest};
use super::CheckRole;
use crate::format::{ExactValue, Format};
use crate::measure::{Point, Probe};
use crate::reference::fast::FastEvaluator;
use crate::reference::{floor_log2_rational, round_rational, Evaluator, Reference};
use crate::sweep::Rng;
use rayon::prelude::*;
use rug::Rational;
use std::io::IsTerminal;

/// A batch still running after this long shows a progress bar (when stderr is a terminal).
const PROGRESS_AFTER: std::time::Duration = std::time::Duration::from_secs(1);
/// Inputs per kernel call.
const CHUNK: usize = 65_536;

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

    fn format(&self) -> &'static dyn Format {
        self.forward.format()
    }
    /// The kernel's arguments for input x.
    pub fn arguments(&self, x: u32) -> Result<(u32, Option<u32>), String> {
        match self.role {
            CheckRole::Forward | CheckRole::Derivative => Ok((x, None)),
            CheckRole::Gradient { from_output } => {
                let g = gradient_factor(self.format(), self.seed, x);
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
        let g = match self.role {
            CheckRole::Forward => {
                if let Some(r) = self.fast_reference(true, x).filter(|_| allow_fast) {
                    return Ok((r, None));
                }
                return Ok((self.forward.reference(x).map_err(|e| e.to_string())?, None));
            }
            CheckRole::Derivative => None,
            CheckRole::Gradient { .. } => {
                let g = second.unwrap_or_else(|| gradient_factor(format, self.seed, x));
                // A recorded g may be anything; a non-finite one has no exact product.
                Some(Rational::from_f64(format.to_f64(g)).ok_or_else(|| {
                    format!(
                        "g = {} is not a finite number",
                        crate::format::hex(format, g)
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
        let value = format.to_f64(x);
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
const FOLD_TASK: usize = 2048;

/// One batch whose kernel outputs are known: inputs, second arguments, outputs.
struct Called {
    inputs: Vec<u32>,
    seconds: Vec<Option<u32>>,
    outputs: Vec<Option<u32>>,
}

/// How the points of a streamed sweep are folded: `fold` turns a task's points (in input
/// order) into a partial result and `join` appends a later partial to an earlier one; both run
/// on the rayon pool, and `join` must be associative.
pub struct Folding<'f, S> {
    /// Points of one task → partial result.
    pub fold: &'f (dyn Fn(&[Point]) -> S + Sync),
    /// Earlier partial, later partial → the partial of both.
    pub join: &'f (dyn Fn(S, S) -> S + Sync),
}

impl RoleReferences {
    /// References of one called batch, folded task by task and joined in input order on the
    /// rayon pool; also the inputs whose reference failed.
    fn fold_batch<S: Send>(
        &self,
        called: &Called,
        folding: &Folding<'_, S>,
    ) -> Option<(S, Vec<(u32, String)>)> {
        called
            .inputs
            .par_chunks(FOLD_TASK)
            .enumerate()
            .map(|(t, inputs)| {
                let base = t * FOLD_TASK;
                let mut points = Vec::with_capacity(inputs.len());
                let mut failures = Vec::new();
                for (i, &x) in inputs.iter().enumerate() {
                    match self.reference_with(x, called.seconds[base + i]) {
                        Ok((reference, left)) => points.push(Point {
                            input: x,
                            second: called.seconds[base + i],
                            output: called.outputs.get(base + i).copied().flatten(),
                            reference,
                            left,
                        }),
                        Err(e) => failures.push((x, e)),
                    }
                }
                ((folding.fold)(&points), failures)
            })
            .reduce_with(|(a, mut fa), (b, fb)| {
                fa.extend(fb);
                ((folding.join)(a, b), fa)
            })
    }

    /// Kernel arguments of a batch: the inputs kept, first and second arguments; inputs whose
    /// arguments fail go to `failures`.
    fn batch_arguments(&self, batch: Vec<u32>, failures: &mut Vec<(u32, String)>) -> Arguments {
        if matches!(self.role, CheckRole::Forward | CheckRole::Derivative) {
            let seconds = vec![None; batch.len()];
            return (batch.clone(), batch, seconds);
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
        (kept, firsts, seconds)
    }
}

/// Inputs kept, first arguments, second arguments.
type Arguments = (Vec<u32>, Vec<u32>, Vec<Option<u32>>);

impl Prober<'_> {
    /// Evaluates inputs (in the order given) batch by batch and folds their points; `sink`
    /// receives one partial result per batch, in input order. Inputs whose reference fails are
    /// left out and recorded in `failures`.
    ///
    /// The kernel runs batch k + 1 on its own thread while the rayon pool computes the
    /// references of batch k, folds them and joins the partials, so neither waits for the
    /// other and the caller's thread only hands batches over.
    pub fn probe_fold<S: Send>(
        &mut self,
        inputs: impl Iterator<Item = u32>,
        folding: &Folding<'_, S>,
        sink: &mut dyn FnMut(S),
    ) {
        let (bar, started, own) = match &self.shared {
            Some((bar, started)) => (Some(bar.clone()), *started, false),
            None => {
                let (lo, hi) = inputs.size_hint();
                (
                    self.progress.then(|| new_bar(hi.unwrap_or(lo) as u64)),
                    std::time::Instant::now(),
                    true,
                )
            }
        };
        let refs = self.refs;
        let mut failures = Vec::new();
        let mut crashes = Vec::new();
        let mut kernel: &mut dyn KernelUnderTest = &mut *self.kernel;
        let mut inputs = inputs.peekable();
        std::thread::scope(|scope| {
            let mut pending: Option<Called> = None;
            loop {
                let call = inputs.peek().is_some().then(|| {
                    let batch: Vec<u32> = inputs.by_ref().take(CHUNK).collect();
                    let len = batch.len();
                    let (kept, firsts, seconds) = refs.batch_arguments(batch, &mut failures);
                    let k = kernel;
                    let handle = scope.spawn(move || {
                        let second: Option<Vec<u32>> = seconds.iter().copied().collect();
                        let out = if firsts.is_empty() {
                            KernelOutput::default()
                        } else {
                            k.run(&firsts, second.as_deref())
                        };
                        (k, kept, seconds, out)
                    });
                    (len, handle)
                });
                if let Some(called) = pending.take() {
                    if let Some((folded, failed)) = refs.fold_batch(&called, folding) {
                        sink(folded);
                        failures.extend(failed);
                    }
                }
                let Some((len, handle)) = call else { break };
                let (k, kept, seconds, out) = handle.join().expect("kernel thread");
                kernel = k;
                crashes.extend(out.crashes.into_iter().map(|crash| KernelCrash {
                    input: kept[crash.index],
                    ..crash
                }));
                pending = Some(Called {
                    inputs: kept,
                    seconds: out.seconds.unwrap_or(seconds),
                    outputs: out.outputs,
                });
                self.evaluated += len as u64;
                if let Some(bar) = &bar {
                    bar.inc(len as u64);
                    if bar.is_hidden() && started.elapsed() > PROGRESS_AFTER {
                        bar.set_draw_target(indicatif::ProgressDrawTarget::stderr());
                    }
                }
            }
        });
        self.failures.extend(failures);
        self.crashes.extend(crashes);
        if let Some(bar) = bar.filter(|_| own) {
            bar.finish_and_clear();
        }
    }
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
        };
        self.probe_fold(inputs.iter().copied(), &folding, &mut |part| {
            all.extend(part)
        });
        all
    }
}
