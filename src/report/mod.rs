//! Report building blocks shared by every output.

mod value;

pub use value::{display_value, BitsValue};
