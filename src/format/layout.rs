//! Bit-level arithmetic shared by every IEEE 754-style binary format.

use super::Class;

/// Field widths of an IEEE 754-style binary format: one sign bit, `exp_bits` biased exponent
/// bits and `mant_bits` trailing significand bits, with subnormals, infinities and NaNs encoded
/// as in IEEE 754-2019 §3.4 — or, with `finite_only`, the OCP OFP8 E4M3 convention: no
/// infinities, the all-ones pattern of each sign the only NaN, the rest of the top exponent
/// field normal numbers (so emax = bias + 1). `saturating` selects the OFP8 conversion mode
/// that clamps out-of-range results to ±max instead of giving ±∞ (or NaN without infinities).
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct Layout {
    exp_bits: u32,
    mant_bits: u32,
    #[serde(default)]
    finite_only: bool,
    #[serde(default)]
    saturating: bool,
}

impl Layout {
    /// A layout with the given exponent and trailing significand widths (at most 31 bits in all).
    #[inline]
    pub const fn new(exp_bits: u32, mant_bits: u32) -> Self {
        assert!(exp_bits >= 2 && mant_bits >= 1 && 1 + exp_bits + mant_bits <= 32);
        Layout {
            exp_bits,
            mant_bits,
            finite_only: false,
            saturating: false,
        }
    }
    /// The same fields in the OFP8 E4M3 convention: no infinities, one NaN pattern per sign.
    #[inline]
    pub const fn finite_only(self) -> Self {
        Layout {
            finite_only: true,
            ..self
        }
    }
    /// The same format under the saturating conversion: overflow gives ±max.
    #[inline]
    pub const fn saturating(self) -> Self {
        Layout {
            saturating: true,
            ..self
        }
    }
    /// Whether the format has no infinities (OFP8 E4M3).
    #[inline]
    pub const fn is_finite_only(self) -> bool {
        self.finite_only
    }
    /// Whether out-of-range results saturate to ±max.
    #[inline]
    pub const fn is_saturating(self) -> bool {
        self.saturating
    }
    /// Exponent field width in bits.
    #[inline]
    pub const fn exp_bits(self) -> u32 {
        self.exp_bits
    }
    /// Storage width in bits.
    #[inline]
    pub const fn width(self) -> u32 {
        1 + self.exp_bits + self.mant_bits
    }
    /// Precision p = trailing significand bits + 1.
    #[inline]
    pub const fn precision(self) -> u32 {
        self.mant_bits + 1
    }
    /// Exponent bias 2^(w−1) − 1.
    #[inline]
    pub const fn bias(self) -> i32 {
        (1 << (self.exp_bits - 1)) - 1
    }
    /// emax = bias, or bias + 1 when the top exponent field holds numbers (E4M3).
    #[inline]
    pub const fn emax(self) -> i32 {
        self.bias() + self.finite_only as i32
    }
    /// emin = 1 − bias.
    #[inline]
    pub const fn emin(self) -> i32 {
        1 - self.bias()
    }
    /// The sign bit of a pattern.
    #[inline]
    pub fn sign_bit(self) -> u32 {
        1 << (self.exp_bits + self.mant_bits)
    }
    #[inline]
    fn exp_mask(self) -> u32 {
        ((1 << self.exp_bits) - 1) << self.mant_bits
    }
    #[inline]
    fn mant_mask(self) -> u32 {
        (1 << self.mant_bits) - 1
    }
    #[inline]
    fn magnitude_mask(self) -> u32 {
        self.sign_bit() - 1
    }
    /// Whether the sign bit is set.
    #[inline]
    pub fn is_sign_negative(self, bits: u32) -> bool {
        bits & self.sign_bit() != 0
    }
    /// IEEE class of a pattern.
    #[inline]
    pub fn classify(self, bits: u32) -> Class {
        let exp = bits & self.exp_mask();
        let mant = bits & self.mant_mask();
        match (exp, mant) {
            (0, 0) => Class::Zero,
            (0, _) => Class::Subnormal,
            (e, m) if self.finite_only && e == self.exp_mask() => {
                if m == self.mant_mask() {
                    Class::Nan
                } else {
                    Class::Normal
                }
            }
            (e, 0) if e == self.exp_mask() => Class::Infinite,
            (e, _) if e == self.exp_mask() => Class::Nan,
            _ => Class::Normal,
        }
    }
    /// Exact value of a pattern as binary64.
    #[inline]
    pub fn to_f64(self, bits: u32) -> f64 {
        let sign = ((bits & self.sign_bit()) as u64) << (63 - self.exp_bits - self.mant_bits);
        let field = (bits & self.exp_mask()) >> self.mant_bits;
        let mant = (bits & self.mant_mask()) as u64;
        if field == 0 {
            // Zero or subnormal: mant·2^(emin − mant_bits), exact in binary64.
            let magnitude = mant as f64 * pow2(self.emin() - self.mant_bits as i32);
            return f64::from_bits(magnitude.to_bits() | sign);
        }
        if field == self.exp_mask() >> self.mant_bits
            && (!self.finite_only || mant == self.mant_mask() as u64)
        {
            // Infinity, or a NaN keeping its sign and payload and made quiet, as hardware
            // widening does.
            let quiet = if mant == 0 { 0 } else { 1 << 51 };
            return f64::from_bits(sign | 0x7ff << 52 | quiet | mant << (52 - self.mant_bits));
        }
        // A normal number keeps its significand bits and moves its exponent to binary64's bias.
        let exponent = (field as i64 - self.bias() as i64 + 1023) as u64;
        f64::from_bits(sign | exponent << 52 | mant << (52 - self.mant_bits))
    }
    /// Sign and exponent field of a pattern (the bits above the trailing significand): equal
    /// for two patterns exactly when they share a sign and a binade (zeros with subnormals).
    #[inline]
    pub fn sign_and_exponent(self, bits: u32) -> u32 {
        bits >> self.mant_bits
    }
    /// Pattern of a binary64 value that is a normal number of this format, `None` otherwise
    /// (subnormal, out of range, more significant bits than p, zero, infinite or NaN): the
    /// branch-light subset of [`Layout::from_f64_exact`] that per-point code needs.
    #[inline]
    pub fn normal_bits(self, value: f64) -> Option<u32> {
        let b = value.to_bits();
        let field = ((b >> 52) & 0x7ff) as i32;
        let e = field - 1023;
        if field == 0 || field == 0x7ff || e < self.emin() || e > self.emax() {
            return None;
        }
        let dropped = 52 - self.mant_bits;
        let mant = b & ((1u64 << 52) - 1);
        if mant & ((1u64 << dropped) - 1) != 0 {
            return None;
        }
        if self.finite_only && e == self.emax() && (mant >> dropped) as u32 == self.mant_mask() {
            return None;
        }
        let sign = ((b >> 63) as u32) << (self.exp_bits + self.mant_bits);
        Some(sign | ((e + self.bias()) as u32) << self.mant_bits | (mant >> dropped) as u32)
    }
    /// Whether a pattern is a finite number (not an infinity or NaN).
    #[inline]
    pub fn is_finite(self, bits: u32) -> bool {
        if self.finite_only {
            return bits & self.magnitude_mask() != self.magnitude_mask();
        }
        bits & self.exp_mask() != self.exp_mask()
    }
    /// 1/ulp of the binade `binade`: 2^(p − 1 − binade). Multiplying by it gives the same
    /// binary64 result as dividing by the ulp (a power of two whose reciprocal is exact),
    /// without a division's latency.
    #[inline]
    pub fn inverse_ulp_of_binade(self, binade: i32) -> f64 {
        pow2(self.precision() as i32 - 1 - binade)
    }
    /// Pattern of an exactly representable binary64 value.
    #[inline]
    pub fn from_f64_exact(self, value: f64) -> Option<u32> {
        if value.is_nan() {
            return Some(self.quiet_nan());
        }
        let negative = value.is_sign_negative();
        if value.is_infinite() {
            return (!self.finite_only).then(|| self.infinity(negative));
        }
        if value == 0.0 {
            return Some(if negative { self.sign_bit() } else { 0 });
        }
        let (k, e) = integer_significand(value.abs());
        let zeros = k.trailing_zeros();
        let (k, e) = (k >> zeros, e + zeros as i32);
        if e < self.emin() - self.mant_bits as i32 || k >= 1u64 << self.precision() {
            return None;
        }
        let bits = self.encode(negative, k, e);
        // Overflow (to ±∞, NaN or a saturated ±max) changes the value.
        (self.is_finite(bits) && self.to_f64(bits) == value).then_some(bits)
    }
    /// Pattern of `±k·2^quantum_exp` where k ≤ 2^p is an already rounded integer significand.
    #[inline(always)]
    pub fn encode(self, negative: bool, mut k: u64, mut quantum_exp: i32) -> u32 {
        let sign = if negative { self.sign_bit() } else { 0 };
        if k == 0 {
            return sign;
        }
        let p = self.precision();
        let min_quantum = self.emin() - self.mant_bits as i32;
        while k >= 1u64 << p {
            debug_assert!(k & 1 == 0, "significand {k} is not rounded to {p} bits");
            k >>= 1;
            quantum_exp += 1;
        }
        while k < 1u64 << (p - 1) && quantum_exp > min_quantum {
            k <<= 1;
            quantum_exp -= 1;
        }
        debug_assert!(
            quantum_exp >= min_quantum,
            "value below the subnormal quantum"
        );
        if k < 1u64 << (p - 1) {
            return sign | k as u32;
        }
        let field = quantum_exp - min_quantum + 1;
        let top = (1 << self.exp_bits) - 1;
        let mant = k as u32 & self.mant_mask();
        if field > top || (field == top && (!self.finite_only || mant == self.mant_mask())) {
            return self.overflow(negative);
        }
        sign | ((field as u32) << self.mant_bits) | mant
    }
    /// What a value beyond the finite range (an exact infinity included) rounds to: ±max when
    /// saturating, else ±∞, or the NaN of that sign in a format without infinities (the OFP8
    /// specification's two conversion modes).
    #[inline]
    pub fn overflow(self, negative: bool) -> u32 {
        if self.saturating {
            self.max_finite(negative)
        } else {
            self.infinity(negative)
        }
    }
    /// The canonical quiet NaN (positive, top significand bit set; E4M3's only NaN, S.1111.111).
    #[inline]
    pub fn quiet_nan(self) -> u32 {
        if self.finite_only {
            return self.magnitude_mask();
        }
        self.exp_mask() | (1 << (self.mant_bits - 1))
    }
    /// Infinity of a sign; in a format without infinities, the pattern right above the largest
    /// finite magnitude (its NaN), so that ordinals, ranges and sign masks work alike.
    #[inline]
    pub fn infinity(self, negative: bool) -> u32 {
        let sign = if negative { self.sign_bit() } else { 0 };
        if self.finite_only {
            return self.magnitude_mask() | sign;
        }
        self.exp_mask() | sign
    }
    /// Largest finite magnitude of a sign.
    #[inline]
    pub fn max_finite(self, negative: bool) -> u32 {
        self.infinity(negative) - 1
    }
    /// Position on the number line; ±0 → 0.
    #[inline]
    pub fn ordinal(self, bits: u32) -> i64 {
        let magnitude = (bits & self.magnitude_mask()) as i64;
        if self.is_sign_negative(bits) {
            -magnitude
        } else {
            magnitude
        }
    }
    /// Inverse of [`Layout::ordinal`].
    #[inline]
    pub fn from_ordinal(self, ordinal: i64) -> u32 {
        if ordinal < 0 {
            self.sign_bit() | (-ordinal) as u32
        } else {
            ordinal as u32
        }
    }
    /// IEEE nextUp.
    #[inline]
    pub fn next_up(self, bits: u32) -> u32 {
        match self.classify(bits) {
            Class::Nan => bits,
            Class::Infinite if !self.is_sign_negative(bits) => bits,
            Class::Zero => 1,
            _ => self.from_ordinal(self.ordinal(bits) + 1),
        }
    }
    /// IEEE nextDown.
    #[inline]
    pub fn next_down(self, bits: u32) -> u32 {
        match self.classify(bits) {
            Class::Nan => bits,
            Class::Infinite if self.is_sign_negative(bits) => bits,
            Class::Zero => self.sign_bit() | 1,
            _ => self.from_ordinal(self.ordinal(bits) - 1),
        }
    }
}

/// 2^e as binary64, exact for −1074 ≤ e ≤ 1023.
#[inline]
pub(crate) fn pow2(e: i32) -> f64 {
    if e >= -1022 {
        f64::from_bits(((e + 1023) as u64) << 52)
    } else {
        f64::from_bits(1u64 << (e + 1074))
    }
}

/// Writes a positive finite binary64 as k·2^e with an integer k < 2^53.
fn integer_significand(value: f64) -> (u64, i32) {
    let bits = value.to_bits();
    let field = ((bits >> 52) & 0x7ff) as i32;
    let mant = bits & ((1u64 << 52) - 1);
    if field == 0 {
        (mant, -1074)
    } else {
        (mant | (1u64 << 52), field - 1075)
    }
}
