//! The catalog of activation functions: exact definitions, derivatives, parameters and facts.
//!
//! One file per function, each implementing [`Activation`]; [`catalog`] lists them.  A function
//! evaluates itself either exactly (a [`Value::Exact`] rational, for piecewise-rational pieces)
//! or as an interval enclosure at a requested precision (a [`Value::Enclosed`]); the reference
//! engine turns either into a correctly rounded result.

mod catalog;
pub mod common;
pub mod gated;

mod celu;
mod elu;
mod gelu;
mod gelu_tanh;
mod hard_sigmoid;
mod hard_swish;
mod leaky_relu;
mod log_sigmoid;
mod mish;
mod relu;
mod relu6;
mod selu;
mod sigmoid;
mod softplus;
mod softsign;
mod step;
mod swish;
mod tanh;

pub use catalog::{catalog, lookup, Entry};
pub use gated::{gated_catalog, lookup_gated, Gated, GatedEntry, GatedRole};

use crate::format::Format;
use crate::reference::{Ival, ParamRounding, Real};
use rug::{Float, Rational};

/// Which function of x is evaluated.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, serde::Serialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum Role {
    /// f(x).
    Forward,
    /// f′(x); at a kink, the right-hand limit of f′ (see [`Kink`]).
    Derivative,
}

/// The value of f(x) or f′(x) at one input, as the function can best give it.
#[derive(Clone, Debug)]
pub enum Value {
    /// The exact value, a rational (the piecewise-rational functions and pieces).
    Exact(Rational),
    /// An interval that contains the (irrational or hard to write) exact value.
    Enclosed(Ival),
    /// base + delta, with delta's interval excluding 0 (once the precision suffices): how a
    /// function states that it sits just above or below an asymptote such as 1 or x.  When
    /// |delta| is far below half an ulp of base, the sign of delta alone decides the rounding
    /// and the binade, however many bits |delta| would need.
    Near {
        /// The exact value approached.
        base: Rational,
        /// The (small) signed distance to it.
        delta: Ival,
    },
}

/// A limit of f or f′ as x → ±∞.
#[derive(Clone, Debug, PartialEq)]
pub enum Limit {
    /// A finite nonzero limit.
    Finite(Rational),
    /// Zero, approached from below (−0) or above (+0); an exactly zero tail gives +0.
    Zero {
        /// Whether the limit is approached from below.
        negative: bool,
    },
    /// ±∞.
    Infinite {
        /// −∞ when true.
        negative: bool,
    },
}

/// A point where f′ jumps: its one-sided values.
#[derive(Clone, Debug, PartialEq)]
pub struct Kink {
    /// Where (an integer in every catalog function).
    pub at: i32,
    /// lim f′(t) as t → at from below.
    pub left: Rational,
    /// lim f′(t) as t → at from above; what `Role::Derivative` returns at the kink itself.
    pub right: Rational,
}

/// A parameter a user can set.
#[derive(Clone, Copy, Debug)]
pub struct ParamSpec {
    /// Its name on the command line (`--param alpha=0.2`).
    pub name: &'static str,
    /// Default, as an exact decimal.
    pub default: &'static str,
    /// What values are accepted.
    pub domain: Domain,
    /// One line of documentation.
    pub doc: &'static str,
}

/// Accepted values of a parameter.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Domain {
    /// Any finite number.
    Any,
    /// Finite and > 0.
    Positive,
}

/// Qualitative facts about a function, for `ulpgauge functions` and for the checks.
#[derive(Clone, Copy, Debug, serde::Serialize)]
pub struct Facts {
    /// Non-decreasing on the whole line (for the default parameters).
    pub monotone: bool,
    /// Bounded below.
    pub bounded_below: bool,
    /// Bounded above.
    pub bounded_above: bool,
    /// f(−0) = −0: f behaves like c·x near 0, so IEEE arithmetic keeps the sign of zero.
    pub keeps_negative_zero: bool,
    /// f is continuous (step is the only one that is not).
    pub continuous: bool,
}

/// Resolved parameters and constants of one evaluation, at one precision.
pub struct Ctx<'a> {
    /// Working precision in bits for this pass of the Ziv loop.
    pub prec: u32,
    /// Named parameter and constant values.
    pub constants: &'a Constants,
}

impl Ctx<'_> {
    /// Encloses a parameter or constant at the working precision.
    pub fn ival(&self, name: &str) -> Ival {
        self.constants.get(name).enclose(self.prec)
    }
    /// A parameter or constant that is rational by construction.
    pub fn exact(&self, name: &str) -> &Rational {
        self.constants
            .get(name)
            .exact()
            .unwrap_or_else(|| panic!("constant {name} is not rational"))
    }
}

/// The values of a function's parameters and built-in constants for one run.
#[derive(Clone, Debug)]
pub struct Constants {
    entries: Vec<(&'static str, Real)>,
}

impl Constants {
    /// Resolves `user` values over the defaults, then applies `rounding` for `format`.
    /// `user` holds (name, value) pairs already validated by [`Constants::parse_params`].
    pub fn resolve(
        function: &dyn Activation,
        user: &[(String, Rational)],
        rounding: ParamRounding,
        format: &dyn Format,
    ) -> Constants {
        let mut entries = Vec::new();
        for spec in function.params() {
            let value = user
                .iter()
                .rev()
                .find(|(n, _)| n == spec.name)
                .map(|(_, v)| v.clone())
                .unwrap_or_else(|| crate::reference::parse_decimal(spec.default).expect("default"));
            entries.push((spec.name, rounding.apply(&Real::Exact(value), format)));
        }
        for (name, value) in function.constants() {
            entries.push((name, rounding.apply(&value, format)));
        }
        Constants { entries }
    }
    /// [`Constants::resolve`], refusing a parameter or constant that the rounding turns into
    /// ±∞ or 0 (one line naming it).
    pub fn resolve_checked(
        function: &dyn Activation,
        user: &[(String, Rational)],
        rounding: ParamRounding,
        format: &dyn Format,
    ) -> Result<Constants, String> {
        for (name, value) in user {
            rounding.apply_checked(
                &Real::Exact(value.clone()),
                format,
                &format!(
                    "parameter {name}={:e}",
                    rug::Float::with_val(53, value).to_f64()
                ),
            )?;
        }
        for (name, value) in function.constants() {
            rounding.apply_checked(&value, format, &format!("constant {name}"))?;
        }
        Ok(Constants::resolve(function, user, rounding, format))
    }
    /// Validates `name=value` strings against a function's parameters.
    pub fn parse_params(
        function: &dyn Activation,
        assignments: &[String],
    ) -> Result<Vec<(String, Rational)>, String> {
        assignments
            .iter()
            .map(|text| {
                let (name, value) = text
                    .split_once('=')
                    .ok_or_else(|| format!("parameter '{text}' is not NAME=VALUE"))?;
                let spec = function
                    .params()
                    .iter()
                    .find(|s| s.name == name)
                    .ok_or_else(|| {
                        let known: Vec<_> = function.params().iter().map(|s| s.name).collect();
                        format!(
                            "{} has no parameter '{name}' (it takes: {})",
                            function.name(),
                            if known.is_empty() {
                                "none".to_string()
                            } else {
                                known.join(", ")
                            }
                        )
                    })?;
                let q = crate::reference::parse_decimal(value.trim())
                    .map_err(|e| format!("parameter {name}: {e}"))?;
                if !crate::reference::exact_in_range(&q) {
                    return Err(format!(
                        "parameter {name}={value} is outside the binary64 range (2^-1074 to 2^1024 in magnitude)"
                    ));
                }
                if spec.domain == Domain::Positive && q.cmp0() != std::cmp::Ordering::Greater {
                    return Err(format!("parameter {name} must be > 0, got {value}"));
                }
                Ok((name.to_string(), q))
            })
            .collect()
    }
    /// Looks a value up by name; every name a function uses is resolved.
    pub fn get(&self, name: &str) -> &Real {
        &self
            .entries
            .iter()
            .find(|(n, _)| *n == name)
            .unwrap_or_else(|| panic!("unknown constant {name}"))
            .1
    }
    /// A parameter or constant that is rational by construction (every user parameter is).
    pub fn rational(&self, name: &str) -> Rational {
        self.get(name)
            .exact()
            .unwrap_or_else(|| panic!("constant {name} is not rational"))
            .clone()
    }
    /// All entries in declaration order.
    pub fn entries(&self) -> &[(&'static str, Real)] {
        &self.entries
    }
}

/// An activation function with its derivative.
pub trait Activation: Send + Sync {
    /// Catalog name (`leaky-relu`).
    fn name(&self) -> &'static str;
    /// Definition of f, one line.
    fn definition(&self) -> &'static str;
    /// Definition of f′, one line.
    fn derivative_definition(&self) -> &'static str;
    /// User-settable parameters.
    fn params(&self) -> &'static [ParamSpec] {
        &[]
    }
    /// Built-in constants, which `--param-rounding` rounds like parameters.
    fn constants(&self) -> Vec<(&'static str, Real)> {
        Vec::new()
    }
    /// Qualitative facts.
    fn facts(&self) -> Facts;
    /// Points where f′ jumps, with both one-sided values.
    fn kinks(&self, _c: &Constants) -> Vec<Kink> {
        Vec::new()
    }
    /// lim f (or f′) as x → +∞ (`positive`) or −∞.
    fn limit(&self, role: Role, positive: bool, c: &Constants) -> Limit;
    /// f(x) or f′(x) at a finite x (exact, at least 64 bits of precision).
    fn eval(&self, x: &Float, role: Role, ctx: &Ctx) -> Value;
}
