//! Correctly rounded references: exact values of the catalog functions, rounded once into a
//! target format.

mod constant;
mod dyadic;
mod engine;
pub mod fast;
mod interval;
mod pair;
mod round;

pub use constant::{exact_in_range, parse_decimal, ParamRounding, Real};
pub use engine::{round_constant, Evaluator, Reference, ReferenceError, MAX_PRECISION};
pub use interval::Ival;
pub use pair::{PairEvaluator, Prepared, PREPARED_PRECISION};
pub use round::{floor_log2, floor_log2_rational, round_float, round_rational};
