//! ulpgauge: measures how accurate activation-function kernels are.
//!
//! Data flows one way: inputs → kernel and [`reference`] → measures → report.  [`format`]
//! holds the bit-level number formats, [`activation`] the catalog of functions with their exact
//! definitions, [`reference`] the correctly rounded MPFR engine.

pub mod activation;
pub mod api;
pub mod certify;
pub mod check;
pub mod cli;
pub mod compare;
pub mod format;
pub mod guard;
pub mod kernel;
pub mod matrix;
pub mod measure;
pub mod merge;
pub mod quant;
pub mod recorded;
pub mod reference;
pub mod report;
pub mod sweep;
