//! A fast reference path: double-word evaluations of sigmoid, tanh, swish/SiLU, ELU, GELU,
//! softplus, log-sigmoid, mish, SELU, CELU and GELU-tanh (forward and derivative) with proven
//! error bounds, decided by the engine's own rule.
//!
//! [`FastEvaluator::try_reference`] returns a reference only when the fast value ± its bound
//! decides the rounding into the format and the clamped binade; then the reference equals the
//! MPFR engine's (bits and binade identical, approximation within an ulp of binary64).
//! Otherwise, and for inputs it does not cover (±0, NaN, ±∞, parameters that are not exact
//! binary64 numbers), it returns None and the caller asks the engine.
//!
//! Layout: [`dd`] double-word arithmetic and bound composition, [`exp`] e^x and e^x − 1,
//! [`decide`] the decision rule and rounding, one file per function family, `arch` the build with
//! hardware FMA chosen at run time.

mod arch;
mod celu;
mod common;
pub mod dd;
mod decide;
mod elu;
mod exact;
pub mod exp;
mod gelu;
mod gelu_tanh;
mod log;
mod log_sigmoid;
mod logistic;
mod mills;
mod mish;
mod piecewise;
mod regions;
mod selu;
mod series;
mod softplus;
mod softsign;

pub use decide::FAST_PRECISION;

use super::{Evaluator, Reference};
use crate::activation::Role;
use crate::format::{Class, ExactValue, Layout};
use decide::finish;
use rug::Rational;

/// Which function, with its parameter as an exact f64.
#[derive(Clone, Copy, Debug)]
pub(super) enum Kind {
    Sigmoid,
    Tanh,
    Swish(f64),
    Elu(f64),
    Gelu,
    Softplus,
    LogSigmoid,
    Mish,
    Selu(f64, f64),
    SeluWide(selu::Wide),
    Celu(f64),
    GeluTanh(dd::Ev, dd::Ev),
    Step,
    Relu,
    LeakyRelu((f64, f64)),
    Relu6,
    HardSigmoid,
    HardSwish,
    Softsign,
}

/// The fast path for one evaluator's function, role, parameters and format.
pub struct FastEvaluator {
    kind: Kind,
    role: Role,
    /// The format's bit arithmetic, inlined into the evaluation.
    layout: Layout,
    /// The CPU has FMA: use [`arch::reference_fma`].
    #[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
    fma: bool,
}

/// The references of a span of consecutive patterns of one sign and one exponent field that
/// are the inputs scaled by one power of two ([`FastEvaluator::scaled_span`]): after the first
/// pattern (whose own reference is kept: a power of two may sit in the binade below), the
/// reference of x is the pattern x + offset, its value exactly, in one binade.
#[derive(Clone, Copy, Debug)]
pub struct ScaledSpan {
    /// The span's first pattern.
    first: u32,
    /// Its reference.
    first_reference: Reference,
    /// Reference pattern minus input pattern (both normal, of one sign).
    offset: u32,
    /// The binade of every reference after the first.
    binade: i32,
    /// The recorded precision of every reference.
    precision: u32,
    /// The format's bit arithmetic.
    layout: Layout,
}

impl ScaledSpan {
    /// The reference pattern at x, a pattern of the span.
    #[inline(always)]
    pub fn bits(&self, x: u32) -> u32 {
        if x == self.first {
            self.first_reference.bits
        } else {
            x.wrapping_add(self.offset)
        }
    }

    /// The reference at x, a pattern of the span.
    #[inline(always)]
    pub fn reference(&self, x: u32) -> Reference {
        if x == self.first {
            return self.first_reference;
        }
        let bits = x.wrapping_add(self.offset);
        Reference {
            bits,
            exact: Some(ExactValue {
                approx: self.layout.to_f64(bits),
                binade: self.binade,
            }),
            precision: self.precision,
        }
    }
}

/// A rational parameter as an f64, when exactly representable, positive and normal.
fn exact_f64(q: Option<&Rational>) -> Option<f64> {
    let q = q?;
    let f = q.to_f64();
    (f.is_normal() && f > 0.0 && Rational::from_f64(f).as_ref() == Some(q)).then_some(f)
}

impl FastEvaluator {
    /// None when this function/role/params/format has no fast path.
    ///
    /// The engine does not expose a gradient scale; as a guard, a few inputs are compared
    /// with the engine at construction and any difference (a scaled evaluator, say) disables
    /// the fast path.
    pub fn new(evaluator: &Evaluator) -> Option<FastEvaluator> {
        let c = evaluator.constants();
        let kind = match evaluator.function().name() {
            "sigmoid" => Kind::Sigmoid,
            "tanh" => Kind::Tanh,
            "silu" => Kind::Swish(1.0),
            "swish" => Kind::Swish(exact_f64(c.get("beta").exact())?),
            "elu" => Kind::Elu(exact_f64(c.get("alpha").exact())?),
            "gelu" => Kind::Gelu,
            "softplus" => Kind::Softplus,
            "log-sigmoid" => Kind::LogSigmoid,
            "mish" => Kind::Mish,
            "selu" => selu::kind(c)?,
            "celu" => Kind::Celu(celu::parameter(exact_f64(c.get("alpha").exact())?)?),
            "gelu-tanh" => gelu_tanh::kind(c)?,
            "step" => Kind::Step,
            "relu" => Kind::Relu,
            "leaky-relu" => Kind::LeakyRelu(piecewise::leaky_alpha(c.get("alpha").exact())?),
            "relu6" => Kind::Relu6,
            "hard-sigmoid" => Kind::HardSigmoid,
            "hard-swish" => Kind::HardSwish,
            "softsign" => Kind::Softsign,
            _ => return None,
        };
        let format = evaluator.format();
        if evaluator.input_format().name() != format.name() {
            return None; // one layout decodes the input and rounds the output
        }
        // A saturating format clamps the exact value itself (the engine's `saturated`); its
        // 256 patterns do not need this path.
        if format.precision() > 24 || format.emin() < -300 || format.layout().is_saturating() {
            return None;
        }
        let fast = FastEvaluator {
            kind,
            role: evaluator.role(),
            layout: format.layout(),
            fma: arch::has_fma(),
        };
        for x in [1.0, -1.0, 0.5, -3.0, 5.0] {
            let bits = format.from_f64_exact(x)?;
            let mpfr = evaluator.reference(bits).ok()?;
            if let Some(r) = fast.try_reference(bits) {
                let same = r.bits == mpfr.bits
                    && r.exact.map(|e| e.binade) == mpfr.exact.map(|e| e.binade);
                if !same {
                    return None;
                }
            }
        }
        Some(fast)
    }

    /// Some(reference) only when the fast value ± its proven error bound decides the
    /// rounding into the format and the binade; None means "ask the engine".
    #[inline]
    pub fn try_reference(&self, x_bits: u32) -> Option<Reference> {
        #[cfg(target_arch = "x86_64")]
        if self.fma {
            // SAFETY: `fma` is set only when the CPU reports FMA.
            return unsafe { arch::reference_fma(self, x_bits) };
        }
        self.evaluate(x_bits)
    }

    /// The reference of every input of the consecutive patterns `first..=last`, when the fast
    /// path proves it is one and the same: both ends finite, nonzero, of one sign, in the same
    /// constant-reference region ([`regions`]), and decided alike.  `None` says nothing.
    pub fn constant_span(&self, first: u32, last: u32) -> Option<Reference> {
        let format = self.layout;
        if first > last || (first ^ last) & format.sign_bit() != 0 {
            return None;
        }
        let region = |bits: u32| match format.classify(bits) {
            Class::Normal | Class::Subnormal => {
                regions::region(self.kind, self.role, format.to_f64(bits))
            }
            _ => None,
        };
        let id = region(first)?;
        if region(last) != Some(id) {
            return None;
        }
        let (a, b) = (self.try_reference(first)?, self.try_reference(last)?);
        let same = a.bits == b.bits
            && a.precision == b.precision
            && a.exact.map(|e| (e.approx.to_bits(), e.binade))
                == b.exact.map(|e| (e.approx.to_bits(), e.binade));
        same.then_some(a)
    }

    /// The references of the consecutive patterns `first..=last` when the fast path proves they
    /// are the inputs scaled by one power of two ([`regions::scaled`]): both ends of one sign
    /// and one exponent field, normal, in the same scaled region, each scaled input a normal
    /// number of the format, and both ends' references as the region says.  `None` says nothing.
    pub fn scaled_span(&self, first: u32, last: u32) -> Option<ScaledSpan> {
        let format = self.layout;
        if first > last
            || format.sign_and_exponent(first) != format.sign_and_exponent(last)
            || format.classify(first) != Class::Normal
        {
            return None;
        }
        let (xa, xb) = (format.to_f64(first), format.to_f64(last));
        let region = regions::scaled(self.kind, self.role, xa)?;
        if regions::scaled(self.kind, self.role, xb) != Some(region) {
            return None;
        }
        // Exact: the scaled inputs are checked to be normal numbers of the format.
        let scale = dd::pow2(region.shift);
        let (ba, bb) = (xa * scale, xb * scale);
        let (bits_a, bits_b) = (format.normal_bits(ba)?, format.normal_bits(bb)?);
        let (ra, rb) = (self.try_reference(first)?, self.try_reference(last)?);
        let is = |r: &Reference, bits: u32, b: f64| {
            r.bits == bits && r.exact.is_some_and(|e| e.approx.to_bits() == b.to_bits())
        };
        let binade = dd::ilogb(bb);
        // Only the field's first pattern can be a power of two, whose binade may be one lower.
        let last_binade = rb.exact.map(|e| e.binade) == Some(binade) || first == last;
        if !is(&ra, bits_a, ba)
            || !is(&rb, bits_b, bb)
            || ra.precision != rb.precision
            || !last_binade
        {
            return None;
        }
        Some(ScaledSpan {
            first,
            first_reference: ra,
            offset: bits_b.wrapping_sub(last),
            binade,
            precision: rb.precision,
            layout: format,
        })
    }

    /// The evaluation itself, inlined into each build (portable and [`arch`]).
    #[inline(always)]
    fn evaluate(&self, x_bits: u32) -> Option<Reference> {
        let format = self.layout;
        match format.classify(x_bits) {
            Class::Normal | Class::Subnormal => {}
            _ => return None,
        }
        let x = format.to_f64(x_bits);
        let outcome = match self.kind {
            Kind::Sigmoid => logistic::sigmoid(format, x, self.role),
            Kind::Tanh => logistic::tanh(format, x, self.role),
            Kind::Swish(beta) => logistic::swish(format, x, beta, self.role),
            Kind::Elu(alpha) => elu::elu(format, x, alpha, self.role),
            Kind::Gelu => gelu::gelu(format, x, self.role),
            Kind::Softplus => softplus::softplus(format, x, self.role),
            Kind::LogSigmoid => log_sigmoid::log_sigmoid(format, x, self.role),
            Kind::Mish => mish::mish(format, x, self.role),
            Kind::Selu(l, la) => selu::selu(format, x, l, la, self.role),
            Kind::SeluWide(c) => selu::selu_wide(format, x, c, self.role),
            Kind::Celu(alpha) => celu::celu(format, x, alpha, self.role),
            Kind::GeluTanh(c, k) => gelu_tanh::gelu_tanh(format, x, c, k, self.role),
            Kind::Step => piecewise::step(format, x, self.role),
            Kind::Relu => piecewise::relu(format, x, self.role),
            Kind::LeakyRelu(alpha) => piecewise::leaky_relu(format, x, alpha, self.role),
            Kind::Relu6 => piecewise::relu6(format, x, self.role),
            Kind::HardSigmoid => piecewise::hard_sigmoid(format, x, self.role),
            Kind::HardSwish => piecewise::hard_swish(format, x, self.role),
            Kind::Softsign => softsign::softsign(format, x, self.role),
        };
        finish(format, outcome)
    }
}
