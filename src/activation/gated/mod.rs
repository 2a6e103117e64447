//! Gated activations of two inputs: y = act(a)·b, the product part of the exact value (rounded
//! once). Each one names the unary catalog activation it applies to a, so its exact evaluation
//! is that activation's; adding one is one file here and one line in [`GATED`].

mod geglu;
mod geglu_tanh;
mod reglu;
mod swiglu;

use super::{Activation, Role};

/// A gated activation y(a, b) = act(a)·b.
pub trait Gated: Send + Sync {
    /// Catalog name (`geglu-tanh`).
    fn name(&self) -> &'static str;
    /// Definition of y, one line.
    fn definition(&self) -> &'static str;
    /// The unary activation applied to a (its parameters and constants are the gated one's).
    fn act(&self) -> &'static dyn Activation;
}

/// Which function of (a, b) is evaluated.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, serde::Serialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum GatedRole {
    /// y = act(a)·b.
    Forward,
    /// ∂y/∂a = act′(a)·b (at a kink of act, its right-hand derivative, as unary `derivative`).
    DerivativeA,
    /// ∂y/∂b = act(a).
    DerivativeB,
}

impl GatedRole {
    /// Every role, in the order reports list them.
    pub const ALL: [GatedRole; 3] = [
        GatedRole::Forward,
        GatedRole::DerivativeA,
        GatedRole::DerivativeB,
    ];
    /// Its name on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            GatedRole::Forward => "forward",
            GatedRole::DerivativeA => "derivative-a",
            GatedRole::DerivativeB => "derivative-b",
        }
    }
    /// The role by name.
    pub fn parse(name: &str) -> Option<GatedRole> {
        GatedRole::ALL.into_iter().find(|r| r.name() == name)
    }
    /// The unary role of act that enters, and whether it is multiplied by b.
    pub fn inner(self) -> (Role, bool) {
        match self {
            GatedRole::Forward => (Role::Forward, true),
            GatedRole::DerivativeA => (Role::Derivative, true),
            GatedRole::DerivativeB => (Role::Forward, false),
        }
    }
}

/// A gated catalog entry.
pub type GatedEntry = &'static dyn Gated;

static GATED: [GatedEntry; 4] = [
    &swiglu::Swiglu,
    &geglu::Geglu,
    &geglu_tanh::GegluTanh,
    &reglu::Reglu,
];

/// Every gated function, in catalog order.
pub fn gated_catalog() -> &'static [GatedEntry] {
    &GATED
}

/// The gated function with this name.
pub fn lookup_gated(name: &str) -> Option<GatedEntry> {
    GATED.iter().copied().find(|g| g.name() == name)
}

/// ∂y/∂a and ∂y/∂b of a gated function, one line each, from its activation's name.
pub fn partial_definitions(g: &dyn Gated) -> (String, String) {
    let act = g.act().name();
    (format!("{act}'(a)*b"), format!("{act}(a)"))
}
