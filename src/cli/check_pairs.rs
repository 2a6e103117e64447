//! `check` of a gated kernel (swiglu, geglu, geglu-tanh, reglu) over pairs (a, b): options,
//! the run, and its terminal and JSON reports.

use super::check::{runner_options, Args, RoleArg};
use super::Failure;
use crate::activation::GatedRole;
use crate::check::pairs::{regions, run_pairs, PairSweep, PairSweepId};
use crate::check::{RunnerKernel, Shard};
use crate::format::{hex, Format};
use crate::kernel::{KernelRole, KernelSpec, ParamPassing, Runner};
use crate::reference::PairEvaluator;
use crate::report::display_value;
use crate::report::pair_check::{PairCheck, PairCoverage, PairShardPart, LISTED_REGIONS};
use crate::sweep::{InputRange, SweepKind};

/// Random pairs of a sampled sweep without `--points`.
const DEFAULT_RANDOM_PAIRS: u64 = 1 << 16;

/// Runs `check` for a gated function.
pub fn run(args: &Args, function: &str) -> Result<i32, Failure> {
    refuse_unsupported(args, function)?;
    for path in [&args.json, &args.plot, &args.html, &args.junit, &args.csv]
        .into_iter()
        .flatten()
    {
        crate::report::check_writable(path).map_err(Failure::bad_input)?;
    }
    let plan = configure(args, function)?;
    let report = measure(&plan, args)?;
    let (code, reasons) = report.verdict();
    if let Some(path) = &args.json {
        let text = serde_json::to_string_pretty(&report.json(code, &reasons)).expect("json");
        crate::report::write_atomic(path, &(text + "\n")).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.plot {
        let svg =
            crate::report::pair_heatmap::render(&report.acc, report.format, &report.plot_title());
        crate::report::write_atomic(path, &svg).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.html {
        let page = crate::report::html::check_page_with_pairs(&[], &[&report], false).map_err(
            |message| Failure {
                code: 1,
                message: format!("html report: {message}"),
            },
        )?;
        crate::report::write_atomic(path, &page).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.csv {
        let text = report.csv().map_err(|message| Failure {
            code: 1,
            message: format!("csv report: {message}"),
        })?;
        crate::report::write_atomic(path, &text).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.junit {
        let xml = crate::report::junit::check_with_pairs(&[], &[&report]);
        crate::report::write_atomic(path, &xml).map_err(Failure::bad_input)?;
    }
    if !args.quiet {
        terminal(&report, code, &reasons);
    }
    Ok(code)
}

/// A configured pair check: every option checked, nothing run yet.
pub struct Plan {
    evaluator: PairEvaluator,
    sweep: PairSweep,
    a_total: u64,
    spec: KernelSpec,
}

/// Checks the options of a pair check (bad input before any kernel runs).
pub fn configure(args: &Args, function: &str) -> Result<Plan, Failure> {
    let role = match args.role {
        RoleArg::Forward => GatedRole::Forward,
        RoleArg::DerivativeA => GatedRole::DerivativeA,
        RoleArg::DerivativeB => GatedRole::DerivativeB,
        RoleArg::Derivative | RoleArg::Gradient => {
            return Err(Failure::bad_input(format!(
                "{function} takes two inputs: --role forward, derivative-a (dy/da) or derivative-b (dy/db)"
            )))
        }
    };
    let format_name = args
        .format
        .clone()
        .ok_or_else(|| Failure::bad_input("--format is required (or use --manifest)"))?;
    let evaluator = super::resolve_pair(function, &format_name, role, &args.function_args)?
        .expect("a gated function");
    let format = evaluator.format();
    let (sweep, a_total) = pair_sweep(format, args)?;
    let library = args
        .lib
        .clone()
        .ok_or_else(|| Failure::bad_input("--lib is required (or use --manifest)"))?;
    let symbol = args
        .symbol
        .clone()
        .ok_or_else(|| Failure::bad_input("--symbol is required with --lib"))?;
    // The pair ABI (a, b, y, n) is the two-array shape gradient kernels use (x, g, dx, n).
    let spec = KernelSpec {
        library,
        symbol,
        function: function.to_string(),
        format,
        input_format: format,
        role: KernelRole::Gradient { from_output: false },
        params: Vec::new(),
        param_passing: ParamPassing::Baked,
        in_place: args.in_place,
        thread_safe: !args.not_thread_safe,
        signature: crate::kernel::Signature::Contiguous,
    };
    runner_options(args)?;
    Ok(Plan {
        evaluator,
        sweep,
        a_total,
        spec,
    })
}

/// Runs a configured pair check.
pub fn measure(plan: &Plan, args: &Args) -> Result<PairCheck, Failure> {
    let Plan {
        evaluator,
        sweep,
        a_total,
        spec,
    } = plan;
    let (evaluator, sweep, a_total, format) = (evaluator, sweep, *a_total, evaluator.format());
    let function = evaluator.gated().name();
    let runner = Runner::start(spec, runner_options(args)?).map_err(Failure::bad_input)?;
    let mut kernel = RunnerKernel(runner);
    let total = sweep.count(format);
    let started = std::time::Instant::now();
    let show_progress = !args.quiet && !args.no_progress;
    let mut done = 0u64;
    let mut last = std::time::Instant::now();
    let outcome = run_pairs(&mut kernel, evaluator, sweep, |n| {
        done += n;
        if show_progress && last.elapsed().as_secs_f64() > 2.0 {
            last = std::time::Instant::now();
            eprint!(
                "\r{function}: {done}/{total} pairs ({:.1}%)  ",
                100.0 * done as f64 / total as f64
            );
        }
    });
    if show_progress && done > 0 {
        eprintln!();
    }
    if let Some(e) = &outcome.reference_error {
        return Err(Failure {
            code: 1,
            message: format!("reference: {e}"),
        });
    }
    let seconds = started.elapsed().as_secs_f64();
    let shard = args
        .shard
        .as_deref()
        .map(Shard::parse)
        .transpose()
        .map_err(Failure::bad_input)?;
    let part = match (sweep, shard) {
        (PairSweep::Exhaustive { a }, Some(shard)) => Some(PairShardPart {
            shard,
            sweep: PairSweepId {
                range: args.sweep_options.range.clone(),
                a_total,
                params: args.function_args.params.clone(),
                param_rounding: format!("{:?}", args.function_args.param_rounding),
            },
            a_count: a.len() as u64,
            a_first: a.first().copied(),
            a_last: a.last().copied(),
        }),
        _ => None,
    };
    let report = PairCheck {
        function: evaluator.gated().name().to_string(),
        role: evaluator.role().name().to_string(),
        format,
        library: spec.library.display().to_string(),
        symbol: spec.symbol.clone(),
        coverage: coverage_of(sweep),
        part,
        acc: outcome.acc,
        crashes: outcome.crashes,
        max_ulp: args.max_ulp,
        allow_non_finite: args.allow_non_finite,
        seconds,
    };
    Ok(report)
}

/// Options of a one-input check that a pair check does not take yet: one line each.
fn refuse_unsupported(args: &Args, function: &str) -> Result<(), Failure> {
    let unsupported = [
        (args.inputs.is_some(), "--inputs"),
        (args.manifest.is_some(), "--manifest"),
        (args.findings.is_some(), "--findings"),
        (args.caller_fpenv.is_some(), "--caller-fpenv"),
        (!args.cpu_mask.is_empty(), "--cpu-mask"),
        (args.builtin_kernel.is_some(), "--builtin-kernel"),
        (args.from_output, "--from-output"),
    ];
    match unsupported.iter().find(|(given, _)| *given) {
        Some((_, flag)) => Err(Failure::bad_input(format!(
            "{flag} is not available for the two-input function {function} yet (check over pairs takes --lib, --symbol, --format, --role, --sweep, --range, --points, --per-binade, --seed, --shard, --json, --plot, --html, --junit, --csv, --max-ulp, --allow-non-finite)"
        ))),
        None => Ok(()),
    }
}

/// What a report says of a sweep's pairs.
fn coverage_of(sweep: &PairSweep) -> PairCoverage {
    match sweep {
        PairSweep::Exhaustive { a } => PairCoverage::Exhaustive {
            a_count: a.len() as u64,
        },
        PairSweep::Sampled {
            per_cell,
            edge,
            random,
            ..
        } => PairCoverage::Sampled {
            per_cell: *per_cell,
            edge: *edge,
            random: *random,
        },
    }
}

/// The pairs `--sweep`, `--range`, `--points`, `--per-binade`, `--seed` and `--shard` ask for,
/// and the patterns of a in the whole exhaustive sweep (before `--shard` takes its part).
fn pair_sweep(format: &'static dyn Format, args: &Args) -> Result<(PairSweep, u64), Failure> {
    let o = &args.sweep_options;
    let exhaustive = if o.sweep.is_empty() {
        format.width() <= 16
    } else if o.sweep.contains(&SweepKind::Exhaustive) {
        if o.sweep.len() > 1 {
            return Err(Failure::bad_input(
                "--sweep exhaustive over pairs takes no other sweep kind",
            ));
        }
        true
    } else {
        false
    };
    let shard = args
        .shard
        .as_deref()
        .map(Shard::parse)
        .transpose()
        .map_err(Failure::bad_input)?;
    if exhaustive {
        if format.width() > 16 {
            return Err(Failure::bad_input(format!(
                "an exhaustive sweep over {} pairs has 2^{} of them: use --sweep dense,edge,random",
                format.name(),
                2 * format.width()
            )));
        }
        let mut a: Vec<u32> = match &o.range {
            Some(text) => InputRange::parse(format, text)
                .map_err(Failure::bad_input)?
                .patterns(format),
            None => (0..format.pattern_count() as u32).collect(),
        };
        let a_total = a.len() as u64;
        if let Some(s) = shard {
            let (from, to) = s.bounds(a_total);
            a = a[from as usize..to as usize].to_vec();
        }
        return Ok((PairSweep::Exhaustive { a }, a_total));
    }
    if o.range.is_some() || shard.is_some() {
        return Err(Failure::bad_input(
            "--range and --shard split an exhaustive pair sweep (a's patterns); a sampled one is bounded already",
        ));
    }
    let kinds = if o.sweep.is_empty() {
        vec![SweepKind::Dense, SweepKind::Edge, SweepKind::Random]
    } else {
        o.sweep.clone()
    };
    let random = if kinds.contains(&SweepKind::Random) {
        o.points.unwrap_or(DEFAULT_RANDOM_PAIRS)
    } else {
        0
    };
    if random > 1 << 30 {
        return Err(Failure::bad_input(format!(
            "--points {random} is more than a sampled pair sweep takes (at most 2^30)"
        )));
    }
    Ok((
        PairSweep::Sampled {
            // --per-binade K (default 256) gives K/256 pairs per cell, at least one: binary32's
            // grid already has 514 × 514 cells.
            per_cell: if kinds.contains(&SweepKind::Dense) {
                (o.per_binade / 256).clamp(1, 64)
            } else {
                0
            },
            edge: kinds.contains(&SweepKind::Edge),
            random,
            seed: o.seed,
        },
        0,
    ))
}

/// The terminal summary of a pair check (a run or a merge of its shards).
pub fn terminal(report: &PairCheck, code: i32, reasons: &[String]) {
    let f = report.format;
    let acc = &report.acc;
    let v = |bits| format!("{} ({})", hex(f, bits), display_value(f, bits));
    sayln!(
        "{} {} {}  {} in {}",
        report.function,
        report.role,
        f.name(),
        report.symbol,
        report.library
    );
    sayln!(
        "  coverage    {} in {:.1} s",
        report.coverage(),
        report.seconds
    );
    match &acc.worst {
        Some(w) => sayln!(
            "  max ulp     {:.3} at a = {}, b = {}: output {}, reference {}",
            w.ulp,
            v(w.a),
            v(w.b),
            v(w.output),
            v(w.reference)
        ),
        None => sayln!("  max ulp     no finite output to compare"),
    }
    sayln!(
        "  pairs       {} compared, {} exact, {} within 0.5 ulp, {} over 1 ulp",
        acc.compared,
        acc.exact,
        acc.within_half,
        acc.over_one
    );
    let rs = regions(acc);
    sayln!(
        "  non-finite  {} spurious (y finite) in {} regions of binades, {} missing or wrong (y infinite or NaN)",
        acc.spurious_non_finite,
        rs.len(),
        acc.missing_non_finite
    );
    for r in rs.iter().take(LISTED_REGIONS) {
        sayln!("    {}", report.region_text(r));
    }
    if rs.len() > LISTED_REGIONS {
        let rest: u64 = rs[LISTED_REGIONS..].iter().map(|r| r.pairs).sum();
        sayln!(
            "    and {} more regions ({rest} pairs)",
            rs.len() - LISTED_REGIONS
        );
    }
    if acc.crashed > 0 {
        sayln!("  crashes     {} pairs", acc.crashed);
        for (a, b, what) in &report.crashes {
            sayln!("    a = {}, b = {}: {what}", v(*a), v(*b));
        }
    }
    match code {
        0 => sayln!("  verdict     PASS"),
        _ => sayln!("  verdict     FAIL: {}", reasons.join("; ")),
    }
}
