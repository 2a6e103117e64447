//! Binary floating-point formats: bit patterns, values, ordering and ulp.
//!
//! Every format is described by a [`Format`] implementation.  The three IEEE-style formats share
//! [`Layout`], which derives everything from the exponent and significand widths; the OCP FP8
//! formats set its flags for E4M3's special values and for the saturating conversion mode.

mod bfloat16;
mod binary16;
mod binary32;
mod e4m3;
mod e5m2;
mod error;
mod layout;

pub use bfloat16::Bfloat16;
pub use binary16::Binary16;
pub use binary32::Binary32;
pub use e4m3::E4m3;
pub use e5m2::E5m2;
pub use error::{step_distance, ulp_error, ulp_error_in, ExactValue};
pub use layout::Layout;

/// The class of a bit pattern, following IEEE 754-2019 §5.7.2.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Class {
    /// +0 or −0.
    Zero,
    /// Nonzero with the minimum exponent field and no implicit bit.
    Subnormal,
    /// A normal number.
    Normal,
    /// +∞ or −∞.
    Infinite,
    /// Any NaN, quiet or signalling.
    Nan,
}

/// A binary floating-point format whose bit patterns fit in a `u32`.
pub trait Format: Send + Sync + std::fmt::Debug + 'static {
    /// Short name used on the command line and in reports (`f32`, `f16`, `bf16`).
    fn name(&self) -> &'static str;
    /// The standard's name for the format.
    fn long_name(&self) -> &'static str;
    /// Field widths; everything else derives from them.
    fn layout(&self) -> Layout;

    /// Storage width in bits.
    fn width(&self) -> u32 {
        self.layout().width()
    }
    /// Precision p, counting the implicit bit.
    fn precision(&self) -> u32 {
        self.layout().precision()
    }
    /// Exponent of the smallest normal number.
    fn emin(&self) -> i32 {
        self.layout().emin()
    }
    /// Exponent of the largest finite number.
    fn emax(&self) -> i32 {
        self.layout().emax()
    }
    /// Number of bit patterns (2^width).
    fn pattern_count(&self) -> u64 {
        1u64 << self.width()
    }
    /// Class of a bit pattern.
    fn classify(&self, bits: u32) -> Class {
        self.layout().classify(bits)
    }
    /// Value of a bit pattern; exact, since every supported format is a subset of binary64.
    fn to_f64(&self, bits: u32) -> f64 {
        self.layout().to_f64(bits)
    }
    /// Bit pattern of a value the format represents exactly, `None` otherwise (NaN maps to the
    /// canonical quiet NaN).
    #[allow(clippy::wrong_self_convention)]
    fn from_f64_exact(&self, value: f64) -> Option<u32> {
        self.layout().from_f64_exact(value)
    }
    /// Bit pattern of `(−1)^negative · k · 2^quantum_exp` for an integer significand
    /// `k ≤ 2^p` already rounded to this format's quantum; overflow gives infinity.
    fn encode(&self, negative: bool, k: u64, quantum_exp: i32) -> u32 {
        self.layout().encode(negative, k, quantum_exp)
    }
    /// The canonical quiet NaN.
    fn quiet_nan(&self) -> u32 {
        self.layout().quiet_nan()
    }
    /// Infinity of the given sign.
    fn infinity(&self, negative: bool) -> u32 {
        self.layout().infinity(negative)
    }
    /// Largest finite value's bit pattern, of the given sign.
    fn max_finite(&self, negative: bool) -> u32 {
        self.layout().max_finite(negative)
    }
    /// Whether the sign bit is set.
    fn is_sign_negative(&self, bits: u32) -> bool {
        self.layout().is_sign_negative(bits)
    }
    /// Position of a non-NaN pattern on the number line: −0 and +0 both map to 0 and each
    /// representable step adds one.
    fn ordinal(&self, bits: u32) -> i64 {
        self.layout().ordinal(bits)
    }
    /// The pattern at an ordinal (0 gives +0); the inverse of [`Format::ordinal`].
    #[allow(clippy::wrong_self_convention)]
    fn from_ordinal(&self, ordinal: i64) -> u32 {
        self.layout().from_ordinal(ordinal)
    }
    /// Next representable value towards +∞ (IEEE nextUp); NaN and +∞ map to themselves.
    fn next_up(&self, bits: u32) -> u32 {
        self.layout().next_up(bits)
    }
    /// Next representable value towards −∞ (IEEE nextDown).
    fn next_down(&self, bits: u32) -> u32 {
        self.layout().next_down(bits)
    }
    /// Every bit pattern, in increasing bit order.
    fn all_patterns(&self) -> std::ops::Range<u64> {
        0..self.pattern_count()
    }
}

/// Every supported format (the FP8 ones in both OFP8 conversion modes).
pub const ALL: [&'static dyn Format; 7] = [
    &Binary32,
    &Binary16,
    &Bfloat16,
    &E4m3 { saturating: false },
    &E5m2 { saturating: false },
    &E4m3 { saturating: true },
    &E5m2 { saturating: true },
];

/// The names `--format` accepts, for error messages.
pub const KNOWN: &str = "f32, f16, bf16, e4m3, e5m2";

/// Looks a format up by its short name.
pub fn by_name(name: &str) -> Option<&'static dyn Format> {
    ALL.iter().copied().find(|f| f.name() == name)
}

/// What an OFP8 conversion does with results beyond the largest finite value
/// (`--fp8-overflow`).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, clap::ValueEnum)]
pub enum Fp8Overflow {
    /// The specification's non-saturating mode: ±∞ in E5M2, NaN in E4M3.
    #[default]
    Nan,
    /// Clamp to ±max (448 in E4M3, 57344 in E5M2), infinities included.
    Saturate,
}

/// The format named `name` under an OFP8 overflow mode; an error names what is wrong (an
/// unknown name, or a mode given for a format that is not FP8).
pub fn resolve(name: &str, overflow: Option<Fp8Overflow>) -> Result<&'static dyn Format, String> {
    let format =
        by_name(name).ok_or_else(|| format!("unknown format '{name}' (known: {KNOWN})"))?;
    let Some(mode) = overflow else {
        return Ok(format);
    };
    let base = name.strip_suffix("-sat").unwrap_or(name);
    if base != "e4m3" && base != "e5m2" {
        return Err(format!(
            "--fp8-overflow applies to e4m3 and e5m2 only, not to '{name}'"
        ));
    }
    let wanted = match mode {
        Fp8Overflow::Nan => base.to_string(),
        Fp8Overflow::Saturate => format!("{base}-sat"),
    };
    if name.ends_with("-sat") && mode == Fp8Overflow::Nan {
        return Err(format!(
            "format '{name}' saturates, but --fp8-overflow asks for nan"
        ));
    }
    Ok(by_name(&wanted).expect("both modes are listed"))
}

/// Formats a bit pattern as `0x…` padded to the format's width.
pub fn hex(format: &dyn Format, bits: u32) -> String {
    let digits = format.width().div_ceil(4) as usize;
    format!("0x{bits:0digits$x}")
}

/// Parses `0x…` hex into a bit pattern that fits the format.
pub fn parse_hex(format: &dyn Format, text: &str) -> Result<u32, String> {
    let digits = text
        .strip_prefix("0x")
        .or_else(|| text.strip_prefix("0X"))
        .ok_or_else(|| format!("'{text}' is not a 0x-hex bit pattern"))?;
    if digits.is_empty() || digits.len() > 16 {
        return Err(format!("'{text}' is not a 0x-hex bit pattern"));
    }
    let value = u64::from_str_radix(digits, 16)
        .map_err(|_| format!("'{text}' is not a 0x-hex bit pattern"))?;
    if value >= format.pattern_count() {
        return Err(format!(
            "bit pattern {text} does not fit in {} bits ({})",
            format.width(),
            format.name()
        ));
    }
    Ok(value as u32)
}

/// Serde for a `&'static dyn Format` field: written as the format's short name.
/// One side of a kernel (its inputs or outputs): a format with its inlined bit arithmetic.
#[derive(Clone, Copy, Debug, serde::Serialize, serde::Deserialize)]
pub struct Side {
    /// The format.
    #[serde(with = "by_name_serde")]
    pub format: &'static dyn Format,
    /// Its layout.
    pub layout: Layout,
}

impl Side {
    /// The side of a format.
    pub fn of(format: &'static dyn Format) -> Side {
        Side {
            format,
            layout: format.layout(),
        }
    }
}

pub mod by_name_serde {
    use super::Format;
    use serde::{Deserialize, Deserializer, Serializer};

    /// Writes the name.
    pub fn serialize<S: Serializer>(f: &&'static dyn Format, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(f.name())
    }

    /// Reads a name back into the format.
    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<&'static dyn Format, D::Error> {
        let name = String::deserialize(d)?;
        super::by_name(&name)
            .ok_or_else(|| serde::de::Error::custom(format!("unknown format {name}")))
    }
}
