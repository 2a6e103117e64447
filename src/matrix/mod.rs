//! The compiler matrix: build the same kernels with several compilers and flags, check every
//! build, and tabulate kernel × build → max ulp, correctly rounded fraction, failed checks.

pub mod build;
pub mod table;

pub use build::{Build, BuildStatus};

use crate::report::CheckReport;
use serde::Serialize;

/// Version tag of the matrix JSON.
pub const MATRIX_SCHEMA: &str = "ulpgauge-matrix/1";

/// A build with its outcome.
#[derive(Clone, Debug, Serialize)]
pub struct BuildResult {
    /// The build.
    #[serde(flatten)]
    pub build: Build,
    /// Built, skipped or failed.
    pub status: BuildStatus,
    /// Why it was skipped or failed.
    pub note: Option<String>,
    /// The compiler strings of the built library's ELF `.comment`.
    pub compiler: Option<String>,
}

/// One kernel of one build.
#[derive(Clone, Debug, Serialize)]
pub struct Cell {
    /// The kernel's row label (symbol).
    pub kernel: String,
    /// Catalog function.
    pub function: String,
    /// Format.
    pub format: String,
    /// Role.
    pub role: String,
    /// The build's label.
    pub build: String,
    /// Largest ulp error (`null` when the kernel could not be checked).
    pub max_ulp: Option<f64>,
    /// Mean ulp error.
    pub mean_ulp: Option<f64>,
    /// Correctly rounded fraction.
    pub correctly_rounded: Option<f64>,
    /// Faithful fraction.
    pub faithful: Option<f64>,
    /// Failed hygiene checks and special-value rules.
    pub failed_checks: Option<usize>,
    /// The failed checks, in words.
    pub failed: Vec<String>,
    /// "SIGSEGV at 0x…" or "hang at 0x…".
    pub crash: Option<String>,
    /// Why the kernel could not be checked in this build.
    pub error: Option<String>,
}

impl Cell {
    /// The cell of a finished check.
    pub fn of(report: &CheckReport, kernel: &str, build: &str) -> Cell {
        let a = &report.accuracy.figures;
        Cell {
            kernel: kernel.to_string(),
            function: report.function.clone(),
            format: report.format.to_string(),
            role: report.role.clone(),
            build: build.to_string(),
            max_ulp: Some(a.max_ulp),
            mean_ulp: Some(a.mean_ulp),
            correctly_rounded: Some(a.correctly_rounded),
            faithful: Some(a.faithful),
            failed_checks: Some(report.verdict.failed.len()),
            failed: report.verdict.failed.clone(),
            crash: report
                .crash
                .as_ref()
                .map(|c| format!("{} at {}", c.signal, c.input.bits)),
            error: None,
        }
    }
}

/// The whole matrix.
#[derive(Clone, Debug, Serialize)]
pub struct Matrix {
    /// [`MATRIX_SCHEMA`].
    pub schema: &'static str,
    /// The manifest.
    pub manifest: String,
    /// The sweep, in words.
    pub sweep: String,
    /// The builds in order.
    pub builds: Vec<BuildResult>,
    /// Row labels in manifest order.
    pub kernels: Vec<String>,
    /// One cell per kernel and built build.
    pub cells: Vec<Cell>,
}
