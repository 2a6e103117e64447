//! GeGLU: gelu(a)·b, GELU in its erf form.

use super::super::{gelu::Gelu, Activation};
use super::Gated;

/// GeGLU (erf form).
pub struct Geglu;

impl Gated for Geglu {
    fn name(&self) -> &'static str {
        "geglu"
    }
    fn definition(&self) -> &'static str {
        "gelu(a)*b = 0.5*a*(1 + erf(a/sqrt(2)))*b"
    }
    fn act(&self) -> &'static dyn Activation {
        &Gelu
    }
}
