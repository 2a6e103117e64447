//! The Ziv loop: evaluate an enclosure, widen the precision until both ends round to the same
//! value of the target format.

use super::interval::Ival;
use super::round::{floor_log2, floor_log2_rational, round_float, round_rational};
use super::Real;
use crate::activation::{Activation, Constants, Ctx, Limit, Role, Value};
use crate::format::{Class, ExactValue, Format};
use rug::{Float, Rational};

/// First working precision, in bits: 40 guard bits over binary32's 24 decide almost every case
/// in one pass.
const START_PRECISION: u32 = 64;

/// Precision at which the loop gives up. Only an exact rational hidden behind an interval
/// formula could get this far, and catalog functions return those as [`Value::Exact`].
pub const MAX_PRECISION: u32 = 1 << 14;

/// A correctly rounded reference value and what the measures need of the exact value.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Reference {
    /// RN(y) in the target format.
    pub bits: u32,
    /// y itself (approximation and binade); `None` when y is NaN or ±∞.
    pub exact: Option<ExactValue>,
    /// Working precision that decided the rounding (0 for exact values).
    pub precision: u32,
}

/// Why a reference could not be computed.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ReferenceError(pub String);

impl std::fmt::Display for ReferenceError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

/// Computes references of one function, role, parameter set and format.
pub struct Evaluator<'a> {
    function: &'a dyn Activation,
    role: Role,
    constants: Constants,
    format: &'static dyn Format,
    /// The format of the input patterns (mixed formats: `--input-format`); `format` otherwise.
    input: &'static dyn Format,
    /// Multiplies the value before rounding (a gradient's upstream g), exact.
    scale: Option<Rational>,
}

impl<'a> Evaluator<'a> {
    /// An evaluator; `constants` must come from [`Constants::resolve`] for the same function.
    pub fn new(
        function: &'a dyn Activation,
        role: Role,
        constants: Constants,
        format: &'static dyn Format,
    ) -> Self {
        Evaluator {
            function,
            role,
            constants,
            format,
            input: format,
            scale: None,
        }
    }
    /// The same evaluator reading its input patterns in another format (the result is still
    /// rounded into [`Evaluator::format`]).
    pub fn with_input(self, input: &'static dyn Format) -> Self {
        Evaluator { input, ..self }
    }
    /// The format of the input patterns.
    pub fn input_format(&self) -> &'static dyn Format {
        self.input
    }
    /// The same evaluator computing g·value (for gradient kernels); g must be finite.
    pub fn with_scale(&self, g: Option<Rational>) -> Evaluator<'a> {
        Evaluator {
            function: self.function,
            role: self.role,
            constants: self.constants.clone(),
            format: self.format,
            input: self.input,
            scale: g,
        }
    }
    /// The target format.
    pub fn format(&self) -> &'static dyn Format {
        self.format
    }
    /// The function.
    pub fn function(&self) -> &'a dyn Activation {
        self.function
    }
    /// The role.
    pub fn role(&self) -> Role {
        self.role
    }
    /// The resolved constants.
    pub fn constants(&self) -> &Constants {
        &self.constants
    }

    /// The correctly rounded reference at the input pattern `x_bits`.
    pub fn reference(&self, x_bits: u32) -> Result<Reference, ReferenceError> {
        self.reference_scaled(x_bits, self.scale.as_ref())
    }

    /// The correctly rounded reference of g·value at `x_bits` (g exact and finite); the
    /// per-point form of [`Evaluator::with_scale`], which copies nothing.
    pub fn reference_scaled(
        &self,
        x_bits: u32,
        scale: Option<&Rational>,
    ) -> Result<Reference, ReferenceError> {
        let r = self.rounded(x_bits, scale)?;
        Ok(saturated(self.format, r))
    }

    /// The reference before a saturating format's clamp of the exact value.
    fn rounded(&self, x_bits: u32, scale: Option<&Rational>) -> Result<Reference, ReferenceError> {
        let format = self.input;
        let negative_input = format.is_sign_negative(x_bits);
        let negative_zero_input = negative_input && format.classify(x_bits) == Class::Zero;
        match format.classify(x_bits) {
            Class::Nan => {
                return Ok(Reference {
                    bits: self.format.quiet_nan(),
                    exact: None,
                    precision: 0,
                })
            }
            Class::Infinite => return Ok(self.at_infinity(!negative_input, scale)),
            _ => {}
        }
        let x = Float::with_val(64, format.to_f64(x_bits));
        let x = if x.is_zero() && negative_input { -x } else { x };
        let mut prec = START_PRECISION;
        loop {
            let ctx = Ctx {
                prec,
                constants: &self.constants,
            };
            let value = self.function.eval(&x, self.role, &ctx);
            let value = scaled(value, scale, prec);
            match value {
                Value::Exact(q) => return Ok(self.exact(&q, negative_zero_input, scale)),
                Value::Enclosed(iv) if iv.is_point() => {
                    let q = iv.lo.to_rational().ok_or_else(|| {
                        ReferenceError(format!(
                            "{} produced a non-finite point",
                            self.function.name()
                        ))
                    })?;
                    return Ok(self.exact(&q, negative_zero_input, scale));
                }
                Value::Enclosed(iv) => {
                    if let Some(r) = self.decided(&iv, prec) {
                        return Ok(r);
                    }
                }
                Value::Near { base, delta } => {
                    if delta.is_point() && delta.lo.is_zero() {
                        return Ok(self.exact(&base, negative_zero_input, scale));
                    }
                    if let Some(r) = self.near(&base, &delta, prec) {
                        return Ok(r);
                    }
                }
            }
            prec *= 2;
            if prec > MAX_PRECISION {
                return Err(ReferenceError(format!(
                    "{} {:?} at {}: rounding undecided at {MAX_PRECISION} bits",
                    self.function.name(),
                    self.role,
                    crate::format::hex(format, x_bits)
                )));
            }
        }
    }

    /// Rounds an exact rational; an exact zero is +0 except f(−0) = −0 for forward functions
    /// that keep the sign of zero.
    fn exact(
        &self,
        q: &Rational,
        negative_zero_input: bool,
        scale: Option<&Rational>,
    ) -> Reference {
        let keeps = self.role == Role::Forward
            && scale.is_none()
            && self.function.facts().keeps_negative_zero;
        let negative_zero = keeps && negative_zero_input && q.is_zero();
        let bits = round_rational(q, negative_zero, self.format);
        let binade = if q.is_zero() {
            self.format.emin()
        } else {
            floor_log2_rational(q).max(self.format.emin())
        };
        Reference {
            bits,
            exact: Some(ExactValue {
                approx: nearest_f64(q),
                binade,
            }),
            precision: 0,
        }
    }

    /// The reference an enclosure of the (scaled) exact value decides, by the Ziv loop's own
    /// rule, or `None` when it does not (for callers that enclose the value themselves).
    pub(crate) fn decide(&self, iv: &Ival, prec: u32) -> Option<Reference> {
        self.decided(iv, prec).map(|r| saturated(self.format, r))
    }

    /// Both ends round to the same pattern and lie in the same (clamped) binade.
    fn decided(&self, iv: &Ival, prec: u32) -> Option<Reference> {
        if iv.lo.is_nan() || iv.hi.is_nan() {
            return None;
        }
        let lo = round_float(&iv.lo, self.format);
        let hi = round_float(&iv.hi, self.format);
        if lo != hi {
            return None;
        }
        // A saturating conversion clamps y to ±max first: every end beyond falls in emax's binade.
        let top = if self.format.layout().is_saturating() {
            self.format.emax()
        } else {
            i32::MAX
        };
        let binade = |v: &Float| {
            if v.is_zero() {
                None
            } else if v.is_infinite() {
                (top < i32::MAX).then_some(top)
            } else {
                Some(floor_log2(v).clamp(self.format.emin(), top))
            }
        };
        let emin = self.format.emin();
        let (b_lo, b_hi) = (binade(&iv.lo), binade(&iv.hi));
        let binade = match (b_lo, b_hi) {
            (Some(a), Some(b)) if a == b => a,
            // A zero end: the other end must already sit in the clamped bottom binade.
            (None, Some(b)) | (Some(b), None)
                if b == emin && !iv.lo.is_infinite() && !iv.hi.is_infinite() =>
            {
                emin
            }
            // Both ends beyond the overflow threshold: the binade no longer matters.
            // (E4M3 overflows to NaN.)
            _ if !self.format.layout().is_finite(lo) => self.format.emax() + 1,
            _ => return None,
        };
        let approx = nearest_f64_of(iv, prec)?;
        Some(Reference {
            bits: lo,
            exact: Some(ExactValue { approx, binade }),
            precision: prec,
        })
    }

    /// base + delta: decided by delta's sign alone when |delta| < 2^(b − p − 3), b the clamped
    /// binade of base, because no rounding boundary and no power of two then lies strictly
    /// between base and base + delta (the nearest ones are ≥ 2^(b − p − 1) away); otherwise
    /// an ordinary enclosure of the sum.
    fn near(&self, base: &Rational, delta: &Ival, prec: u32) -> Option<Reference> {
        if base.is_zero() {
            return self.decided(delta, prec);
        }
        let emin = self.format.emin();
        let p = self.format.precision() as i32;
        let binade = floor_log2_rational(base).max(emin);
        let limit_exp = binade - p - 3;
        let limit = Float::with_val(64, Float::i_exp(1, limit_exp));
        let signed = delta.is_positive() || delta.is_negative();
        // The sign argument needs base to be a format value or a midpoint: a multiple of half
        // the quantum 2^(binade − p + 1). Any other base may sit arbitrarily close to a boundary.
        let on_grid = Rational::from(base >> (binade - p)).denom() == &1u32;
        let small = delta.lo.clone().abs() < limit && delta.hi.clone().abs() < limit;
        let sum = Ival::rational(base, prec + 64).add(delta, prec + 64);
        if on_grid && signed && small {
            // Any point strictly between base and base + delta rounds like the true value.
            let nudge = Rational::from(1) << (limit_exp - 60);
            let probe = if delta.is_positive() {
                Rational::from(base + &nudge)
            } else {
                Rational::from(base - &nudge)
            };
            let bits = round_rational(&probe, false, self.format);
            let binade = floor_log2_rational(&probe).max(emin);
            let approx = nearest_f64_of(&sum, prec)?;
            return Some(Reference {
                bits,
                exact: Some(ExactValue { approx, binade }),
                precision: prec,
            });
        }
        self.decided(&sum, prec)
    }

    fn at_infinity(&self, positive: bool, scale: Option<&Rational>) -> Reference {
        let limit = self.function.limit(self.role, positive, &self.constants);
        let value = match (limit, scale) {
            (Limit::Finite(q), g) => Limit::Finite(match g {
                Some(g) => q * g,
                None => q,
            }),
            (Limit::Zero { negative }, Some(g)) if g.cmp0().is_lt() => Limit::Zero {
                negative: !negative,
            },
            (Limit::Infinite { negative }, Some(g)) if g.cmp0().is_lt() => Limit::Infinite {
                negative: !negative,
            },
            (Limit::Zero { .. } | Limit::Infinite { .. }, Some(g)) if g.is_zero() => {
                Limit::Finite(Rational::new())
            }
            (l, _) => l,
        };
        match value {
            Limit::Finite(q) => self.exact(&q, false, None),
            Limit::Zero { negative } => Reference {
                bits: self.format.encode(negative, 0, 0),
                exact: Some(ExactValue {
                    approx: 0.0,
                    binade: self.format.emin(),
                }),
                precision: 0,
            },
            Limit::Infinite { negative } => Reference {
                bits: self.format.layout().overflow(negative),
                exact: None,
                precision: 0,
            },
        }
    }
}

/// Under a saturating OFP8 conversion the reference is RN(clamp(y, −max, max)), so the
/// measures see the clamped value: an exact value beyond ±max (an infinite limit included)
/// becomes ±max in emax's binade.
pub(crate) fn saturated(format: &dyn Format, mut r: Reference) -> Reference {
    let l = format.layout();
    if !l.is_saturating() || !l.is_finite(r.bits) {
        return r;
    }
    let max = l.to_f64(l.max_finite(false));
    let beyond = r.exact.map_or(true, |e| e.approx.abs() > max);
    if beyond {
        r.exact = Some(ExactValue {
            approx: l.to_f64(r.bits),
            binade: format.emax(),
        });
    }
    r
}

/// g·value, exactly for rationals and outward for enclosures.
fn scaled(value: Value, scale: Option<&Rational>, prec: u32) -> Value {
    match (scale, value) {
        (None, v) => v,
        (Some(g), Value::Exact(q)) => Value::Exact(q * g),
        (Some(g), Value::Enclosed(iv)) => Value::Enclosed(iv.mul_rational(g, prec)),
        (Some(g), Value::Near { base, delta }) => Value::Near {
            base: base * g,
            delta: delta.mul_rational(g, prec),
        },
    }
}

/// q rounded to the nearest binary64, subnormals included (rug's `Rational::to_f64`
/// truncates). 1024 bits hold every dyadic midpoint exactly, and a non-dyadic rational is never
/// a midpoint, so the double rounding through them cannot change the result.
fn nearest_f64(q: &Rational) -> f64 {
    Float::with_val(1024, q).to_f64()
}

/// Beyond this working precision the approximation is taken from the interval's midpoint even if
/// its ends still round to different binary64 values (only a value within 2^−4096 of a binary64
/// midpoint needs it).
pub(crate) const APPROX_PRECISION_CAP: u32 = 4096;

/// RN_binary64 of the value enclosed by `iv`, once both ends agree on it; `None` asks the Ziv
/// loop for more precision. The measures then see exactly RN_binary64(y), whichever path
/// (this engine or a fast one) computed the reference.
fn nearest_f64_of(iv: &Ival, prec: u32) -> Option<f64> {
    let (lo, hi) = (iv.lo.to_f64(), iv.hi.to_f64());
    if lo == hi || lo.is_infinite() || hi.is_infinite() {
        return Some(if lo == hi { lo } else { iv.approx_f64() });
    }
    (prec >= APPROX_PRECISION_CAP).then(|| iv.approx_f64())
}

/// Rounds a constant (rational or irrational) into a format, by the same Ziv loop.
pub fn round_constant(value: &Real, format: &dyn Format) -> u32 {
    let mut prec = START_PRECISION;
    loop {
        let iv = value.enclose(prec);
        let (lo, hi) = (round_float(&iv.lo, format), round_float(&iv.hi, format));
        if lo == hi {
            return lo;
        }
        prec *= 2;
        assert!(prec <= MAX_PRECISION, "constant undecided");
    }
}
