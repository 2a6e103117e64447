//! `check`: sweep a kernel's inputs, compare with correctly rounded references, measure, and
//! gather one [`CheckReport`].
//!
//! The kernel is reached only through [`KernelUnderTest`]; the shared-library runner and the
//! in-process [`InProcessKernel`] both implement it.

mod assemble;
mod builtin;
mod compare_runs;
mod confirm;
mod gathered;
mod kernel;
pub mod pairs;
mod probe;
mod recorded;
mod runner_kernel;
mod shard;
mod stream;

pub use crate::report::provenance::{
    cpu_info, gmp_version, library_info, mpfr_version, utc_now, Provenance,
};
pub use builtin::{blended_elu, builtin, builtin_mixed, BUILTIN_NAMES};
pub use compare_runs::compare_runs;
pub use confirm::Confirmation;
pub use gathered::{Acceptance, CrashAt, Crashes, Figures, Gathered};
pub use kernel::{HygieneEntry, InProcessKernel, KernelCrash, KernelOutput, KernelUnderTest};
pub use probe::{gradient_factor, Folding, Prober, RoleReferences};
pub use recorded::run_recorded;
pub use runner_kernel::RunnerKernel;
pub use shard::{Shard, STATE_VERSION};

use crate::activation::{Constants, Entry, Role};
use crate::format::Format;
use crate::measure::{self, Point, Probe};
use crate::reference::{Evaluator, ParamRounding};
use crate::report::model::*;
use crate::sweep::{self, Coverage, Inputs, SweepSpec};
use rug::Rational;
use std::path::PathBuf;
use stream::Stream;

/// What the kernel computes: the runner's role type, shared so a manifest entry maps 1:1.
pub use crate::kernel::KernelRole as CheckRole;
use crate::reference::fast::FastEvaluator;

/// Everything a check needs besides the kernel.
#[derive(Clone)]
pub struct CheckConfig {
    /// Catalog function.
    pub function: Entry,
    /// Format of the kernel's outputs (and of its inputs unless `input_format` differs).
    pub format: &'static dyn Format,
    /// Format of the kernel's inputs (and of a gradient's g): the sweep runs over it.
    pub input_format: &'static dyn Format,
    /// What the kernel computes.
    pub role: CheckRole,
    /// Validated `--param` values.
    pub params: Vec<(String, Rational)>,
    /// How parameters enter the reference.
    pub param_rounding: ParamRounding,
    /// The sweep.
    pub sweep: SweepSpec,
    /// `--abs-floor`.
    pub abs_floor: Option<f64>,
    /// `--max-ulp`.
    pub max_ulp: Option<f64>,
    /// `--allow-non-finite`: non-finite runs are reported but do not fail the check.
    pub allow_non_finite: bool,
    /// List every point whose error exceeds this (CSV `point` rows).
    pub list_over: Option<f64>,
    /// Non-finite runs listed in the report (the longest; every run is counted).
    pub listed_runs: usize,
    /// Library file, for provenance.
    pub library: Option<PathBuf>,
    /// Symbol, for the report.
    pub symbol: Option<String>,
    /// Allow a progress bar on stderr.
    pub progress: bool,
    /// Which reference path computes the sweep's references.
    pub reference: ReferencePath,
    /// `--shard I/N`: measure only this part of the sweep and write the state `merge` joins.
    pub shard: Option<Shard>,
}

/// How references are computed (`--reference`).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ReferencePath {
    /// The proven double-double fast path where it decides, MPFR elsewhere (identical results).
    #[default]
    Auto,
    /// MPFR only.
    Mpfr,
}

/// Hygiene sample size and throughput sample size.
const HYGIENE_SAMPLE: usize = 1024;
const SPEED_SAMPLE: usize = 8192;

/// An evenly spread sample of the finite inputs (two passes over a lazy sweep, nothing listed
/// but the sample).
fn spread(format: &dyn Format, inputs: &Inputs, n: usize) -> Vec<u32> {
    let len: u64 = inputs
        .finite_runs(format)
        .map(|(a, b)| (b - a) as u64 + 1)
        .sum();
    if len <= n as u64 {
        return inputs
            .finite_runs(format)
            .flat_map(|(a, b)| a..=b)
            .collect();
    }
    sweep::at_sorted(
        inputs.finite_runs(format),
        (0..n as u64).map(|i| i * len / n as u64),
    )
}

/// Ordinal span of the finite inputs, if any.
fn ordinal_span(format: &dyn Format, inputs: &Inputs) -> Option<(i64, i64)> {
    inputs
        .finite_runs(format)
        .flat_map(|(a, b)| [format.ordinal(a), format.ordinal(b)])
        .fold(None, |span, o| match span {
            None => Some((o, o)),
            Some((lo, hi)) => Some((o.min(lo), o.max(hi))),
        })
}

/// What a check settles before it calls the kernel: the constants, the references of the
/// role, the planned sweep and the probes.
struct Setup {
    constants: Constants,
    refs: RoleReferences,
    plan: sweep::Plan,
    role_thresholds: Vec<sweep::Threshold>,
    probes: Vec<u32>,
}

impl Setup {
    fn new(config: &CheckConfig) -> Result<Setup, String> {
        let format = config.format;
        let input = config.input_format;
        let function = config.function;
        let constants =
            Constants::resolve_checked(function, &config.params, config.param_rounding, format)?;
        let kinks = function
            .kinks(&constants)
            .into_iter()
            .map(|k| (k.at as f64, k.left))
            .collect();
        let forward =
            Evaluator::new(function, Role::Forward, constants.clone(), format).with_input(input);
        let derivative =
            Evaluator::new(function, Role::Derivative, constants.clone(), format).with_input(input);
        let fast = (config.reference == ReferencePath::Auto).then(|| {
            (
                FastEvaluator::new(&forward),
                FastEvaluator::new(&derivative),
            )
        });
        let refs = RoleReferences {
            forward,
            derivative,
            role: config.role,
            seed: config.sweep.seed,
            kinks,
            fast,
        };
        let role_is_forward = config.role == CheckRole::Forward;
        let (interesting, role_thresholds) = sweep::interesting_points(
            &refs.forward,
            &refs.derivative,
            role_is_forward,
            config.sweep.neighbours,
        );
        let plan = sweep::plan(input, &config.sweep, interesting)?;
        let probes = probe_inputs(input, &plan, &refs, role_is_forward);
        Ok(Setup {
            constants,
            refs,
            plan,
            role_thresholds,
            probes,
        })
    }
}

/// The edge probes of the plan, the format's special values and, for derivative roles, both
/// zeros and every kink (so the kink report never depends on the sweep); sorted, distinct.
fn probe_inputs(
    format: &dyn Format,
    plan: &sweep::Plan,
    refs: &RoleReferences,
    role_is_forward: bool,
) -> Vec<u32> {
    let mut probes = plan.probes.clone();
    probes.extend(sweep::format_specials(format));
    if !role_is_forward {
        for (at, _) in &refs.kinks {
            if let Some(b) = format.from_f64_exact(*at) {
                probes.push(b);
                probes.push(b | (format.infinity(true) & !format.infinity(false)));
            }
        }
    }
    probes.sort_unstable();
    probes.dedup();
    probes
}

/// The inputs a check of `config` evaluates before any search: its planned sweep and its
/// probes (sorted, distinct); what `ulpgauge inputs` writes for recording elsewhere.
pub fn planned_inputs(config: &CheckConfig) -> Result<(sweep::Plan, Vec<u32>), String> {
    let setup = Setup::new(config)?;
    Ok((setup.plan, setup.probes))
}

/// Runs a check of one kernel.
pub fn run_check(
    kernel: &mut dyn KernelUnderTest,
    config: &CheckConfig,
) -> Result<CheckReport, String> {
    run_check_into(kernel, config, &mut measure::NoSink)
}

/// Runs a check of one kernel, handing every non-finite run and every point over the listing
/// limit to `sink` as it is found.
pub fn run_check_into(
    kernel: &mut dyn KernelUnderTest,
    config: &CheckConfig,
    sink: &mut dyn measure::FindingSink,
) -> Result<CheckReport, String> {
    let setup = Setup::new(config)?;
    let mut prober = Prober::new(kernel, &setup.refs, config.progress);
    let (gathered, thresholds) = gather(&mut prober, &setup, config, sink, false);
    let format = config.input_format;
    // Shown beside the figures, not measured: these inputs are not counted.
    let centres = assemble::neighbourhood_centres(format, &setup.plan.interesting, &thresholds);
    let neighbourhoods =
        measure::neighbourhoods(format, config.format, &centres, &mut prober, NEIGHBOURHOOD);
    let hygiene_sample = spread(format, &setup.plan.measured, HYGIENE_SAMPLE);
    let (first, second) = prober.arguments(&hygiene_sample);
    let hygiene = prober.kernel().hygiene(&first, second.as_deref());
    let speed_sample = spread(format, &setup.plan.measured, SPEED_SAMPLE);
    let (first, second) = prober.arguments(&speed_sample);
    let ns_per_element = prober.kernel().ns_per_element(&first, second.as_deref());
    if std::env::var_os("ULPGAUGE_PIPELINE_STATS").is_some() {
        eprint!("{}", probe::stats::report());
    }
    let strides = prober.kernel().strides();
    let mut report = assemble::report(
        config,
        &setup,
        gathered,
        thresholds,
        hygiene,
        ns_per_element,
        neighbourhoods,
        sink,
    )?;
    if let Some((sx, sy)) = strides {
        report.kernel.signature = Some("strided");
        report.kernel.strides = Some([sx, sy]);
    }
    Ok(report)
}

/// Inputs on each side of a threshold or kink in the report's `neighbourhoods`.
const NEIGHBOURHOOD: u32 = 8;

/// Calls the kernel on the measured inputs (this shard's part), the probes, the inputs next to
/// non-finite runs and the threshold searches, and gathers what it measured.
///
/// A `recorded` set is measured whole (a shard's files hold its part already), its gaps are
/// scanned only at recorded inputs (the measured ones and the probes) and its thresholds are
/// walked by the set itself, not searched here.
fn gather(
    prober: &mut Prober,
    setup: &Setup,
    config: &CheckConfig,
    sink: &mut dyn measure::FindingSink,
    recorded: bool,
) -> (Gathered, Vec<measure::ThresholdReport>) {
    let format = config.input_format;
    let output = config.format;
    let function = config.function;
    let plan = &setup.plan;
    let role_is_forward = config.role == CheckRole::Forward;
    let exhaustive = plan.coverage == Coverage::Exhaustive;
    // This part of the measured inputs (all of them unless sharded), and the measured inputs
    // just outside it, whose gaps to ours decide non-finite runs in sampled sweeps.
    let (from, to) = config
        .shard
        .filter(|_| !recorded)
        .map_or((0, plan.measured.len()), |s| s.bounds(plan.measured.len()));
    let own = plan.measured.slice(from, to);
    let before = from.checked_sub(1).and_then(|i| plan.measured.nth(i));
    prober.expect(own.len() + setup.probes.len() as u64);
    // A recorded part is a slice of the whole range's sweep: its plot grid must be the whole
    // range's, as every other part's, or `merge` would join buckets of different grids.
    let whole_range;
    let spanned = if recorded && config.shard.is_some() {
        whole_range = sweep::Inputs::of_range(format, &config.sweep.range);
        &whole_range
    } else {
        &plan.measured
    };
    // A plot grid fixed in advance keeps the plot's memory bounded; sampled sweeps of any
    // size get one too (over their measured inputs, the same in every part), recorded sets
    // keep every sample.
    let span = (exhaustive || !recorded)
        .then(|| ordinal_span(format, spanned))
        .flatten();
    let stream = Stream::new(
        measure::AccuracyAcc::new(output, config.abs_floor, config.list_over, span)
            .with_input(format),
        role_is_forward
            .then(|| measure::ShapeAcc::new(output, function.facts().monotone).with_input(format)),
        exhaustive,
        config.listed_runs,
    );
    // A recorded part is measured whole but may follow other parts.
    let leftmost = from == 0 && config.shard.map_or(true, |s| !recorded || s.index == 1);
    let mut crashes = Crashes::default();
    let mut seen = 0;
    // Classes are of the outputs.
    let l = output.layout();
    if !exhaustive && !recorded {
        // A sampled sweep scans the gaps next to its non-finite runs stretch by stretch, as
        // it goes; the probes are known points of those scans, so they are evaluated after the
        // first stretch is measured (the kernel's pace known by then), before its scans.
        let probes = &mut |prober: &mut Prober, crashes: &mut Crashes, seen: &mut usize| {
            let probe_points = prober.probe(&setup.probes);
            crashes.probes = crashes_since(prober, seen);
            let mut known: Vec<measure::Known> = probe_points
                .iter()
                .filter(|p| config.sweep.range.contains(format, p.input))
                .map(|p| (p.input, measure::classes(l, p)))
                .collect();
            // Another part's input just before ours: evaluated again here, counted there.
            let (evaluated, failures) = (prober.evaluated, prober.failures.len());
            known.extend(
                prober
                    .probe(&before.into_iter().collect::<Vec<u32>>())
                    .iter()
                    .map(|p| (p.input, measure::classes(l, p))),
            );
            prober.evaluated = evaluated;
            prober.failures.truncate(failures);
            crashes_since(prober, seen);
            (probe_points, known)
        };
        let scan = Scan {
            format,
            out: l,
            probes,
            territory: territory(plan, before, from, to),
            keep: config.listed_runs,
        };
        let (stream, runs, probe_points) = stream_scanned(
            prober,
            stream,
            &own,
            sink,
            leftmost,
            scan,
            &mut crashes,
            &mut seen,
        );
        return finish_gather(
            prober,
            setup,
            config,
            stream,
            Some(runs),
            probe_points,
            crashes,
            seen,
            own.len(),
            recorded,
        );
    }
    let (stream, measured) = stream_measured(prober, stream, &own, exhaustive, sink, leftmost);
    crashes.measured = crashes_since(prober, &mut seen);
    let probe_points = prober.probe(&setup.probes);
    crashes.probes = crashes_since(prober, &mut seen);
    prober.expect(0);

    let runs = (!exhaustive).then(|| {
        let mut known = measured;
        known.extend(
            probe_points
                .iter()
                .filter(|p| config.sweep.range.contains(format, p.input))
                .map(|p| (p.input, measure::classes(l, p))),
        );
        // The gaps of a recorded set hold only inputs it did not record (every recorded one
        // in the range is measured): its runs end next to holes, and nothing is evaluated.
        let territory = recorded::territory(config.shard, &plan.measured);
        let mut only_present = recorded::PresentOnly::new(prober, &plan.measured, &setup.probes);
        let mut part = measure::non_finite_part(
            format,
            l,
            &mut known,
            &mut only_present,
            territory,
            config.listed_runs,
            sink,
        );
        part.scanned = only_present.evaluated;
        part
    });
    finish_gather(
        prober,
        setup,
        config,
        stream,
        runs,
        probe_points,
        crashes,
        seen,
        own.len(),
        recorded,
    )
}

/// The threshold searches after the measured inputs, and everything gathered.
#[allow(clippy::too_many_arguments)] // the pieces gathered so far
fn finish_gather(
    prober: &mut Prober,
    setup: &Setup,
    config: &CheckConfig,
    stream: Stream,
    runs: Option<measure::RunsPart>,
    probe_points: Vec<Point>,
    mut crashes: Crashes,
    mut seen: usize,
    inputs: u64,
    recorded: bool,
) -> (Gathered, Vec<measure::ThresholdReport>) {
    let format = config.input_format;
    let output = config.format;
    let function = config.function;
    let role_is_forward = config.role == CheckRole::Forward;
    prober.expect(0);
    crashes.scans.extend(crashes_since(prober, &mut seen));
    let search_kernel = !matches!(config.role, CheckRole::Gradient { .. });
    let evaluated = prober.evaluated;
    let thresholds = if recorded {
        Vec::new()
    } else {
        measure::thresholds(
            format,
            output,
            &setup.role_thresholds,
            prober,
            search_kernel,
            config.sweep.neighbours,
        )
    };
    crashes.thresholds = crashes_since(prober, &mut seen);
    let threshold_inputs = prober.evaluated - evaluated;
    let gathered = Gathered {
        stream,
        runs,
        probe_points,
        failures: prober.failures.clone(),
        crashes,
        inputs,
        threshold_inputs,
        keeps_negative_zero: role_is_forward && function.facts().keeps_negative_zero,
        tolerance: config.max_ulp.unwrap_or(1.0).max(1.0),
        role_is_forward,
        recorded: None,
    };
    (gathered, thresholds)
}

/// Streams the measured inputs through the accumulators, chunk by chunk in bit order, the
/// findings finished so far going to the sink after each chunk; a sampled sweep also keeps
/// each point's input and classes (its runs' gaps are scanned later).
fn stream_measured(
    prober: &mut Prober,
    stream: Stream,
    own: &Inputs,
    exhaustive: bool,
    sink: &mut dyn measure::FindingSink,
    leftmost: bool,
) -> (Stream, Vec<measure::Known>) {
    let runs = own.run_iter();
    stream_runs(prober, stream, runs, own.len(), !exhaustive, sink, leftmost)
}

/// Streams runs of inputs through the accumulators, keeping each point's input and classes
/// when `keep` (the gap scans of sampled sweeps need them).
fn stream_runs(
    prober: &mut Prober,
    mut stream: Stream,
    runs: impl Iterator<Item = (u32, u32)> + Send,
    total: u64,
    keep: bool,
    sink: &mut dyn measure::FindingSink,
    leftmost: bool,
) -> (Stream, Vec<measure::Known>) {
    let mut measured: Vec<measure::Known> = Vec::new();
    let template = stream.fresh();
    let l = stream.layout();
    let folding = Folding {
        fold: &|points: &[Point]| {
            let mut part = template.fresh();
            part.add_all(points);
            let known = keep.then(|| {
                points
                    .iter()
                    .map(|p| (p.input, measure::classes(l, p)))
                    .collect()
            });
            (part, known)
        },
        uniform: Some(&|u: &measure::Uniform| {
            let mut part = template.fresh();
            part.add_uniform(u);
            let known = keep.then(|| {
                let classes = measure::classes(l, &u.point(u.first));
                (u.first..=u.last).map(|x| (x, classes)).collect()
            });
            (part, known)
        }),
        exact: Some(&|e: &measure::ExactSpan| {
            let mut part = template.fresh();
            part.add_exact(e);
            let known = keep.then(|| {
                (e.first..=e.last)
                    .map(|x| (x, measure::classes(l, &(e.point)(x))))
                    .collect()
            });
            (part, known)
        }),
        join: &|(mut part, mut all): (Stream, Option<Vec<measure::Known>>), (later, more)| {
            part.merge(later);
            if let (Some(all), Some(more)) = (&mut all, more) {
                all.extend(more);
            }
            (part, all)
        },
    };
    let batches = probe::run_batches(runs);
    prober.probe_fold(batches, total, &folding, &mut |(part, all)| {
        stream.merge(part);
        stream.settle(sink, leftmost);
        measured.extend(all.into_iter().flatten());
    });
    (stream, measured)
}

/// Measured inputs of a sampled sweep per stretch: the known points kept while its gaps are
/// scanned (a few MiB), whatever the sweep's size.
const STRETCH: u64 = 1 << 20;

/// What the gap scans of a sampled sweep's part start from.
struct Scan<'s> {
    /// The kernel's input format (the walk's bit patterns).
    format: &'static dyn Format,
    /// The output format's layout, in which classes are read.
    out: crate::format::Layout,
    /// Evaluates the probes: their points, and their known points inside the range with the
    /// previous part's last input.
    #[allow(clippy::type_complexity)] // one phase's closure
    probes: &'s mut dyn FnMut(
        &mut Prober,
        &mut Crashes,
        &mut usize,
    ) -> (Vec<Point>, Vec<measure::Known>),
    /// The part's territory of bit patterns.
    territory: std::ops::RangeInclusive<u32>,
    /// Non-finite runs listed.
    keep: usize,
}

/// The runs of a run iterator up to `most` inputs (a run cut at the limit continues in the
/// next call).
fn take_stretch(
    runs: &mut std::iter::Peekable<sweep::RunIter<'_>>,
    carry: &mut Option<(u32, u32)>,
    most: u64,
) -> Vec<(u32, u32)> {
    let mut out = Vec::new();
    let mut room = most;
    while room > 0 {
        let Some((a, b)) = carry.take().or_else(|| runs.next()) else {
            break;
        };
        let n = (b - a) as u64 + 1;
        if n > room {
            let cut = a + (room - 1) as u32;
            out.push((a, cut));
            *carry = Some((cut + 1, b));
            break;
        }
        out.push((a, b));
        room -= n;
    }
    out
}

/// Streams a sampled sweep's measured inputs stretch by stretch (in bit order): each stretch
/// through the accumulators, then its gaps next to non-finite runs scanned, continuing one
/// walk of the part's territory; only a stretch's known points are held at a time.
#[allow(clippy::too_many_arguments)] // one phase's inputs and its crash bookkeeping
fn stream_scanned(
    prober: &mut Prober,
    mut stream: Stream,
    own: &Inputs,
    sink: &mut dyn measure::FindingSink,
    leftmost: bool,
    scan: Scan,
    crashes: &mut Crashes,
    seen: &mut usize,
) -> (Stream, measure::RunsPart, Vec<Point>) {
    let format = scan.format;
    let (start, end) = (*scan.territory.start(), *scan.territory.end());
    let walk_leftmost = start == 0 && !scan.territory.is_empty();
    let mut part = measure::RunsPart::new(format, scan.keep);
    let mut runs = own.run_iter().peekable();
    let mut carry = None;
    // The known point just before the next stretch's territory.
    let mut left: Vec<measure::Known> = Vec::new();
    let mut next_start = start;
    let mut first = true;
    let mut probed: Option<(Vec<Point>, Vec<measure::Known>)> = None;
    loop {
        let stretch = take_stretch(&mut runs, &mut carry, STRETCH);
        if stretch.is_empty() && !first {
            break;
        }
        first = false;
        let last = carry.is_none() && runs.peek().is_none();
        let inputs: u64 = stretch.iter().map(|&(a, b)| (b - a) as u64 + 1).sum();
        let (next, mut known) =
            stream_measured_runs(prober, stream, &stretch, inputs, sink, leftmost);
        stream = next;
        crashes.measured.extend(crashes_since(prober, seen));
        if probed.is_none() {
            probed = Some((scan.probes)(prober, crashes, seen));
        }
        let probe_known = &probed.as_ref().expect("probed").1;
        let stop = match (last, stretch.last()) {
            (false, Some(&(_, b))) => b,
            _ => end,
        };
        known.extend(probe_known.iter().copied());
        known.append(&mut left);
        let territory = if scan.territory.is_empty() {
            scan.territory.clone()
        } else {
            next_start..=stop
        };
        part = measure::continue_part(
            part,
            walk_leftmost,
            scan.out,
            &mut known,
            prober,
            territory,
            sink,
        );
        crashes.scans.extend(crashes_since(prober, seen));
        // `known` is sorted now: the last known point at or below the stretch's end leads the
        // next territory.
        let at = known.partition_point(|k| k.0 <= stop);
        left.extend(at.checked_sub(1).map(|i| known[i]));
        match stop.checked_add(1) {
            Some(n) if !last => next_start = n,
            _ => break,
        }
    }
    (stream, part, probed.map(|p| p.0).unwrap_or_default())
}

/// Streams a list of runs through the accumulators, keeping each point's input and classes.
fn stream_measured_runs(
    prober: &mut Prober,
    stream: Stream,
    runs: &[(u32, u32)],
    total: u64,
    sink: &mut dyn measure::FindingSink,
    leftmost: bool,
) -> (Stream, Vec<measure::Known>) {
    let runs = runs.iter().copied();
    stream_runs(prober, stream, runs, total, true, sink, leftmost)
}

/// The crashes met since the last call, for the phase that just ended.
fn crashes_since(prober: &Prober, seen: &mut usize) -> Vec<CrashAt> {
    let new = prober.crashes[*seen..].iter().map(CrashAt::from).collect();
    *seen = prober.crashes.len();
    new
}

/// A part's territory of bit patterns: from just after the previous part's last measured
/// input to its own last one (to the last pattern for the final part); empty when the part
/// has no inputs.
fn territory(
    plan: &sweep::Plan,
    before: Option<u32>,
    from: u64,
    to: u64,
) -> std::ops::RangeInclusive<u32> {
    let first = match before {
        None => Some(0),
        Some(b) => b.checked_add(1),
    };
    let last = if to == plan.measured.len() {
        Some(u32::MAX)
    } else {
        to.checked_sub(1)
            .filter(|&i| i >= from)
            .and_then(|i| plan.measured.nth(i))
    };
    match (first, last) {
        (Some(f), Some(l)) => f..=l,
        // Deliberately empty: a part without inputs owns no patterns.
        #[allow(clippy::reversed_empty_ranges)]
        _ => 1..=0,
    }
}
