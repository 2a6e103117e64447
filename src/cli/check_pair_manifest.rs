//! `check --manifest` of a manifest with two-input (gated) entries: every entry configured
//! first (bad input stops before any kernel runs), the one-input entries checked as usual, then
//! each pair entry over its pairs; one report set `{"schema", "kernels": […]}` with the pair
//! checks after the one-input kernels, in manifest order among themselves.

use super::check::{check_specs, Args, RoleArg};
use super::check_pairs;
use super::Failure;
use crate::kernel::{EntryExtras, KernelSpec, PairEntry};
use crate::report::{check_writable, html, write_atomic};
use crate::sweep::SweepKind;
use clap::ValueEnum;
use std::path::Path;

/// Runs the manifest.
pub fn run(
    path: &Path,
    args: &Args,
    entries: Vec<(KernelSpec, EntryExtras)>,
    pairs: Vec<PairEntry>,
) -> Result<i32, Failure> {
    let unsupported = [
        (
            args.caller_fpenv.is_some() || entries.iter().any(|(_, e)| e.caller_fpenv.is_some()),
            "caller-fpenv",
        ),
        (!args.cpu_mask.is_empty(), "--cpu-mask"),
        (
            entries.iter().any(|(_, e)| !e.variants.is_empty()),
            "variants",
        ),
        (args.csv.is_some(), "--csv"),
        (args.findings.is_some(), "--findings"),
        (args.plot.is_some(), "--plot"),
    ];
    if let Some((_, what)) = unsupported.iter().find(|(given, _)| *given) {
        return Err(Failure::bad_input(format!(
            "manifest {}: {what} is not available with two-input entries ({}) yet (such a manifest takes --json, --html, --junit, --shard, --max-ulp, --allow-non-finite and the sweep options)",
            path.display(),
            pairs[0].function
        )));
    }
    for path in [&args.json, &args.html, &args.junit].into_iter().flatten() {
        check_writable(path).map_err(Failure::bad_input)?;
    }
    let terminal = !args.quiet && !args.json.as_deref().is_some_and(crate::report::is_stdout);
    let mut plans = Vec::new();
    for entry in &pairs {
        let in_entry = |f: Failure| {
            Failure::bad_input(format!(
                "{}: kernel {}: {}",
                path.display(),
                entry.symbol,
                f.message
            ))
        };
        let entry_args = entry_args(args, entry).map_err(in_entry)?;
        let plan = check_pairs::configure(&entry_args, &entry.function).map_err(in_entry)?;
        plans.push((entry_args, plan));
    }
    let specs: Vec<KernelSpec> = entries.into_iter().map(|(spec, _)| spec).collect();
    let reports = check_specs(path, &specs, args, terminal)?;
    let mut kernels = serde_json::to_value(&reports)
        .map_err(|e| Failure::bad_input(e.to_string()))?
        .as_array()
        .cloned()
        .unwrap_or_default();
    let mut codes: Vec<i32> = reports.iter().map(|r| r.verdict.exit_code).collect();
    let mut checks = Vec::new();
    for (entry_args, plan) in &plans {
        let check = check_pairs::measure(plan, entry_args)?;
        let (code, reasons) = check.verdict();
        if terminal {
            check_pairs::terminal(&check, code, &reasons);
        }
        kernels.push(check.json(code, &reasons));
        codes.push(code);
        checks.push(check);
    }
    let pairs: Vec<_> = checks.iter().collect();
    if let Some(path) = &args.junit {
        let xml = crate::report::junit::check_with_pairs(&reports, &pairs);
        write_atomic(path, &xml).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.html {
        let inputs = reports
            .iter()
            .map(html::KernelInput::of)
            .collect::<Result<Vec<_>, String>>()
            .map_err(|message| Failure { code: 1, message })?;
        let page =
            html::check_page_with_pairs(&inputs, &pairs, true).map_err(|message| Failure {
                code: 1,
                message: format!("html report: {message}"),
            })?;
        write_atomic(path, &page).map_err(Failure::bad_input)?;
    }
    if let Some(json) = &args.json {
        let value = serde_json::json!({
            "schema": crate::report::model::SCHEMA,
            "kernels": kernels,
        });
        let text = serde_json::to_string_pretty(&value).expect("json") + "\n";
        write_atomic(json, &text).map_err(Failure::bad_input)?;
    }
    Ok(super::check::combine(codes))
}

/// The options of `check --function F …` a pair entry stands for: its keys, and the command's
/// `--max-ulp`, `--allow-non-finite`, `--shard` and runner options where it has none.
fn entry_args(args: &Args, entry: &PairEntry) -> Result<Args, Failure> {
    let mut a = args.clone();
    a.manifest = None;
    a.json = None;
    a.plot = None;
    a.lib = Some(entry.library.clone());
    a.symbol = Some(entry.symbol.clone());
    a.function = Some(entry.function.clone());
    a.format = Some(entry.format.clone());
    a.role = RoleArg::from_str(&entry.role, false).map_err(Failure::bad_input)?;
    a.function_args.params = entry.params.clone();
    a.in_place = entry.in_place;
    a.not_thread_safe = !entry.thread_safe;
    let o = &mut a.sweep_options;
    o.range = entry.range.clone();
    o.sweep = match &entry.sweep {
        Some(text) => text
            .split(',')
            .map(|k| {
                SweepKind::from_str(k.trim(), false)
                    .map_err(|_| Failure::bad_input(format!("sweep: unknown kind {k:?}")))
            })
            .collect::<Result<_, _>>()?,
        None => Vec::new(),
    };
    o.points = entry.points;
    if let Some(k) = entry.per_binade {
        o.per_binade = k;
    }
    if let Some(seed) = entry.seed {
        o.seed = seed;
    }
    a.max_ulp = entry.max_ulp.or(args.max_ulp);
    a.allow_non_finite = entry.allow_non_finite.unwrap_or(args.allow_non_finite);
    Ok(a)
}
