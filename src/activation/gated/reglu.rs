//! ReGLU: relu(a)·b.

use super::super::{relu::Relu, Activation};
use super::Gated;

/// ReGLU.
pub struct Reglu;

impl Gated for Reglu {
    fn name(&self) -> &'static str {
        "reglu"
    }
    fn definition(&self) -> &'static str {
        "relu(a)*b = max(a, 0)*b"
    }
    fn act(&self) -> &'static dyn Activation {
        &Relu
    }
}
