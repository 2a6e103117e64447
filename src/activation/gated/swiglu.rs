//! SwiGLU: silu(a)·b.

use super::super::{swish::Swish, Activation};
use super::Gated;

/// SwiGLU (SiLU, i.e. swish with β = 1, gating b).
pub struct Swiglu;

impl Gated for Swiglu {
    fn name(&self) -> &'static str {
        "swiglu"
    }
    fn definition(&self) -> &'static str {
        "silu(a)*b = a*sigmoid(a)*b"
    }
    fn act(&self) -> &'static dyn Activation {
        &Swish { fixed_beta: true }
    }
}
