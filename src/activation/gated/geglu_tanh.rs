//! GeGLU with GELU's tanh approximation: gelu-tanh(a)·b.

use super::super::{gelu_tanh::GeluTanh, Activation};
use super::Gated;

/// GeGLU (tanh form).
pub struct GegluTanh;

impl Gated for GegluTanh {
    fn name(&self) -> &'static str {
        "geglu-tanh"
    }
    fn definition(&self) -> &'static str {
        "gelu-tanh(a)*b = 0.5*a*(1 + tanh(c*(a + k*a^3)))*b, c = sqrt(2/pi), k = 0.044715"
    }
    fn act(&self) -> &'static dyn Activation {
        &GeluTanh
    }
}
