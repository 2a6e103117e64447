//! 8-bit affine-quantized activations (`check --format i8|u8`).
//!
//! A quantized kernel maps 8-bit codes to 8-bit codes: the real input of code q is
//! S_in·(q − Z_in), the exact output t = f(x)/S_out + Z_out, and the correctly rounded code
//! clamps RNE(t) to the type's range. All 256 codes are always measured. Data flows one way:
//! [`spec`] (scales and zero points) → [`reference`] (the 256 exact outputs) and the kernel's
//! codes → [`measure`] (steps, matches, listed misses) → [`report`] (JSON, terminal, CSV).

pub mod manifest;
pub mod measure;
pub mod reference;
pub mod report;
pub mod spec;

pub use measure::{measure, Limit, Measures};
pub use reference::{expected_table, Expected};
pub use report::QuantReport;
pub use spec::{IntType, QuantSpec};
