//! `--range LO,HI`: decimal bounds, LO included, HI excluded, as a span of ordinals.

use crate::format::{Class, Format};
use crate::reference::{parse_decimal, round_rational};
use rug::Rational;

/// The inputs of a sweep: every pattern whose value lies in [lo, hi] (ordinals), plus NaNs when
/// the range is the whole format.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct InputRange {
    lo: i64,
    hi: i64,
    /// Whether NaN patterns belong to the range (only without --range).
    pub with_nans: bool,
    /// The text given, for reports ("all" without --range).
    pub text: String,
}

/// A bound: a finite rational or ±∞.
enum Bound {
    Finite(Rational),
    Infinite(bool),
}

fn parse_bound(text: &str) -> Result<Bound, String> {
    match text.trim().to_ascii_lowercase().as_str() {
        "inf" | "+inf" | "infinity" => Ok(Bound::Infinite(false)),
        "-inf" | "-infinity" => Ok(Bound::Infinite(true)),
        t => parse_decimal(t).map(Bound::Finite),
    }
}

fn value_of(format: &dyn Format, bits: u32) -> Rational {
    Rational::from_f64(format.to_f64(bits)).expect("finite pattern")
}

impl InputRange {
    /// Every pattern of the format, NaNs included.
    pub fn all(format: &dyn Format) -> Self {
        let top = format.ordinal(format.infinity(false));
        InputRange {
            lo: -top,
            hi: top,
            with_nans: true,
            text: "all".to_string(),
        }
    }

    /// Parses `LO,HI` for a format; errors name what is wrong.
    pub fn parse(format: &dyn Format, text: &str) -> Result<Self, String> {
        let (lo_text, hi_text) = text
            .split_once(',')
            .ok_or_else(|| format!("--range '{text}' is not LO,HI"))?;
        let bound = |t: &str| parse_bound(t).map_err(|e| format!("--range bound {e}"));
        let (lo, hi) = (bound(lo_text)?, bound(hi_text)?);
        let max = value_of(format, format.max_finite(false));
        let outside = |q: &Rational| {
            // Beyond max + ulp(max)/2 every value rounds to infinity: not a value of the format.
            let step = max.clone() - value_of(format, format.next_down(format.max_finite(false)));
            Rational::from(q.abs_ref()) >= max.clone() + step / 2u32
        };
        for (name, b) in [("LO", &lo), ("HI", &hi)] {
            if let Bound::Finite(q) = b {
                if outside(q) {
                    return Err(format!(
                        "--range {name} {} is outside {} (finite values up to ±{}); use inf or -inf",
                        q.to_f64(),
                        format.name(),
                        max.to_f64()
                    ));
                }
            }
        }
        let ordered = match (&lo, &hi) {
            (Bound::Finite(a), Bound::Finite(b)) => a < b,
            (Bound::Infinite(true), Bound::Infinite(true)) => false,
            (Bound::Infinite(false), _) => false,
            (_, Bound::Infinite(true)) => false,
            _ => true,
        };
        if !ordered {
            return Err(format!("--range '{text}': LO must be below HI"));
        }
        // First pattern ≥ LO.
        let lo_ord = match &lo {
            Bound::Infinite(_) => format.ordinal(format.infinity(true)),
            Bound::Finite(q) => {
                let mut bits = round_rational(q, false, format);
                if format.classify(bits) != Class::Infinite && value_of(format, bits) < *q {
                    bits = format.next_up(bits);
                }
                format.ordinal(bits)
            }
        };
        // Last pattern < HI.
        let hi_ord = match &hi {
            Bound::Infinite(_) => format.ordinal(format.infinity(false)),
            Bound::Finite(q) => {
                let mut bits = round_rational(q, false, format);
                if format.classify(bits) == Class::Infinite || value_of(format, bits) >= *q {
                    bits = format.next_down(bits);
                }
                format.ordinal(bits)
            }
        };
        if lo_ord > hi_ord {
            return Err(format!(
                "--range '{text}' holds no value of {}",
                format.name()
            ));
        }
        Ok(InputRange {
            lo: lo_ord,
            hi: hi_ord,
            with_nans: false,
            text: text.to_string(),
        })
    }

    /// First and last ordinal inside the range.
    pub fn ordinals(&self, _format: &dyn Format) -> (i64, i64) {
        (self.lo, self.hi)
    }

    /// Whether a pattern belongs to the range.
    pub fn contains(&self, format: &dyn Format, bits: u32) -> bool {
        if format.classify(bits) == Class::Nan {
            return self.with_nans;
        }
        (self.lo..=self.hi).contains(&format.ordinal(bits))
    }

    /// Number of patterns in the range (both zeros, and NaNs when included).
    pub fn pattern_count(&self, format: &dyn Format) -> u64 {
        let mut n = (self.hi - self.lo + 1) as u64;
        if self.lo <= 0 && self.hi >= 0 {
            n += 1;
        }
        if self.with_nans {
            n += 2 * nans_per_sign(format);
        }
        n
    }

    /// Every pattern of the range (unordered).
    pub fn patterns(&self, format: &dyn Format) -> Vec<u32> {
        let mut out: Vec<u32> = (self.lo..=self.hi)
            .map(|o| format.from_ordinal(o))
            .collect();
        if self.lo <= 0 && self.hi >= 0 {
            out.push(super::FormatBits::of(format).sign);
        }
        if self.with_nans {
            let inf = format.infinity(false);
            let sign = super::FormatBits::of(format).sign;
            for k in 1..=nans_per_sign(format) as u32 {
                out.push(inf + k);
                out.push(sign | (inf + k));
            }
        }
        out
    }
}

/// NaN patterns of one sign: every pattern above +∞'s magnitude.
fn nans_per_sign(format: &dyn Format) -> u64 {
    format.pattern_count() / 2 - (format.infinity(false) as u64 + 1)
}
