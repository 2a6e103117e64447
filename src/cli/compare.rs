//! `ulpgauge compare BASELINE.json CANDIDATE.json [--tolerance ULP]`.
//!
//! Exit status: 1 when a judged figure got worse beyond the tolerance, a check that passed now
//! fails, or a baseline kernel is missing from the candidate; 0 otherwise; 2 bad input.

use super::Failure;
use crate::compare::{self, table, Comparison, Tolerance, COMPARE_SCHEMA};
use crate::report::model::SCHEMA;
use crate::report::{check_writable, is_stdout, write_atomic};
use std::path::PathBuf;

/// Arguments of `compare`.
#[derive(clap::Args, Debug, Clone)]
pub struct Args {
    /// The baseline: a check report (one kernel or a manifest run) or a certificate.
    #[arg(value_name = "BASELINE.json")]
    pub baseline: PathBuf,
    /// The candidate, in the same schema.
    #[arg(value_name = "CANDIDATE.json")]
    pub candidate: PathBuf,
    /// Ulps the max and mean ulp errors may grow by before they count as worse.
    #[arg(long, value_name = "ULP", default_value_t = 0.0)]
    pub tolerance: f64,
    /// How much the correctly rounded and faithful fractions may drop (0 to 1).
    #[arg(long, value_name = "F", default_value_t = 0.0)]
    pub fraction_tolerance: f64,
    /// Also write the comparison as JSON.
    #[arg(long, value_name = "FILE")]
    pub json: Option<PathBuf>,
    /// Write the comparison as a self-contained HTML page, changes highlighted.
    #[arg(long, value_name = "FILE.html")]
    pub html: Option<PathBuf>,
    /// Write JUnit-style XML (a suite per kernel, a case per judged figure) for CI.
    #[arg(long, value_name = "FILE.xml")]
    pub junit: Option<PathBuf>,
    /// Print only the summary and the kernels that changed.
    #[arg(long)]
    pub changed_only: bool,
}

/// Runs `compare`.
pub fn run(args: Args) -> Result<i32, Failure> {
    for (value, flag, max) in [
        (args.tolerance, "--tolerance", f64::INFINITY),
        (args.fraction_tolerance, "--fraction-tolerance", 1.0),
    ] {
        if !(value.is_finite() && (0.0..=max).contains(&value)) {
            return Err(Failure::bad_input(format!(
                "{flag} must be a finite number >= 0{}, got {value}",
                if max.is_finite() { " and <= 1" } else { "" }
            )));
        }
    }
    let baseline = compare::load(&args.baseline, "baseline").map_err(Failure::bad_input)?;
    let candidate = compare::load(&args.candidate, "candidate").map_err(Failure::bad_input)?;
    if baseline.schema != candidate.schema {
        return Err(Failure::bad_input(format!(
            "different schema versions: baseline {} is {}, candidate {} is {}",
            args.baseline.display(),
            baseline.schema,
            args.candidate.display(),
            candidate.schema
        )));
    }
    if baseline.schema != SCHEMA {
        return Err(Failure::bad_input(format!(
            "schema {} is not supported (this ulpgauge reads {SCHEMA})",
            baseline.schema
        )));
    }
    for (name, loaded) in [("baseline", &baseline), ("candidate", &candidate)] {
        if let Some(key) = compare::diff::duplicate(&loaded.kernels) {
            return Err(Failure::bad_input(format!(
                "{name}: kernel {key} is listed twice, so it cannot be matched"
            )));
        }
    }
    for path in [&args.json, &args.html, &args.junit].into_iter().flatten() {
        check_writable(path).map_err(Failure::bad_input)?;
    }
    let tol = Tolerance {
        ulp: args.tolerance,
        fraction: args.fraction_tolerance,
    };
    let (kernels, missing, added) = compare::compare(&baseline.kernels, &candidate.kernels, tol);
    let exit_code = i32::from(!missing.is_empty() || kernels.iter().any(|k| k.worse));
    let comparison = Comparison {
        schema: COMPARE_SCHEMA,
        baseline: args.baseline.display().to_string(),
        candidate: args.candidate.display().to_string(),
        tolerance_ulp: tol.ulp,
        tolerance_fraction: tol.fraction,
        kernels,
        missing: missing.iter().map(|k| k.to_string()).collect(),
        added: added.iter().map(|k| k.to_string()).collect(),
        exit_code,
    };
    if let Some(path) = &args.json {
        let mut text = serde_json::to_string_pretty(&comparison).map_err(|e| Failure {
            code: 1,
            message: format!("comparison: {e}"),
        })?;
        text.push('\n');
        write_atomic(path, &text).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.html {
        let text =
            crate::report::html::comparison_page(&comparison).map_err(|message| Failure {
                code: 1,
                message: format!("html report: {message}"),
            })?;
        write_atomic(path, &text).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.junit {
        write_atomic(path, &crate::report::junit::comparison(&comparison))
            .map_err(Failure::bad_input)?;
    }
    if !args.json.as_deref().is_some_and(is_stdout) {
        say!("{}", table::render(&comparison, args.changed_only));
    }
    Ok(exit_code)
}
