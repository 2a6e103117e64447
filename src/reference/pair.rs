//! References of the gated functions y(a, b) = act(a)·b: the unary activation's exact value
//! times the exact b, rounded once by the same Ziv loop (b enters as the engine's exact scale).

use super::dyadic::{odd_significand, Dyadic};
use super::engine::{
    saturated, Evaluator, Reference, ReferenceError, APPROX_PRECISION_CAP, MAX_PRECISION,
};
use super::interval::Ival;
use crate::activation::{Constants, Ctx, Gated, GatedRole, Limit, Value};
use crate::format::{Class, ExactValue, Format, Layout};
use rug::{Float, Rational};

/// Working precision of a prepared act(a): 128 bits leave 104 guard bits over binary32.
pub const PREPARED_PRECISION: u32 = 128;

/// act(a) enclosed once for many b ([`PairEvaluator::prepare`]).
pub struct Prepared {
    a: u32,
    act: Option<Ival>,
    /// The same enclosure (or exact value) in integers, for the allocation-free path.
    fast: Option<FastAct>,
    /// The reference of act(a)·b for finite b of each sign (+, −) when act(a) is exactly zero.
    zero: Option<[Reference; 2]>,
    /// The reference for every b when the role ignores b (`derivative-b` is act(a)).
    every: Option<Reference>,
}

/// |act(a)| between two exact binary numbers (outward ends of the MPFR enclosure, or both the
/// exact value), with act(a)'s sign.
struct FastAct {
    negative: bool,
    small: Dyadic,
    large: Dyadic,
    /// What the reference reports as its deciding precision (the engine's, for equal output).
    precision: u32,
    /// The ends are exact and the same at every working precision of the Ziv loop (a tail
    /// bound such as "below 2^−1080"): the engine then never narrows them and takes the
    /// binary64 approximation from their midpoint at [`APPROX_PRECISION_CAP`] bits.
    fixed: bool,
}

impl FastAct {
    /// The enclosure's ends as outward [`Dyadic`]s, when it does not contain zero.
    fn of(iv: &Ival) -> Option<FastAct> {
        let negative = if iv.is_positive() {
            false
        } else if iv.is_negative() {
            true
        } else {
            return None;
        };
        let (near, far) = if negative {
            (&iv.hi, &iv.lo)
        } else {
            (&iv.lo, &iv.hi)
        };
        Some(FastAct {
            negative,
            small: Dyadic::from_float(near, false)?,
            large: Dyadic::from_float(far, true)?,
            precision: PREPARED_PRECISION,
            fixed: false,
        })
    }

    /// The reference of act(a)·b by the engine's decision rule (`Evaluator::decided`): both
    /// ends of the exact products round to the same pattern, lie in the same binade clamped
    /// at emin (or both overflow) and round to the same binary64. Rounding is monotone, so
    /// every value between the ends (the true one and the MPFR path's ends) rounds alike and
    /// the result is the one the MPFR path gives. `None`: undecided here.
    #[inline]
    fn times(&self, layout: Layout, b: f64) -> Option<Reference> {
        let (b_negative, k, e) = odd_significand(b)?;
        let negative = self.negative != b_negative;
        let lo = self.small.times(k, e)?;
        let hi = self.large.times(k, e)?;
        let bits = lo.round_into(layout, negative)?;
        if hi.round_into(layout, negative)? != bits {
            return None;
        }
        let emin = layout.emin();
        let (b_lo, b_hi) = (lo.floor_log2().max(emin), hi.floor_log2().max(emin));
        let binade = if b_lo == b_hi {
            b_lo
        } else if !layout.is_finite(bits) {
            layout.emax() + 1
        } else {
            return None;
        };
        let (approx, precision) = match (lo.nearest_f64(negative)?, hi.nearest_f64(negative)?) {
            (x, y) if x == y => (x, self.precision),
            // `Ival::approx_f64`: RN_binary64 of the midpoint, exact here (the sum fits).
            _ if self.fixed => (
                lo.midpoint(hi)?.nearest_f64(negative)?,
                APPROX_PRECISION_CAP,
            ),
            _ => return None,
        };
        Some(Reference {
            bits,
            exact: Some(ExactValue { approx, binade }),
            precision,
        })
    }
}

impl Prepared {
    /// The a it was prepared for.
    pub fn a(&self) -> u32 {
        self.a
    }
}

/// Computes references of one gated function, role and format (a, b and y share the format).
pub struct PairEvaluator {
    gated: &'static dyn Gated,
    role: GatedRole,
    /// act (or act′) of a, unscaled; b is passed per point as its exact scale.
    inner: Evaluator<'static>,
}

impl PairEvaluator {
    /// An evaluator; `constants` must come from [`Constants::resolve`] for `gated.act()`.
    pub fn new(
        gated: &'static dyn Gated,
        role: GatedRole,
        constants: Constants,
        format: &'static dyn Format,
    ) -> Self {
        let inner = Evaluator::new(gated.act(), role.inner().0, constants, format);
        PairEvaluator { gated, role, inner }
    }
    /// The gated function.
    pub fn gated(&self) -> &'static dyn Gated {
        self.gated
    }
    /// The role.
    pub fn role(&self) -> GatedRole {
        self.role
    }
    /// The format of a, b and y.
    pub fn format(&self) -> &'static dyn Format {
        self.inner.format()
    }
    /// The resolved constants of the activation.
    pub fn constants(&self) -> &Constants {
        self.inner.constants()
    }

    /// The correctly rounded reference at the pair of patterns (a, b).
    ///
    /// IEEE 754 conventions where the product has no real value: NaN in either operand gives
    /// NaN, and 0·∞ (a factor exactly zero, or tending to zero at a = ±∞, times an infinite
    /// other factor) gives NaN, as IEEE multiplication does. An exactly zero product takes the
    /// sign rule of multiplication (sign of act(a)'s reference zero xor sign of b).
    /// `derivative-b` is act(a) and ignores b.
    pub fn reference(&self, a: u32, b: u32) -> Result<Reference, ReferenceError> {
        let f = self.format();
        if !self.role.inner().1 {
            return self.inner.reference(a);
        }
        if f.classify(a) == Class::Nan || f.classify(b) == Class::Nan {
            return Ok(self.nan());
        }
        let b_negative = f.is_sign_negative(b);
        match f.classify(b) {
            Class::Infinite => Ok(match self.sign_of_act(a)? {
                None => self.nan(),
                Some(negative) => self.infinite(negative != b_negative),
            }),
            Class::Zero => {
                if f.classify(a) == Class::Infinite && self.infinite_limit(a) {
                    return Ok(self.nan());
                }
                self.zero_times(a, b_negative)
            }
            _ if f.classify(a) != Class::Infinite && self.exactly_zero(a) => {
                self.zero_times(a, b_negative)
            }
            _ => {
                let scale = Rational::from_f64(f.to_f64(b)).expect("finite b");
                self.inner.reference_scaled(a, Some(&scale))
            }
        }
    }

    /// What [`PairEvaluator::reference_prepared`] reuses for every b at one a: act(a) (or
    /// act′(a)) enclosed once at [`PREPARED_PRECISION`] bits and as outward 104-bit integers
    /// (or exactly, when it is a short dyadic rational), or the two signed zero products when
    /// it is exactly zero, or the reference itself when the role ignores b; nothing else when
    /// a is NaN or infinite (the ordinary path).
    pub fn prepare(&self, a: u32) -> Prepared {
        let f = self.format();
        let none = Prepared {
            a,
            act: None,
            fast: None,
            zero: None,
            every: None,
        };
        if !self.role.inner().1 {
            let every = self.inner.reference(a).ok();
            return Prepared { every, ..none };
        }
        if matches!(f.classify(a), Class::Nan | Class::Infinite) {
            return none;
        }
        if self.exactly_zero(a) {
            // For a finite b the plain path gives zero_times(a, sign of b) whatever b is.
            let zero = match (self.zero_times(a, false), self.zero_times(a, true)) {
                (Ok(p), Ok(n)) => Some([p, n]),
                _ => None,
            };
            return Prepared { zero, ..none };
        }
        // A saturating format clamps the exact value first: the integer path does not model it.
        let integer = !f.layout().is_saturating();
        let ctx = Ctx {
            prec: PREPARED_PRECISION,
            constants: self.constants(),
        };
        let value = self
            .gated
            .act()
            .eval(&self.point(a), self.role.inner().0, &ctx);
        let enclosed = matches!(value, Value::Enclosed(_));
        let act = match value {
            Value::Exact(q) => {
                let fast = Dyadic::from_rational(&q)
                    .filter(|_| integer)
                    .map(|d| FastAct {
                        negative: q.cmp0().is_lt(),
                        small: d,
                        large: d,
                        precision: 0,
                        fixed: false,
                    });
                return Prepared { fast, ..none };
            }
            Value::Enclosed(iv) => iv,
            Value::Near { base, delta } => {
                Ival::rational(&base, PREPARED_PRECISION + 64).add(&delta, PREPARED_PRECISION + 64)
            }
        };
        let fast = integer
            .then(|| FastAct::of(&act))
            .flatten()
            .map(|x| FastAct {
                fixed: enclosed && self.fixed_enclosure(a, &act),
                ..x
            });
        Prepared {
            act: Some(act),
            fast,
            ..none
        }
    }

    /// The reference at (a, b) from a prepared a: the integer ends of act(a) times the exact b
    /// (at most 24 significant bits: exact in 128 bits), else the MPFR enclosure times b,
    /// decided by the engine's rule; the same result as [`PairEvaluator::reference`], which it
    /// falls back to when both leave it undecided.
    pub fn reference_prepared(&self, p: &Prepared, b: u32) -> Result<Reference, ReferenceError> {
        if let Some(r) = p.every {
            return Ok(r);
        }
        let layout = self.format().layout();
        let class = layout.classify(b);
        if let (Some(z), Class::Zero | Class::Normal | Class::Subnormal) = (&p.zero, class) {
            return Ok(z[layout.is_sign_negative(b) as usize]);
        }
        if matches!(class, Class::Normal | Class::Subnormal) {
            let bf = layout.to_f64(b);
            if let Some(r) = p.fast.as_ref().and_then(|x| x.times(layout, bf)) {
                return Ok(r);
            }
            // Undecided in 104 bits: the 128-bit enclosure, then the plain path.
            if let Some(iv) = &p.act {
                let prec = iv.lo.prec().max(iv.hi.prec()) + 64;
                let lo = Float::with_val(prec, &iv.lo * bf);
                let hi = Float::with_val(prec, &iv.hi * bf);
                let y = if bf < 0.0 {
                    Ival::new(hi, lo)
                } else {
                    Ival::new(lo, hi)
                };
                if let Some(r) = self.inner.decide(&y, PREPARED_PRECISION) {
                    return Ok(r);
                }
            }
        }
        self.reference(p.a, b)
    }

    /// Whether act(a)'s 128-bit enclosure is a wide bound (over 2^−64 relative) with exact
    /// 104-bit ends that the evaluation returns unchanged at every precision the Ziv loop
    /// tries up to [`APPROX_PRECISION_CAP`] (checked once per a, only for wide bounds).
    fn fixed_enclosure(&self, a: u32, iv: &Ival) -> bool {
        let width = Float::with_val(64, &iv.hi - &iv.lo);
        let tight = Float::with_val(64, iv.lo.abs_ref()) >> 64u32;
        let exact = |v: &Float| Dyadic::from_float(v, false) == Dyadic::from_float(v, true);
        if width <= tight || !exact(&iv.lo) || !exact(&iv.hi) {
            return false;
        }
        let mut prec = 64;
        while prec <= APPROX_PRECISION_CAP {
            let ctx = Ctx {
                prec,
                constants: self.constants(),
            };
            let same = match self
                .gated
                .act()
                .eval(&self.point(a), self.role.inner().0, &ctx)
            {
                Value::Enclosed(j) => j.lo == iv.lo && j.hi == iv.hi,
                _ => false,
            };
            if !same {
                return false;
            }
            prec *= 2;
        }
        true
    }

    /// The integer path of [`PairEvaluator::reference_prepared`] alone: the reference at
    /// (a, b) when act(a)'s 104-bit ends times a finite nonzero b decide it, else `None`
    /// (tests compare it with the plain path and count how often it decides).
    pub fn reference_integer(&self, p: &Prepared, b: u32) -> Option<Reference> {
        let layout = self.format().layout();
        matches!(layout.classify(b), Class::Normal | Class::Subnormal)
            .then(|| p.fast.as_ref()?.times(layout, layout.to_f64(b)))
            .flatten()
    }

    /// An enclosure of y(a, b) at `prec` bits, for finite a and b (display only).
    pub fn enclosure(&self, a: u32, b: u32, prec: u32) -> Option<Ival> {
        let f = self.format();
        let finite = |x| !matches!(f.classify(x), Class::Nan | Class::Infinite);
        if !finite(a) || (self.role.inner().1 && !finite(b)) {
            return None;
        }
        let v = self.act_enclosure(a, prec);
        Some(if self.role.inner().1 {
            v.mul_rational(&Rational::from_f64(f.to_f64(b))?, prec)
        } else {
            v
        })
    }

    /// The value of act (or act′) at a finite a as one interval.
    fn act_enclosure(&self, a: u32, prec: u32) -> Ival {
        let ctx = Ctx {
            prec,
            constants: self.constants(),
        };
        let value = self
            .gated
            .act()
            .eval(&self.point(a), self.role.inner().0, &ctx);
        match value {
            Value::Exact(q) => Ival::rational(&q, prec),
            Value::Enclosed(iv) => iv,
            Value::Near { base, delta } => Ival::rational(&base, prec + 64).add(&delta, prec),
        }
    }

    /// a as an MPFR number, −0 kept.
    fn point(&self, a: u32) -> Float {
        let f = self.format();
        let x = Float::with_val(64, f.to_f64(a));
        if x.is_zero() && f.is_sign_negative(a) {
            -x
        } else {
            x
        }
    }

    /// Whether act (or act′) of a finite a is exactly zero (relu's left half, silu(±0), …):
    /// catalog functions return those as exact values or point intervals.
    fn exactly_zero(&self, a: u32) -> bool {
        let ctx = Ctx {
            prec: 64,
            constants: self.constants(),
        };
        match self
            .gated
            .act()
            .eval(&self.point(a), self.role.inner().0, &ctx)
        {
            Value::Exact(q) => q.is_zero(),
            Value::Enclosed(iv) => iv.is_point() && iv.lo.is_zero(),
            Value::Near { base, delta } => base.is_zero() && delta.is_point() && delta.lo.is_zero(),
        }
    }

    /// Whether act (or act′) tends to ±∞ at the infinite a.
    fn infinite_limit(&self, a: u32) -> bool {
        let positive = !self.format().is_sign_negative(a);
        let limit = self
            .gated
            .act()
            .limit(self.role.inner().0, positive, self.constants());
        matches!(limit, Limit::Infinite { .. })
    }

    /// The sign of act (or act′) at a: `None` when it is zero (or tends to zero at a = ±∞),
    /// else whether it is negative; decided by widening the precision like the Ziv loop.
    fn sign_of_act(&self, a: u32) -> Result<Option<bool>, ReferenceError> {
        let f = self.format();
        if f.classify(a) == Class::Infinite {
            let positive = !f.is_sign_negative(a);
            let limit = self
                .gated
                .act()
                .limit(self.role.inner().0, positive, self.constants());
            return Ok(match limit {
                Limit::Finite(q) if q.is_zero() => None,
                Limit::Finite(q) => Some(q.cmp0().is_lt()),
                Limit::Zero { .. } => None,
                Limit::Infinite { negative } => Some(negative),
            });
        }
        if self.exactly_zero(a) {
            return Ok(None);
        }
        let mut prec = 64;
        while prec <= MAX_PRECISION {
            let iv = self.act_enclosure(a, prec);
            if iv.is_positive() {
                return Ok(Some(false));
            }
            if iv.is_negative() {
                return Ok(Some(true));
            }
            prec *= 2;
        }
        Err(ReferenceError(format!(
            "{} {} at {}: sign of the activation undecided at {MAX_PRECISION} bits",
            self.gated.name(),
            self.role.name(),
            crate::format::hex(f, a)
        )))
    }

    /// An exactly zero product: act(a)'s reference zero sign xor b's sign.
    fn zero_times(&self, a: u32, b_negative: bool) -> Result<Reference, ReferenceError> {
        let f = self.format();
        let act = self.inner.reference(a)?;
        let act_negative = f.classify(act.bits) != Class::Nan && f.is_sign_negative(act.bits);
        Ok(Reference {
            bits: f.encode(act_negative != b_negative, 0, 0),
            exact: Some(ExactValue {
                approx: 0.0,
                binade: f.emin(),
            }),
            precision: 0,
        })
    }

    fn nan(&self) -> Reference {
        Reference {
            bits: self.format().quiet_nan(),
            exact: None,
            precision: 0,
        }
    }

    fn infinite(&self, negative: bool) -> Reference {
        let f = self.format();
        let r = Reference {
            bits: f.layout().overflow(negative),
            exact: None,
            precision: 0,
        };
        saturated(f, r)
    }
}

#[cfg(test)]
mod tests {
    use super::PairEvaluator;
    use crate::activation::{lookup_gated, Constants, GatedRole};
    use crate::format::{Binary16, Format};
    use crate::reference::ParamRounding;

    fn eval(name: &str, role: GatedRole, a: f64, b: f64) -> u32 {
        let g = lookup_gated(name).expect("gated");
        let c = Constants::resolve(g.act(), &[], ParamRounding::Exact, &Binary16);
        let e = PairEvaluator::new(g, role, c, &Binary16);
        let f = &Binary16;
        let bits = |v: f64| f.from_f64_exact(v).expect("exact");
        e.reference(bits(a), bits(b)).expect("reference").bits
    }

    #[test]
    fn products_round_once() {
        // relu(3)·5 = 15 exactly (0x4b80 in binary16: 1.875·2^3, IEEE 754 binary16 layout).
        assert_eq!(eval("reglu", GatedRole::Forward, 3.0, 5.0), 0x4b80);
        // ∂/∂b of reglu at a = −2 is relu(−2) = +0; ∂/∂a at a = 2, b = −3 is −3 (0xc200).
        assert_eq!(eval("reglu", GatedRole::DerivativeB, -2.0, 7.0), 0x0000);
        assert_eq!(eval("reglu", GatedRole::DerivativeA, 2.0, -3.0), 0xc200);
        // 256·512 = 131072 > 65504 + 16: overflows to +∞ (0x7c00); 0·∞ is NaN.
        assert_eq!(eval("reglu", GatedRole::Forward, 256.0, 512.0), 0x7c00);
        assert!(eval("swiglu", GatedRole::Forward, 0.0, f64::INFINITY) & 0x7fff > 0x7c00);
        // relu(−1) = +0 times −2: −0 by the sign rule of multiplication.
        assert_eq!(eval("reglu", GatedRole::Forward, -1.0, -2.0), 0x8000);
    }
}
