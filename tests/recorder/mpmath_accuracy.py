"""Max ulp error and worst input of recorded binary16 outputs, measured with mpmath alone.

Written independently of ulpgauge, from the textbook definitions and IEEE 754-2019:
- binary16: precision p = 11, emin = -14, largest finite 65504 (IEEE 754-2019 Table 3.5);
  round to nearest, ties to even; a value of magnitude >= 65504 + 2^4 (half an ulp of the
  largest finite) rounds to infinity (IEEE 754-2019 7.4).
- ulp(y) = 2^(max(floor(log2 |y|), emin) - p + 1) for y != 0 and 2^(emin - p + 1) for y = 0
  (Goldberg's definition, as in J.-M. Muller, "On the definition of ulp(x)", INRIA RR-5504).
- error = |y_hat - y| / ulp(y), over the inputs whose input and output are finite and whose
  correctly rounded value RN(y) is finite; a subnormal RN(y) returned as zero is a flush to
  zero and is not counted (the convention ulpgauge documents for its accuracy figures).
- the worst input is the one of largest error, the lowest bit pattern on ties.

Functions (common practice unless noted): sigmoid 1/(1 + e^-x); tanh; ELU with alpha = 1,
x for x > 0 and e^x - 1 otherwise (Clevert et al. 2016); GELU x*Phi(x) = (x/2)*erfc(-x/sqrt 2)
(Hendrycks & Gimpel 2016); softplus ln(1 + e^x).
"""

import mpmath
from mpmath import mp, mpf

P, EMIN, MAX = 11, -14, 65504
OVERFLOW = mpf(MAX + 16)

FUNCTIONS = {
    "sigmoid": lambda x: 1 / (1 + mp.exp(-x)),
    "tanh": lambda x: mp.tanh(x),
    "elu": lambda x: x if x > 0 else mp.expm1(x),
    "gelu": lambda x: x / 2 * mp.erfc(-x / mp.sqrt(2)),
    "softplus": lambda x: mp.log1p(mp.exp(x)),
}


def f16_value(bits):
    """A binary16 pattern -> ('nan'|'inf'|'num', value as mpf or None)."""
    sign = -1 if bits & 0x8000 else 1
    e = (bits >> 10) & 0x1F
    f = bits & 0x3FF
    if e == 0x1F:
        return ("nan", None) if f else ("inf", None)
    if e == 0:
        return "num", sign * mpf(f) * mpf(2) ** (EMIN - 10)
    return "num", sign * mpf(f | 0x400) * mpf(2) ** (e - 15 - 10)


def rn_class(y):
    """Class of RN(y) in binary16: 'overflow', 'zero', 'subnormal' or 'normal'."""
    a = abs(y)
    if a >= OVERFLOW:
        return "overflow"
    if a >= mpf(2) ** EMIN:
        return "normal"
    m = a * mpf(2) ** (10 - EMIN)  # in units of the smallest subnormal
    lo = mpmath.floor(m)
    frac = m - lo
    r = lo + (1 if frac > 0.5 or (frac == 0.5 and int(lo) % 2 == 1) else 0)
    if r == 0:
        return "zero"
    return "normal" if r >= 2**10 else "subnormal"


def ulp(y):
    if y == 0:
        return mpf(2) ** (EMIN - P + 1)
    _, e = mpmath.frexp(abs(y))  # |y| = m * 2^e with 1/2 <= m < 1
    return mpf(2) ** (max(int(e) - 1, EMIN) - P + 1)


def measure(function, inputs, outputs, prec=128):
    """(max ulp error, worst input bits, points counted) over paired binary16 bit patterns."""
    f = FUNCTIONS[function]
    best, worst, points = mpf(0), None, 0
    with mp.workprec(prec):
        for x_bits, y_bits in sorted(zip(inputs, outputs)):
            kind, x = f16_value(int(x_bits))
            if kind != "num":
                continue
            kind, y_hat = f16_value(int(y_bits))
            if kind != "num":
                continue
            y = f(x)
            c = rn_class(y)
            if c == "overflow" or (c == "subnormal" and y_hat == 0):
                continue
            points += 1
            err = abs(y_hat - y) / ulp(y)
            if worst is None or err > best:
                best, worst = err, int(x_bits)
    return float(best), worst, points
