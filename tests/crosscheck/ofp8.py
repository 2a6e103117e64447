"""OCP 8-bit floating point for the cross-check, written from the OFP8 specification (Open
Compute Project, "OCP 8-bit Floating Point Specification (OFP8)", revision 1.0), not from
ulpgauge.

E4M3: 4 exponent bits, 3 mantissa bits (p = 4), bias 7; no infinities; S.1111.111 is the only
NaN of each sign, so the top exponent field holds normal numbers up to 1.75 * 2^8 = 448.
E5M2: 5 exponent bits, 2 mantissa bits (p = 3), bias 15; IEEE 754-style infinities and NaNs;
max 1.75 * 2^15 = 57344.  Both have subnormals.

Conversion into them (the specification's section on conversions): round to nearest, ties to
even, at the format's precision with subnormals at their reduced precision; a rounded
magnitude above max is out of range.  Non-saturating mode (the default): out-of-range gives NaN
in E4M3 and +-inf in E5M2, and an infinite value does too.  Saturating mode: out-of-range and
infinite values give +-max.  NaN stays NaN.

Here rounding is done first with an unbounded exponent and the result compared with max
afterwards, a different formulation from ulpgauge's encoder (which detects overflow in the
exponent field).
"""

from fractions import Fraction

from ieee import Fmt


class Fp8(Fmt):
    """An OFP8 format; `finite_only` for E4M3's encoding, `saturating` for the conversion mode."""

    def __init__(self, name, ebits, p, finite_only, saturating):
        Fmt.__init__(self, name, 8, ebits, p)
        self.finite_only = finite_only
        self.saturating = saturating
        if finite_only:
            self.emax = self.bias + 1
            self.qnan = 0x7F
            top = self.frac_mask - 1  # 1.110 in the top binade: S.1111.110
        else:
            top = self.frac_mask
        self.emin = 1 - self.bias
        self.max_value = Fraction((1 << self.fbits) | top, 1 << self.fbits) * Fraction(2) ** self.emax
        self.max_bits = (((1 << ebits) - 1 - (0 if finite_only else 1)) << self.fbits) | top
        # ulpgauge's "infinity" slot: E4M3 has none; decode never returns 'inf' for it.
        if finite_only:
            self.inf = None

    def is_nan(self, bits):
        if self.finite_only:
            return bits & 0x7F == 0x7F
        return Fmt.is_nan(self, bits)

    def decode(self, bits):
        neg = bool(bits & self.sign_bit)
        if self.finite_only:
            if bits & 0x7F == 0x7F:
                return ("nan",)
            e = (bits & self.exp_mask) >> self.fbits
            f = bits & self.frac_mask
            if e == 0:
                mag = Fraction(f) * Fraction(2) ** (self.emin - self.fbits)
            else:
                mag = Fraction(f | (1 << self.fbits)) * Fraction(2) ** (e - self.bias - self.fbits)
            return ("num", -mag if neg else mag, neg)
        return Fmt.decode(self, bits)

    def overflow(self, neg):
        sign = self.sign_bit if neg else 0
        if self.saturating:
            return sign | self.max_bits
        return sign | (0x7F if self.finite_only else self.exp_mask)

    def round_dyadic(self, neg, num, den, eps=0):
        if num == 0:
            if eps == 0:
                raise ValueError("exact zero: the caller decides its sign")
            return self.sign_bit if (neg != (eps < 0)) else 0
        if neg:
            eps = -eps
        sign = self.sign_bit if neg else 0
        e = num.bit_length() - den.bit_length()
        if (num < (den << e)) if e >= 0 else ((num << -e) < den):
            e -= 1
        if e < self.emin - self.p - 1:
            return sign
        q = max(e, self.emin) - self.fbits
        value = Fraction(num, den) / Fraction(2) ** q
        n = value.numerator // value.denominator
        r = value - n
        if r > Fraction(1, 2) or (r == Fraction(1, 2) and (eps > 0 or (eps == 0 and n & 1))):
            n += 1
        if n == 0:
            return sign
        rounded = n * Fraction(2) ** q
        if rounded > self.max_value:
            return self.overflow(neg)
        # Encode the in-range value n * 2^q.
        while n >> self.p:
            n >>= 1
            q += 1
        if n >> self.fbits == 0:
            return sign | n  # subnormal: q = emin - fbits
        be = q + self.fbits + self.bias
        return sign | (be << self.fbits) | (n & self.frac_mask)

    def round_float(self, x):
        if x != x:
            return self.qnan
        if x in (float("inf"), float("-inf")):
            return self.overflow(x < 0)
        return Fmt.round_float(self, x)


E4M3 = Fp8("e4m3", 4, 4, True, False)
E5M2 = Fp8("e5m2", 5, 3, False, False)
E4M3_SAT = Fp8("e4m3-sat", 4, 4, True, True)
E5M2_SAT = Fp8("e5m2-sat", 5, 3, False, True)
FP8 = {f.name: f for f in (E4M3, E5M2, E4M3_SAT, E5M2_SAT)}
