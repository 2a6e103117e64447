"""Binary floating-point formats for the cross-check, written from the standard, not from ulpgauge.

Parameters from IEEE 754-2019, Table 3.5 (binary interchange formats): binary16 has precision
p = 11 and emax = 15; binary32 has p = 24 and emax = 127; emin = 1 - emax in both.  bfloat16 is
not in IEEE 754: it is binary32's sign and 8-bit exponent with p = 8 (common practice, as in
the ml_dtypes and the x86/Arm bf16 conversion instructions).

Rounding is round-to-nearest, ties-to-even (IEEE 754-2019 4.3.1, roundTiesToEven), applied once
to the exact value: subnormal results are rounded at their reduced precision; a value of
magnitude >= max + ulp(max)/2 overflows to infinity (7.4); an inexact value that rounds to zero
keeps its sign (6.3).
"""

from fractions import Fraction


class Fmt:
    """One binary format: precision p (with the hidden bit), exponent bits, width."""

    def __init__(self, name, width, ebits, p):
        self.name = name
        self.width = width
        self.ebits = ebits
        self.p = p
        self.fbits = p - 1
        self.bias = (1 << (ebits - 1)) - 1
        self.emax = self.bias
        self.emin = 1 - self.emax
        self.sign_bit = 1 << (width - 1)
        self.exp_mask = ((1 << ebits) - 1) << self.fbits
        self.frac_mask = (1 << self.fbits) - 1
        self.inf = self.exp_mask
        # The canonical quiet NaN: exponent all ones, only the top fraction bit set.
        self.qnan = self.exp_mask | (1 << (self.fbits - 1))
        self.max_bits = self.exp_mask - 1
        self.hexdigits = width // 4

    def overflow(self, neg):
        """What a value beyond the finite range (or an infinite one) rounds to: +-inf."""
        return self.inf | (self.sign_bit if neg else 0)

    def hex(self, bits):
        return "0x%0*x" % (self.hexdigits, bits)

    def is_nan(self, bits):
        return (bits & self.exp_mask) == self.exp_mask and (bits & self.frac_mask) != 0

    def decode(self, bits):
        """bits -> ('nan',) | ('inf', negative) | ('num', Fraction, negative)."""
        neg = bool(bits & self.sign_bit)
        e = (bits & self.exp_mask) >> self.fbits
        f = bits & self.frac_mask
        if e == (1 << self.ebits) - 1:
            return ("nan",) if f else ("inf", neg)
        if e == 0:
            mag = Fraction(f) * Fraction(2) ** (self.emin - self.fbits)
        else:
            mag = Fraction(f | (1 << self.fbits)) * Fraction(2) ** (e - self.bias - self.fbits)
        return ("num", -mag if neg else mag, neg)

    def to_float(self, bits):
        """bits -> Python float (exact: every value of these formats is a binary64 value)."""
        d = self.decode(bits)
        if d[0] == "nan":
            return float("nan")
        if d[0] == "inf":
            return float("-inf") if d[1] else float("inf")
        v = float(d[1])
        return -0.0 if (v == 0 and d[2]) else v

    def ordinal(self, bits):
        """Position in the ordered line of values; +0 and -0 both map to 0."""
        mag = bits & ~self.sign_bit
        return -mag if bits & self.sign_bit else mag

    def from_ordinal(self, o):
        return (self.sign_bit | -o) if o < 0 else o

    def round_dyadic(self, neg, num, den, eps=0):
        """Round sign*(num/den + eps*infinitesimal) (num >= 0, den > 0 powers or not) to bits.

        eps in {-1, 0, +1} says on which side of num/den the exact value lies, by an amount
        smaller than any rounding distance; it breaks ties and gives zero its sign.
        """
        if num == 0:
            if eps == 0:
                raise ValueError("exact zero: the caller decides its sign")
            # An infinitesimal below the smallest subnormal rounds to zero, keeping its sign.
            return self.sign_bit if (neg != (eps < 0)) else 0
        if neg:
            eps = -eps  # eps now refers to the magnitude
        # e = floor(log2(num/den)).
        e = num.bit_length() - den.bit_length()
        if (num < (den << e)) if e >= 0 else ((num << -e) < den):
            e -= 1
        sign = self.sign_bit if neg else 0
        if e < self.emin - self.p - 1:
            # Below a quarter of the smallest subnormal: zero, with its sign.
            return sign
        if e > self.emax + 1:
            return sign | self.inf
        q = max(e, self.emin) - self.fbits  # exponent of one unit in the last place
        if q >= 0:
            d = den << q
            n, r = divmod(num, d)
        else:
            d = den
            n, r = divmod(num << -q, den)
        twice = 2 * r
        if twice > d or (twice == d and (eps > 0 or (eps == 0 and n & 1))):
            n += 1
        if n == 0:
            return sign
        if n >> self.p:  # carried into the next binade
            n >>= 1
            q += 1
        if n >> self.fbits:  # normal
            be = q + self.fbits + self.bias
            if be >= (1 << self.ebits) - 1:
                return sign | self.inf
            return sign | (be << self.fbits) | (n & self.frac_mask)
        return sign | n  # subnormal (q is emin - fbits)

    def round_fraction(self, q, eps=0, zero_negative=False):
        """Round a Fraction (plus an infinitesimal of sign eps) to bits; an exact zero is +0
        unless zero_negative."""
        if q == 0 and eps == 0:
            return self.sign_bit if zero_negative else 0
        neg = q < 0 if q != 0 else eps < 0
        if q == 0:
            return self.round_dyadic(False, 0, 1, eps)
        return self.round_dyadic(neg, abs(q.numerator), q.denominator, eps)

    def round_float(self, x):
        """Round a Python float (binary64) to bits."""
        if x != x:
            return self.qnan
        if x in (float("inf"), float("-inf")):
            return self.inf | (self.sign_bit if x < 0 else 0)
        if x == 0:
            return self.sign_bit if str(x).startswith("-") else 0
        return self.round_fraction(Fraction(x))


F32 = Fmt("f32", 32, 8, 24)
F16 = Fmt("f16", 16, 5, 11)
BF16 = Fmt("bf16", 16, 8, 8)
FORMATS = {"f32": F32, "f16": F16, "bf16": BF16}


def mpf_round(fmt, v, slack_bits):
    """Round an approximation v (mpmath mpf, nonzero, finite) whose relative error is below
    2^-slack_bits.  Returns bits, or None when the interval v*(1 +- 2^-slack_bits) straddles a
    rounding boundary (the caller then re-evaluates at a higher precision)."""
    sign, man, exp, _bc = v._mpf_
    man = int(man)
    # The interval [man*2^k - man, man*2^k + man] * 2^(exp-k) contains the exact value.
    lo = (man << slack_bits) - man
    hi = (man << slack_bits) + man
    e = exp - slack_bits
    if e >= 0:
        a = fmt.round_dyadic(bool(sign), lo << e, 1)
        b = fmt.round_dyadic(bool(sign), hi << e, 1)
    else:
        a = fmt.round_dyadic(bool(sign), lo, 1 << -e)
        b = fmt.round_dyadic(bool(sign), hi, 1 << -e)
    return a if a == b else None
