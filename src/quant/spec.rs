//! The integer types and the affine quantization of a kernel's input and output.

use crate::reference::{exact_in_range, parse_decimal};
use rug::Rational;

/// An 8-bit integer type of quantized codes.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum IntType {
    /// int8_t, codes −128..=127.
    I8,
    /// uint8_t, codes 0..=255.
    U8,
}

impl IntType {
    /// The type named by `--format` (`i8` or `u8`), if it is one.
    pub fn by_name(name: &str) -> Option<IntType> {
        match name {
            "i8" => Some(IntType::I8),
            "u8" => Some(IntType::U8),
            _ => None,
        }
    }
    /// Its `--format` name.
    pub fn name(self) -> &'static str {
        match self {
            IntType::I8 => "i8",
            IntType::U8 => "u8",
        }
    }
    /// Smallest code.
    pub fn min(self) -> i32 {
        match self {
            IntType::I8 => -128,
            IntType::U8 => 0,
        }
    }
    /// Largest code.
    pub fn max(self) -> i32 {
        self.min() + 255
    }
    /// The code stored in byte `bits`.
    pub fn code(self, bits: u8) -> i32 {
        match self {
            IntType::I8 => i32::from(bits as i8),
            IntType::U8 => i32::from(bits),
        }
    }
    /// The byte that stores `code` (which must be in range).
    pub fn bits(self, code: i32) -> u8 {
        debug_assert!((self.min()..=self.max()).contains(&code));
        code as u8
    }
    /// Every code, smallest first.
    pub fn codes(self) -> std::ops::RangeInclusive<i32> {
        self.min()..=self.max()
    }
}

/// Scales and zero points of a quantized kernel: x = S_in·(q − Z_in), t = f(x)/S_out + Z_out.
#[derive(Clone, Debug)]
pub struct QuantSpec {
    /// The code type of input and output.
    pub ty: IntType,
    /// S_in, exact.
    pub input_scale: Rational,
    /// S_in as the user wrote it.
    pub input_scale_text: String,
    /// Z_in.
    pub input_zero_point: i32,
    /// S_out, exact.
    pub output_scale: Rational,
    /// S_out as the user wrote it.
    pub output_scale_text: String,
    /// Z_out.
    pub output_zero_point: i32,
}

/// The four options as given (`None` when absent).
#[derive(Clone, Debug, Default)]
pub struct QuantTexts<'a> {
    /// --input-scale.
    pub input_scale: Option<&'a str>,
    /// --input-zero-point.
    pub input_zero_point: Option<&'a str>,
    /// --output-scale.
    pub output_scale: Option<&'a str>,
    /// --output-zero-point.
    pub output_zero_point: Option<&'a str>,
}

impl QuantTexts<'_> {
    /// The flags given, for refusing them with a float format.
    pub fn given(&self) -> Vec<&'static str> {
        [
            (self.input_scale.is_some(), "--input-scale"),
            (self.input_zero_point.is_some(), "--input-zero-point"),
            (self.output_scale.is_some(), "--output-scale"),
            (self.output_zero_point.is_some(), "--output-zero-point"),
        ]
        .into_iter()
        .filter_map(|(g, f)| g.then_some(f))
        .collect()
    }
}

impl QuantSpec {
    /// Validates the four options for `ty`; every error is one line naming the option.
    pub fn parse(ty: IntType, texts: &QuantTexts) -> Result<QuantSpec, String> {
        let need = |v: Option<&str>, flag: &str| {
            v.map(str::to_string).ok_or_else(|| {
                format!(
                    "{flag} is required with --format {} (all four of --input-scale, \
                     --input-zero-point, --output-scale, --output-zero-point)",
                    ty.name()
                )
            })
        };
        let input_scale_text = need(texts.input_scale, "--input-scale")?;
        let output_scale_text = need(texts.output_scale, "--output-scale")?;
        let zin = need(texts.input_zero_point, "--input-zero-point")?;
        let zout = need(texts.output_zero_point, "--output-zero-point")?;
        Ok(QuantSpec {
            ty,
            input_scale: scale(&input_scale_text, "--input-scale")?,
            input_zero_point: zero_point(ty, &zin, "--input-zero-point")?,
            output_scale: scale(&output_scale_text, "--output-scale")?,
            output_zero_point: zero_point(ty, &zout, "--output-zero-point")?,
            input_scale_text,
            output_scale_text,
        })
    }

    /// The real input of code `q`: S_in·(q − Z_in), exactly.
    pub fn real_input(&self, q: i32) -> Rational {
        &self.input_scale * Rational::from(q - self.input_zero_point)
    }

    /// The exact output code of a real result y: y/S_out + Z_out.
    pub fn exact_output(&self, y: &Rational) -> Rational {
        Rational::from(y / &self.output_scale) + self.output_zero_point
    }
}

fn scale(text: &str, flag: &str) -> Result<Rational, String> {
    let q = parse_decimal(text.trim()).map_err(|e| format!("{flag}: {e}"))?;
    if q.cmp0() != std::cmp::Ordering::Greater {
        return Err(format!("{flag} must be > 0, got {text}"));
    }
    if !exact_in_range(&q) {
        return Err(format!(
            "{flag} {text} is outside the binary64 range (2^-1074 to 2^1024)"
        ));
    }
    Ok(q)
}

fn zero_point(ty: IntType, text: &str, flag: &str) -> Result<i32, String> {
    let z: i64 = text
        .trim()
        .parse()
        .map_err(|_| format!("{flag} must be an integer, got '{text}'"))?;
    if z < i64::from(ty.min()) || z > i64::from(ty.max()) {
        return Err(format!(
            "{flag} {z} is outside the {} range {}..{}",
            ty.name(),
            ty.min(),
            ty.max()
        ));
    }
    Ok(z as i32)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn texts<'a>(s: &'a str, z: &'a str) -> QuantTexts<'a> {
        QuantTexts {
            input_scale: Some(s),
            input_zero_point: Some(z),
            output_scale: Some("0.00390625"),
            output_zero_point: Some("0"),
        }
    }

    #[test]
    fn scales_are_exact_and_zero_points_in_range() {
        let q = QuantSpec::parse(IntType::I8, &texts("0.1", "-3")).unwrap();
        // 0.1·(5 − (−3)) = 4/5 exactly (no binary float holds it).
        assert_eq!(q.real_input(5), Rational::from((4, 5)));
        assert!(QuantSpec::parse(IntType::I8, &texts("0", "0")).is_err());
        assert!(QuantSpec::parse(IntType::I8, &texts("-1", "0")).is_err());
        assert!(QuantSpec::parse(IntType::I8, &texts("0.1", "128")).is_err());
        assert!(QuantSpec::parse(IntType::U8, &texts("0.1", "-1")).is_err());
        assert!(QuantSpec::parse(IntType::U8, &texts("0.1", "255")).is_ok());
        assert!(QuantSpec::parse(IntType::U8, &texts("0.1", "1.5")).is_err());
        let missing = QuantTexts {
            input_scale: Some("1"),
            ..QuantTexts::default()
        };
        let e = QuantSpec::parse(IntType::U8, &missing).unwrap_err();
        assert!(e.starts_with("--output-scale is required"), "{e}");
    }

    #[test]
    fn codes_and_bytes() {
        // Two's complement int8_t (C11 7.20.1.1): byte 0x80 is −128.
        assert_eq!(IntType::I8.code(0x80), -128);
        assert_eq!(IntType::I8.bits(-1), 0xff);
        assert_eq!(IntType::U8.code(0x80), 128);
        assert_eq!(IntType::I8.codes().count(), 256);
    }
}
