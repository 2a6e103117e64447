//! `ulpgauge merge SHARD.json... [--json OUT]`: joins the reports of `check --shard I/N`
//! runs into the report of the whole sweep.
//!
//! Exit status: that of the merged check (0, 1 a finding failed, 3 the kernel crashed), or 2
//! when the files are not the complete, matching shards of one check.

use super::check::combine;
use super::Failure;
use crate::merge;
use crate::report::{check_writable, html, write_atomic};
use serde_json::Value;
use std::path::PathBuf;

/// Arguments of `merge`.
#[derive(clap::Args, Debug, Clone)]
pub struct Args {
    /// The shard reports: one per shard 1/N … N/N, in any order.
    #[arg(value_name = "SHARD.json", required = true)]
    pub shards: Vec<PathBuf>,
    /// Write the merged report as JSON.
    #[arg(long, value_name = "FILE")]
    pub json: Option<PathBuf>,
    /// Write the merged report as a self-contained HTML page.
    #[arg(long, value_name = "FILE")]
    pub html: Option<PathBuf>,
    /// Write the heat map of a merged pair check (gated kernel) as SVG.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Print no terminal summary.
    #[arg(long)]
    pub quiet: bool,
}

/// One summary line of a merged kernel report.
fn summary(report: &Value) -> String {
    let text = |v: &Value| match v {
        Value::String(s) => s.clone(),
        Value::Null => "-".into(),
        other => other.to_string(),
    };
    let a = &report["accuracy"];
    let worst = &a["worst"]["input"];
    format!(
        "{} {} {} {}: max {} ulp at x = {} ({}), {} points ({}), {:.4}% correctly rounded, exit {}",
        text(&report["function"]),
        text(&report["format"]),
        text(&report["role"]),
        text(&report["kernel"]["symbol"]),
        text(&a["max_ulp"]),
        text(&worst["value"]),
        text(&worst["bits"]),
        text(&a["points"]),
        text(&a["coverage"]),
        a["correctly_rounded"].as_f64().unwrap_or(0.0) * 100.0,
        text(&report["verdict"]["exit_code"]),
    )
}

/// One summary line of a merged pair check.
fn pair_summary(check: &crate::report::pair_check::PairCheck) -> String {
    let (code, _) = check.verdict();
    let worst = check
        .acc
        .worst
        .map_or("no finite output compared".to_string(), |w| {
            format!(
                "max {} ulp at a = {}, b = {}",
                w.ulp,
                crate::format::hex(check.format, w.a),
                crate::format::hex(check.format, w.b)
            )
        });
    format!(
        "{} {} {} {}: {worst}, {}, {} spurious non-finite, exit {code}",
        check.function,
        check.format.name(),
        check.role,
        check.symbol,
        check.coverage(),
        check.acc.spurious_non_finite
    )
}

/// Runs `merge`.
pub fn run(args: Args) -> Result<i32, Failure> {
    for path in [&args.json, &args.html, &args.plot].into_iter().flatten() {
        check_writable(path).map_err(Failure::bad_input)?;
    }
    let files = args
        .shards
        .iter()
        .map(|p| merge::read(p))
        .collect::<Result<Vec<_>, String>>()
        .map_err(Failure::bad_input)?;
    let merged = merge::merge(&files).map_err(Failure::bad_input)?;
    let pair_checks: Vec<_> = merged.pair_checks.iter().flatten().collect();
    if args.plot.is_some() && (merged.manifest || pair_checks.len() != 1) {
        return Err(Failure::bad_input(
            "merge --plot draws the heat map of one pair check's shards (a gated kernel run without --manifest)",
        ));
    }
    if let Some(path) = &args.json {
        let mut text = serde_json::to_string_pretty(&merged.value)
            .map_err(|e| Failure::bad_input(e.to_string()))?;
        text.push('\n');
        write_atomic(path, &text).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.plot {
        let check = pair_checks[0];
        let svg =
            crate::report::pair_heatmap::render(&check.acc, check.format, &check.plot_title());
        write_atomic(path, &svg).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.html {
        let inputs: Vec<html::KernelInput> = merged
            .kernels
            .iter()
            .zip(&merged.plots)
            .zip(&merged.pair_checks)
            .filter(|(_, pair)| pair.is_none())
            .map(|((report, buckets), _)| html::KernelInput {
                report: report.clone(),
                buckets: buckets.clone(),
            })
            .collect();
        let text = html::check_page_with_pairs(&inputs, &pair_checks, merged.manifest).map_err(
            |message| Failure {
                code: 1,
                message: format!("html report: {message}"),
            },
        )?;
        write_atomic(path, &text).map_err(Failure::bad_input)?;
    }
    if !args.quiet {
        let what = if merged.manifest {
            "manifest run"
        } else {
            "check"
        };
        sayln!(
            "merged {} shard reports of one {what} ({} kernel(s))",
            files.len(),
            merged.kernels.len()
        );
        for (report, pair) in merged.kernels.iter().zip(&merged.pair_checks) {
            match pair {
                Some(check) => sayln!("  {}", pair_summary(check)),
                None => sayln!("  {}", summary(report)),
            }
        }
    }
    Ok(combine(merged.kernels.iter().map(|r| {
        r["verdict"]["exit_code"].as_i64().unwrap_or(0) as i32
    })))
}
