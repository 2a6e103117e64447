//! Parameters and built-in constants, exact by default or rounded the way kernels store them.

use super::interval::Ival;
use super::round::round_rational;
use crate::format::{Binary32, Format};
use rug::Rational;

/// A real constant: an exact rational, or an irrational number given by an enclosure at any
/// precision.
#[derive(Clone, Debug)]
pub enum Real {
    /// An exact rational (decimal parameters are exact rationals: 0.01 is 1/100).
    Exact(Rational),
    /// An irrational constant: a name for reports and a function enclosing it at a precision.
    Irrational(&'static str, fn(u32) -> Ival),
}

impl Real {
    /// Encloses the constant at `prec` bits.
    pub fn enclose(&self, prec: u32) -> Ival {
        match self {
            Real::Exact(q) => Ival::rational(q, prec),
            Real::Irrational(_, f) => f(prec),
        }
    }
    /// The exact rational, if the constant is rational.
    pub fn exact(&self) -> Option<&Rational> {
        match self {
            Real::Exact(q) => Some(q),
            Real::Irrational(..) => None,
        }
    }
}

/// How parameters and built-in constants enter the reference.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ParamRounding {
    /// Exactly as written (alpha=0.01 is the real number 1/100; √(2/π) is irrational).
    #[default]
    Exact,
    /// Rounded to the nearest binary32, as a kernel holding `float` constants sees them.
    F32,
    /// Rounded to the nearest value of the kernel's own format.
    Format,
}

impl ParamRounding {
    /// Applies the rounding to a constant for a kernel in `format`.
    pub fn apply(self, value: &Real, format: &dyn Format) -> Real {
        let target: &dyn Format = match self {
            ParamRounding::Exact => return value.clone(),
            ParamRounding::F32 => &Binary32,
            ParamRounding::Format => format,
        };
        let bits = match value {
            Real::Exact(q) => round_rational(q, false, target),
            Real::Irrational(..) => super::engine::round_constant(value, target),
        };
        let rounded = target.to_f64(bits);
        Real::Exact(Rational::from_f64(rounded).expect("rounded constant is finite"))
    }
}

impl ParamRounding {
    /// The rounded value, refused when rounding turns a nonzero value into ±∞ or 0 (the
    /// kernel would not compute the function asked for); `what` names it in the message.
    pub fn apply_checked(
        self,
        value: &Real,
        format: &dyn Format,
        what: &str,
    ) -> Result<Real, String> {
        let target: &dyn Format = match self {
            ParamRounding::Exact => return Ok(value.clone()),
            ParamRounding::F32 => &Binary32,
            ParamRounding::Format => format,
        };
        let nonzero = value
            .exact()
            .map_or(true, |q| q.cmp0() != std::cmp::Ordering::Equal);
        let bits = match value {
            Real::Exact(q) => round_rational(q, false, target),
            Real::Irrational(..) => super::engine::round_constant(value, target),
        };
        let rounded = target.to_f64(bits);
        if !rounded.is_finite() || (rounded == 0.0 && nonzero) {
            return Err(format!(
                "{what} rounds to {} in {} (--param-rounding {}): out of the format's range",
                if rounded.is_finite() {
                    "0".to_string()
                } else {
                    format!("{rounded}")
                },
                target.name(),
                match self {
                    ParamRounding::F32 => "f32",
                    _ => "format",
                }
            ));
        }
        Ok(self.apply(value, format))
    }
}

/// Largest magnitude of an exact parameter: the binary64 range, beyond which no kernel
/// could hold it and the references would grow without need.
pub fn exact_in_range(q: &Rational) -> bool {
    let a = q.clone().abs();
    q.cmp0() == std::cmp::Ordering::Equal
        || (a < (rug::Integer::from(1) << 1024u32)
            && a >= Rational::from((rug::Integer::from(1), rug::Integer::from(1) << 1074u32)))
}

/// Parses a decimal such as `0.01`, `-1.5e-3` or `7` into the exact rational it denotes.
pub fn parse_decimal(text: &str) -> Result<Rational, String> {
    let bad = || format!("'{text}' is not a decimal number");
    let (mantissa, exponent) = match text.find(['e', 'E']) {
        Some(i) => (&text[..i], text[i + 1..].parse::<i32>().map_err(|_| bad())?),
        None => (text, 0),
    };
    let (negative, digits) = match mantissa.strip_prefix('-') {
        Some(rest) => (true, rest),
        None => (false, mantissa.strip_prefix('+').unwrap_or(mantissa)),
    };
    let (int_part, frac_part) = digits.split_once('.').unwrap_or((digits, ""));
    let all_digits = |s: &str| s.bytes().all(|b| b.is_ascii_digit());
    if int_part.len() + frac_part.len() == 0 || !all_digits(int_part) || !all_digits(frac_part) {
        return Err(bad());
    }
    if exponent.unsigned_abs() > 10_000 {
        return Err(format!("'{text}' has an exponent out of range"));
    }
    let numerator: rug::Integer = format!("{int_part}{frac_part}")
        .parse()
        .map_err(|_| bad())?;
    let scale = exponent - frac_part.len() as i32;
    let mut value = Rational::from(numerator);
    if scale >= 0 {
        value *= Rational::from(rug::Integer::u_pow_u(10, scale as u32));
    } else {
        value /= Rational::from(rug::Integer::u_pow_u(10, scale.unsigned_abs()));
    }
    Ok(if negative { -value } else { value })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn decimals_are_exact_rationals() {
        assert_eq!(parse_decimal("0.01").unwrap(), Rational::from((1, 100)));
        assert_eq!(
            parse_decimal("-1.5e-3").unwrap(),
            Rational::from((-3, 2000))
        );
        assert_eq!(parse_decimal("7").unwrap(), Rational::from(7));
        assert_eq!(parse_decimal("+.5").unwrap(), Rational::from((1, 2)));
        assert_eq!(parse_decimal("2E3").unwrap(), Rational::from(2000));
        for bad in [
            "", ".", "nan", "inf", "1e", "1.2.3", "0x10", "1e99999", "--1", "1 ",
        ] {
            assert!(parse_decimal(bad).is_err(), "{bad:?}");
        }
    }

    #[test]
    fn rounding_constants_follows_the_target() {
        // RN_f32(0.01) = 0x3c23d70a (Rust's correctly rounded parser gives the same bits).
        let rounded =
            ParamRounding::F32.apply(&Real::Exact(parse_decimal("0.01").unwrap()), &Binary32);
        assert_eq!(rounded.exact().unwrap().to_f64(), 0.01f32 as f64);
        let same = ParamRounding::Exact.apply(&Real::Exact(Rational::from((1, 100))), &Binary32);
        assert_eq!(same.exact().unwrap(), &Rational::from((1, 100)));
    }
}
