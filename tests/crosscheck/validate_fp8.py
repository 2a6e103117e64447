"""Checks of the OFP8 formats -- the cross-check's own (ofp8.py) and ulpgauge's -- against the
OFP8 specification's limits and ml_dtypes' float8_e4m3fn / float8_e5m2 conversions.

ml_dtypes' float8_e4m3fn is OFP8 E4M3 ("fn": finite, with NaN) and float8_e5m2 is OFP8 E5M2;
its conversions round to nearest, ties to even, and are non-saturating (E4M3 overflow -> NaN,
E5M2 overflow -> inf).  For the saturating mode the reference is ml_dtypes' conversion of the
value clipped to +-max first (the specification's definition of saturation).  Every test value
is a binary32 number, so ml_dtypes' conversion is one rounding of it.

Usage: python3 tests/crosscheck/validate_fp8.py [--ulpgauge target/release/ulpgauge]
"""

import argparse
import json
import random
import subprocess
import sys
from fractions import Fraction

import ml_dtypes
import numpy as np

from ofp8 import E4M3, E4M3_SAT, E5M2, E5M2_SAT

TWO = Fraction(2)
DTYPES = {"e4m3": ml_dtypes.float8_e4m3fn, "e5m2": ml_dtypes.float8_e5m2}


def check_limits(problems):
    """OFP8 v1.0, table of E4M3 / E5M2 encodings (exponent bias 7 / 15)."""
    want = [
        # (format, pattern, value or kind, what the specification calls it)
        (E4M3, 0x7E, Fraction(448), "E4M3 max normal S.1111.110 = 448"),
        (E4M3, 0x08, TWO**-6, "E4M3 min normal S.0001.000 = 2^-6"),
        (E4M3, 0x07, Fraction(7, 8) * TWO**-6, "E4M3 max subnormal S.0000.111 = 0.875 * 2^-6"),
        (E4M3, 0x01, TWO**-9, "E4M3 min subnormal S.0000.001 = 2^-9"),
        (E4M3, 0x7F, "nan", "E4M3 NaN S.1111.111"),
        (E4M3, 0xFF, "nan", "E4M3 NaN S.1111.111 (negative)"),
        (E4M3, 0x78, Fraction(256), "E4M3 S.1111.000 is a number (no infinities): 256"),
        (E5M2, 0x7B, Fraction(57344), "E5M2 max normal S.11110.11 = 57344"),
        (E5M2, 0x04, TWO**-14, "E5M2 min normal S.00001.00 = 2^-14"),
        (E5M2, 0x03, Fraction(3, 4) * TWO**-14, "E5M2 max subnormal S.00000.11 = 0.75 * 2^-14"),
        (E5M2, 0x01, TWO**-16, "E5M2 min subnormal S.00000.01 = 2^-16"),
        (E5M2, 0x7C, "+inf", "E5M2 infinity S.11111.00"),
        (E5M2, 0xFC, "-inf", "E5M2 -infinity"),
        (E5M2, 0x7D, "nan", "E5M2 NaN S.11111.01"),
        (E5M2, 0x7E, "nan", "E5M2 NaN S.11111.10"),
        (E5M2, 0x7F, "nan", "E5M2 NaN S.11111.11"),
    ]
    for fmt, bits, value, what in want:
        d = fmt.decode(bits)
        got = {"nan": "nan"}.get(d[0]) or (("-inf" if d[1] else "+inf") if d[0] == "inf" else d[1])
        if got != value:
            problems.append("ofp8.py: %s, got %r" % (what, got))
    return want


def check_against_ml_dtypes(problems):
    """Every pattern decoded, and values around every rounding boundary converted."""
    pats = np.arange(256, dtype=np.uint8)
    for fmt in (E4M3, E5M2):
        theirs = pats.view(DTYPES[fmt.name]).astype(np.float64).tolist()
        for b in range(256):
            mine = fmt.to_float(b)
            same = (mine != mine and theirs[b] != theirs[b]) or (
                mine == theirs[b] and str(mine)[0] == str(theirs[b])[0])
            if not same:
                problems.append("%s decode 0x%02x: ofp8.py %r, ml_dtypes %r" % (
                    fmt.name, b, mine, theirs[b]))
    for fmt, sat in ((E4M3, E4M3_SAT), (E5M2, E5M2_SAT)):
        for x in rounding_values(fmt):
            arr = np.array([x], dtype=np.float32)
            nonsat = int(arr.astype(DTYPES[fmt.name]).view(np.uint8)[0])
            clipped = np.clip(arr, -float(fmt.max_value), float(fmt.max_value))
            satd = int(clipped.astype(DTYPES[fmt.name]).view(np.uint8)[0])
            for f, want in ((fmt, nonsat), (sat, satd)):
                mine = f.round_float(float(x))
                if mine != want and not (f.is_nan(mine) and f.is_nan(want)):
                    problems.append("%s rounding of %r: ofp8.py 0x%02x, ml_dtypes 0x%02x" % (
                        f.name, float(x), mine, want))


def rounding_values(fmt):
    """Each finite value, the midpoints to its neighbour and their binary32 neighbours, values
    beyond max, infinities; both signs."""
    finite = sorted({fmt.decode(b)[1] for b in range(128) if fmt.decode(b)[0] == "num"})
    step = finite[-1] - finite[-2]
    finite.append(finite[-1] + step)  # the first value past max, for the midpoint above it
    out = []
    for a, b in zip(finite, finite[1:]):
        mid = np.float32((a + b) / 2)
        out += [float(a), float(mid), float(np.nextafter(mid, np.float32(np.inf))),
                float(np.nextafter(mid, np.float32(0)))]
    out += [float(fmt.max_value) * k for k in (1.5, 2, 1000)]
    out += [float(fmt.decode(1)[1]) / 2, float(fmt.decode(1)[1]) / 4, float("inf")]
    out = [np.float32(v) for v in out]
    return out + [-v for v in out]


def check_ulpgauge(exe, problems):
    """ulpgauge's reading of every pattern and its rounding of decimal inputs (eval --json),
    against ml_dtypes; both overflow modes."""
    checked = 0
    for fmt in (E4M3, E5M2):
        dtype = DTYPES[fmt.name]
        for mode in ("nan", "saturate"):
            cmd = [exe, "batch", "--function", "relu", "--format", fmt.name,
                   "--fp8-overflow", mode]
            # relu is the identity on x >= 0 and on NaN: its table shows how ulpgauge reads
            # and writes every non-negative pattern.
            out = subprocess.run(cmd, input="\n".join("0x%02x" % b for b in range(128)),
                                 capture_output=True, text=True, check=True).stdout.split()
            ys = [int(t, 16) for t in out[1::2]]
            theirs = np.arange(128, dtype=np.uint8).view(dtype).astype(np.float64)
            for b, y in enumerate(ys):
                t = theirs[b]
                want = "nan" if t != t else float(np.maximum(t, 0.0))
                if mode == "saturate" and want == float("inf"):
                    want = float(fmt.max_value)  # saturation clamps an infinite value too
                got = "nan" if fmt.is_nan(y) else fmt.to_float(y)
                checked += 1
                if want != got:
                    problems.append("ulpgauge %s relu(0x%02x) = 0x%02x, ml_dtypes value %r" % (
                        fmt.name, b, y, want))
        rng = random.Random(5)
        values = [v for v in rounding_values(fmt) if np.isfinite(v)]
        for x in rng.sample(values, 40) + [v for v in values if abs(v) > float(fmt.max_value)]:
            arr = np.array([x], dtype=np.float32)
            for mode in ("nan", "saturate"):
                src = np.clip(arr, -float(fmt.max_value), float(fmt.max_value)) \
                    if mode == "saturate" else arr
                want = int(src.astype(dtype).view(np.uint8)[0])
                # Python's repr of a binary32 value as binary64 is an exact decimal of it.
                text = repr(float(x))
                r = subprocess.run([exe, "eval", "--function", "relu", "--format", fmt.name,
                                    "--fp8-overflow", mode, "--json", text],
                                   capture_output=True, text=True)
                if r.returncode != 0:
                    problems.append("ulpgauge eval %s %s: exit %d %s" % (
                        fmt.name, text, r.returncode, r.stderr.strip()))
                    continue
                got = int(json.loads(r.stdout)["input"]["bits"], 16)
                checked += 1
                same = got == want or (fmt.is_nan(got) and fmt.is_nan(want))
                if not same:
                    problems.append("ulpgauge %s --fp8-overflow %s rounds %s to 0x%02x, "
                                    "ml_dtypes 0x%02x" % (fmt.name, mode, text, got, want))
    return checked


def run_all(exe=None):
    problems = []
    check_limits(problems)
    check_against_ml_dtypes(problems)
    checked = check_ulpgauge(exe, problems) if exe else 0
    return problems, checked


if __name__ == "__main__":
    ap = argparse.ArgumentParser()
    ap.add_argument("--ulpgauge", default=None)
    a = ap.parse_args()
    p, n = run_all(a.ulpgauge)
    print("\n".join(p) if p else "OFP8 checks: ok (%d ulpgauge values compared)" % n)
    sys.exit(1 if p else 0)
