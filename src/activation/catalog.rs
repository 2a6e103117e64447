//! The list of catalog functions. Adding a function: one file implementing
//! [`Activation`](super::Activation) and one line here.

use super::Activation;

/// A catalog entry.
pub type Entry = &'static dyn Activation;

static CATALOG: [Entry; 19] = [
    &super::step::Step,
    &super::sigmoid::Sigmoid,
    &super::tanh::Tanh,
    &super::relu::Relu,
    &super::leaky_relu::LeakyRelu,
    &super::elu::Elu,
    &super::swish::Swish { fixed_beta: false },
    &super::swish::Swish { fixed_beta: true },
    &super::gelu::Gelu,
    &super::gelu_tanh::GeluTanh,
    &super::softplus::Softplus,
    &super::mish::Mish,
    &super::selu::Selu,
    &super::hard_sigmoid::HardSigmoid,
    &super::hard_swish::HardSwish,
    &super::relu6::Relu6,
    &super::celu::Celu,
    &super::log_sigmoid::LogSigmoid,
    &super::softsign::Softsign,
];

/// Every catalog function, in catalog order.
pub fn catalog() -> &'static [Entry] {
    &CATALOG
}

/// The function with this name.
pub fn lookup(name: &str) -> Option<Entry> {
    CATALOG.iter().copied().find(|f| f.name() == name)
}
