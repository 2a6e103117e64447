//! `compare`: a baseline report against a candidate report, kernel by kernel.
//!
//! Kernels match by function, parameters, format, role and symbol, never by library path or
//! hash: the point is comparing two builds of the same kernels. Accuracy, non-finite runs,
//! hygiene, special values and crashes are judged; throughput and provenance are only shown.

pub mod diff;
pub mod load;
pub mod table;

pub use diff::{compare, Change, Comparison, KernelDiff, Row, Tolerance};
pub use load::{load, Figures, KernelKey, Loaded};

/// Version tag of `compare --json`.
pub const COMPARE_SCHEMA: &str = "ulpgauge-compare/1";
