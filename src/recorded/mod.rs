//! Recorded outputs: kernels measured from (x, ŷ) pairs saved as .npy arrays by any framework,
//! instead of being called.
//!
//! A recorded set is a kernel that can answer only for the inputs it holds. [`Recorded`] opens
//! and validates the arrays ([`column`]: one .npy file, [`element`]: the dtypes that carry each
//! format), surveys them in one pass ([`survey`]: coverage, repeats, non-determinism, unfilled
//! arrays) and answers lookups from a store that fits the set: a slot per pattern for 16-bit
//! formats ([`table`]), a sorted copy for binary32 sets of up to 2^23 elements ([`sorted`]),
//! windows read from disk for larger ones, which must be in bit order ([`streamed`]).
//! [`write`] writes the arrays `ulpgauge inputs` produces.

pub mod column;
pub mod element;
pub mod files;
mod group;
pub mod set;
pub mod sorted;
pub mod state;
pub mod streamed;
pub mod survey;
pub mod table;
pub mod write;

pub use element::Element;
pub use set::{Recorded, RecordedPaths};
pub use state::{RecordedState, ThresholdWalk};
pub use survey::Survey;
pub use write::{natural_element, write_patterns};
