"""Checks of the cross-check's own format code against outside sources, run before every
cross-check: the IEEE 754-2019 limits, numpy's float16/float32 and ml_dtypes' bfloat16.

numpy converts float64 -> float16 and float64 -> float32 with one correctly rounded
roundTiesToEven step (numpy's half conversion handles subnormals and overflow itself);
ml_dtypes converts float32 -> bfloat16 with roundTiesToEven.  Values below are chosen so that
every conversion is a single rounding of the exact input.
"""

import random
from fractions import Fraction

import ml_dtypes
import numpy as np

from ieee import BF16, F16, F32

TWO = Fraction(2)


def _check(ok, what, problems):
    if not ok:
        problems.append(what)


def check_limits(problems):
    """IEEE 754-2019 Table 3.5 and the definitions of 3.4: max = (2 - 2^(1-p)) * 2^emax,
    smallest normal 2^emin, smallest subnormal 2^(emin + 1 - p)."""
    # binary16: p = 11, emax = 15 -> 65504, 2^-14, 2^-24 (IEEE 754-2019 Table 3.5).
    _check(F16.decode(0x7BFF)[1] == 65504, "f16 max != 65504", problems)
    _check(F16.decode(0x0400)[1] == TWO**-14, "f16 min normal != 2^-14", problems)
    _check(F16.decode(0x0001)[1] == TWO**-24, "f16 min subnormal != 2^-24", problems)
    # binary32: p = 24, emax = 127 (IEEE 754-2019 Table 3.5).
    _check(F32.decode(0x7F7FFFFF)[1] == (2 - TWO**-23) * TWO**127, "f32 max", problems)
    _check(F32.decode(0x00800000)[1] == TWO**-126, "f32 min normal", problems)
    _check(F32.decode(0x00000001)[1] == TWO**-149, "f32 min subnormal", problems)
    # bfloat16: binary32's exponent range with p = 8 (common practice).
    _check(BF16.decode(0x7F7F)[1] == (2 - TWO**-7) * TWO**127, "bf16 max", problems)
    _check(BF16.decode(0x0080)[1] == TWO**-126, "bf16 min normal", problems)
    _check(BF16.decode(0x0001)[1] == TWO**-133, "bf16 min subnormal", problems)
    # Overflow threshold max + ulp(max)/2 rounds (ties-to-even) to infinity (IEEE 754-2019 7.4).
    _check(F16.round_fraction(Fraction(65520)) == 0x7C00, "f16 65520 -> inf", problems)
    _check(F16.round_fraction(Fraction(65520), -1) == 0x7BFF, "f16 65520- -> max", problems)
    _check(F16.round_fraction(Fraction(-65520)) == 0xFC00, "f16 -65520 -> -inf", problems)
    # Half the smallest subnormal ties to +0 (even); just above it rounds up; signs are kept.
    _check(F16.round_fraction(TWO**-25) == 0x0000, "f16 2^-25 -> +0", problems)
    _check(F16.round_fraction(TWO**-25, +1) == 0x0001, "f16 2^-25+ -> min sub", problems)
    _check(F16.round_fraction(-TWO**-26) == 0x8000, "f16 -2^-26 -> -0", problems)
    _check(F32.round_fraction(3 * TWO**-150) == 0x00000002, "f32 3*2^-150 -> 2^-148", problems)
    _check(F32.round_fraction(Fraction(0), zero_negative=True) == 0x80000000, "-0", problems)
    # The canonical quiet NaNs named in the brief.
    _check((F32.qnan, F16.qnan, BF16.qnan) == (0x7FC00000, 0x7E00, 0x7FC0), "qnan", problems)


def check_decoding(problems):
    """Every 16-bit pattern, and 2^18 random binary32 patterns, against numpy / ml_dtypes."""
    pats = np.arange(65536, dtype=np.uint32).astype(np.uint16)
    for fmt, ref in ((F16, pats.view(np.float16)), (BF16, pats.view(ml_dtypes.bfloat16))):
        ref64 = ref.astype(np.float64)
        for b in range(65536):
            mine = fmt.to_float(b)
            theirs = float(ref64[b])
            same = (mine != mine and theirs != theirs) or (
                mine == theirs and str(mine)[0] == str(theirs)[0]
            )
            if not same:
                problems.append("%s decode %s: %r vs %r" % (fmt.name, fmt.hex(b), mine, theirs))
                return
    rng = random.Random(7)
    bits = [rng.getrandbits(32) for _ in range(1 << 18)]
    ref = np.array(bits, dtype=np.uint32).view(np.float32).astype(np.float64)
    for b, theirs in zip(bits, ref.tolist()):
        mine = F32.to_float(b)
        if not ((mine != mine and theirs != theirs) or mine == theirs):
            problems.append("f32 decode %s" % F32.hex(b))
            return


def _rounding_inputs(fmt, rng, count):
    """Float64 values around fmt's rounding boundaries: midpoints, their binary64 neighbours,
    random values across the whole range including subnormals and overflow."""
    out = []
    for _ in range(count):
        b = rng.getrandbits(fmt.width - 1)
        if (b & fmt.exp_mask) == fmt.exp_mask:
            continue
        d = fmt.decode(b)[1]
        nxt = fmt.decode(b + 1)[1] if b + 1 < fmt.inf else d + (d - fmt.decode(b - 1)[1])
        mid = (d + nxt) / 2
        s = -1 if rng.random() < 0.5 else 1
        m = float(mid)
        out += [s * m, s * np.nextafter(m, np.inf), s * np.nextafter(m, -np.inf)]
        out.append(s * float(d + (nxt - d) * Fraction(rng.random())))
    return out


def check_rounding(problems):
    """Our round_fraction against numpy's float64 -> float16 / float32 conversion, and
    ml_dtypes' float32 -> bfloat16 conversion."""
    rng = random.Random(11)
    xs = _rounding_inputs(F16, rng, 20000) + [65519.99, 65520.0, 2.0**-25, 3 * 2.0**-26]
    ref = np.array(xs, dtype=np.float64).astype(np.float16).view(np.uint16).tolist()
    for x, r in zip(xs, ref):
        if F16.round_fraction(Fraction(x)) != r and x != 0:
            problems.append("f16 rounding of %r: mine %s numpy %s" % (x, F16.hex(
                F16.round_fraction(Fraction(x))), F16.hex(r)))
            return
    xs = _rounding_inputs(F32, rng, 20000) + [3.4028235677973366e38, 2.0**-150, 2.0**-151]
    ref = np.array(xs, dtype=np.float64).astype(np.float32).view(np.uint32).tolist()
    for x, r in zip(xs, ref):
        if x != 0 and F32.round_fraction(Fraction(x)) != r:
            problems.append("f32 rounding of %r" % x)
            return
    # bf16 from exact binary32 values (a single rounding): binary32 patterns near bf16 midpoints.
    bits = []
    for _ in range(20000):
        b = rng.getrandbits(31)
        if (b & F32.exp_mask) == F32.exp_mask:
            continue
        low = (1 << 15) + rng.randint(-2, 2) if rng.random() < 0.7 else rng.getrandbits(16)
        b = (b & ~0xFFFF) | (low & 0xFFFF)
        bits.append(b | (rng.getrandbits(1) << 31))
    arr = np.array(bits, dtype=np.uint32).view(np.float32)
    ref = arr.astype(ml_dtypes.bfloat16).view(np.uint16).tolist()
    for b, r in zip(bits, ref):
        q = F32.decode(b)[1]
        if q != 0 and BF16.round_fraction(q) != r:
            problems.append("bf16 rounding of %s: mine %s ml_dtypes %s" % (
                F32.hex(b), BF16.hex(BF16.round_fraction(q)), BF16.hex(r)))
            return


def run_all():
    problems = []
    check_limits(problems)
    check_decoding(problems)
    check_rounding(problems)
    return problems


if __name__ == "__main__":
    p = run_all()
    print("\n".join(p) if p else "format checks: ok")
