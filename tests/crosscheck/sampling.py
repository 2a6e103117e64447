"""Input points for one (function, format, role): special values, neighbours of kinks and
landmarks, hard regions (tiny and subnormal inputs, where outputs turn subnormal, overflow
edges, GELU's far left tail, the cross-check's own tail threshold) and random bit patterns."""

import math
import random

from ieee import F32


def _near(fmt, value, radius):
    """Patterns within `radius` steps (in the ordered line of values) of the nearest value."""
    o = fmt.ordinal(fmt.round_float(value))
    top = fmt.ordinal(fmt.max_bits)
    return [fmt.from_ordinal(i) for i in range(o - radius, o + radius + 1) if -top <= i <= top]


def _ordinal_range(fmt, rng, lo, hi, count):
    """Uniform over the patterns between two values (so every binade gets its share)."""
    a, b = fmt.ordinal(fmt.round_float(lo)), fmt.ordinal(fmt.round_float(hi))
    return [fmt.from_ordinal(rng.randint(a, b)) for _ in range(count)]


def _value_range(fmt, rng, lo, hi, count):
    """Uniform in value between lo and hi, rounded to the format."""
    return [fmt.round_float(rng.uniform(lo, hi)) for _ in range(count)]


def regions(fmt):
    """(lo, hi, share of the points, how) per format; `how` is 'ord' or 'val'."""
    if fmt.name == "f16":
        max_v = 65504.0
        return [
            (-2.0**-6, 2.0**-6, 0.08, "ord"),      # tiny and subnormal inputs, cancellation near 0
            (-20.0, -8.0, 0.06, "ord"),             # e^x outputs turn subnormal (2^-14 .. 2^-25)
            (8.0, 20.0, 0.03, "ord"),
            (10.5, 11.7, 0.03, "ord"),              # ln(65504) = 11.09: exp overflows in f16
            (-11.7, -10.5, 0.02, "ord"),
            (-6.0, -2.5, 0.06, "ord"),              # GELU's left tail turns subnormal in f16
            (-100.0, -20.0, 0.02, "ord"),
            (16384.0, max_v, 0.03, "ord"),          # overflow edge (selu's lambda*x, ...)
            (0.9 * max_v, max_v, 0.02, "ord"),
            (-max_v, -16384.0, 0.02, "ord"),
            (-1100.0, -900.0, 0.01, "ord"),         # around our own |x| = 1024 tail switch
            (900.0, 1100.0, 0.01, "ord"),
            (-8.0, 8.0, 0.05, "val"),
        ]
    max_v = float(F32.decode(F32.max_bits)[1])
    out = [
        (-2.0**-8, 2.0**-8, 0.08, "ord"),           # tiny and subnormal inputs
        (-110.0, -80.0, 0.06, "ord"),               # e^x outputs turn subnormal (x ~ -87 .. -104)
        (80.0, 110.0, 0.03, "ord"),                 # ln(max f32) = 88.72
        (-16.0, -8.0, 0.05, "ord"),                 # GELU (x ~ -13..-14), gelu-tanh (~ -10) tails
        (-1.0e4, -16.0, 0.03, "ord"),               # GELU's far left tail
        (1.0e37, max_v, 0.03, "ord"),               # overflow edge
        (0.9 * max_v, max_v, 0.02, "ord"),          # selu's lambda*x overflows above max/lambda
        (-max_v, -1.0e37, 0.02, "ord"),
        (-1100.0, -900.0, 0.01, "ord"),
        (900.0, 1100.0, 0.01, "ord"),
        (-8.0, 8.0, 0.04, "val"),
    ]
    if fmt.name == "f32":
        out += [(-20.0, 20.0, 0.10, "val"), (-100.0, 100.0, 0.08, "val")]
    return out


def specials(fmt):
    s = fmt.sign_bit
    pts = [0, s, fmt.inf, s | fmt.inf, fmt.qnan, s | fmt.qnan, fmt.inf | 1,  # signalling NaN
           fmt.qnan | 1, 1, s | 1, fmt.frac_mask, s | fmt.frac_mask,         # subnormal ends
           1 << fmt.fbits, s | (1 << fmt.fbits), fmt.max_bits, s | fmt.max_bits]
    return pts


def landmarks(fmt):
    """Kinks and other landmarks whose neighbours are checked step by step."""
    max_v = float(fmt.decode(fmt.max_bits)[1])
    ln_max = math.log(max_v)
    selu_edge = max_v / 1.0507009873554805  # lambda*x crosses the overflow threshold near here
    return [3.0, -3.0, 6.0, -6.0, 1.0, -1.0, 0.5, -0.5, 2.0, ln_max, -ln_max, 1024.0, -1024.0,
            selu_edge, -selu_edge]


def sample(fmt, n, rng):
    """At least min(n, all patterns) distinct patterns, in a reproducible order."""
    seen = {}

    def add(bits_list):
        for b in bits_list:
            seen.setdefault(b, None)

    add(specials(fmt))
    add(_near(fmt, 0.0, 30))
    for v in landmarks(fmt):
        add(_near(fmt, v, 12))
    for lo, hi, share, how in regions(fmt):
        count = max(1, int(n * share))
        pick = _ordinal_range if how == "ord" else _value_range
        add(pick(fmt, rng, lo, hi, count))
    total = 1 << fmt.width
    target = min(n, total)
    while len(seen) < target:
        add([rng.getrandbits(fmt.width) for _ in range(target - len(seen))])
    return list(seen)


def rng_for(seed, *key):
    return random.Random("%s|%s" % (seed, "|".join(map(str, key))))
