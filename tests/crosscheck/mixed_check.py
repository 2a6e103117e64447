#!/usr/bin/env python3
"""`ulpgauge check --input-format F --output-format G` on the Lumen mixed-format demo kernels
(kernels-under-test/src/lumen_mixed.c, lumen_fp8.c), against this directory's own references.

For each kernel the script runs `check` (JSON report) and recomputes, independently of ulpgauge:
  * at the reported worst input: the correctly rounded reference (mixed.py's Mixed format: the
    input decoded in F by ieee.py/ofp8.py, the value from mpmath through functions.py with the
    cross-check's Ziv loop, rounded once into G) -- bit for bit -- and the ulp error of the
    kernel's output, |y_hat - y| / ulp_G(y) with ulp(y) = 2^(max(floor(log2|y|), emin) - p + 1)
    (Goldberg's ulp, J.-M. Muller, INRIA RR-5504), y from mpmath at 300 bits;
  * the kernel's output at that input, called here through ctypes (not through ulpgauge);
  * the same ulp error at every per-binade row's worst input, against the row's max_ulp;
  * at N random inputs of F: that no error exceeds the reported max_ulp;
  * for the truncating f32 -> bf16 tanh: that the rounding diagnosis names "toward-zero"
    (cutting the low 16 bits of an f32 is rounding toward zero: IEEE 754-2019 4.3.2,
    roundTowardZero, applied to the f32 value).
Bad pairs and conflicting options must exit 2 with one line on stderr.

Usage: python3 tests/crosscheck/mixed_check.py --ulpgauge target/release/ulpgauge
           [--lib kernels-under-test/build/liblumen_edge.so] [--points 200]
"""

import argparse
import ctypes
import json
import os
import random
import subprocess
import sys
import tempfile
from fractions import Fraction

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import mpmath  # noqa: E402
from mpmath import mp  # noqa: E402

import functions  # noqa: E402
from crosscheck import FORMATS, mine, round_approx  # noqa: E402
from ieee import F32  # noqa: E402
from mixed import Mixed  # noqa: E402

# (symbol, function, input format, output format, expected rounding rule or None)
KERNELS = [
    ("lumen_silu_bf16_f32", "silu", "bf16", "f32", None),
    ("lumen_tanh_f32_bf16_trunc", "tanh", "f32", "bf16", "toward-zero"),
    ("lumen_sigmoid_f16_f32", "sigmoid", "f16", "f32", None),
    ("lumen_sigmoid_f32_f16", "sigmoid", "f32", "f16", None),
    ("lumen_gelu_bf16_f16", "gelu", "bf16", "f16", None),
    ("lumen_tanh_f16_bf16", "tanh", "f16", "bf16", None),
    ("lumen_sigmoid_f16_e4m3", "sigmoid", "f16", "e4m3", None),
]

CTYPE = {8: ctypes.c_uint8, 16: ctypes.c_uint16, 32: ctypes.c_uint32}


def call_kernel(lib, symbol, inp, out, xs):
    """The kernel's outputs at input patterns xs, called in this process (C types per side)."""
    f = getattr(lib, symbol)
    n = len(xs)
    x = (CTYPE[inp.width] * n)(*xs)
    y = (CTYPE[out.width] * n)()
    f.argtypes = [ctypes.c_void_p, ctypes.c_void_p, ctypes.c_size_t]
    f.restype = None
    f(ctypes.addressof(x), ctypes.addressof(y), n)
    return list(y)


def exact_value(name, inp, bits, P):
    """y = f(x) at input pattern `bits` of inp, as an mpf at 300 bits (None if not finite)."""
    d = inp.decode(bits)
    if d[0] != "num":
        return None
    r = functions.evaluate(name, False, d[1], P)
    with mp.workprec(300):
        if r[0] == "exact":
            q = r[1]
            return mpmath.mpf(q.numerator) / q.denominator
        return +r[1](300)


def ulp_error(out, out_bits, y):
    """|y_hat - y| / ulp_out(y), computed here in mpmath at 300 bits."""
    d = out.decode(out_bits)
    if d[0] != "num" or y is None:
        return None
    with mp.workprec(300):
        y_hat = mpmath.mpf(d[1].numerator) / d[1].denominator
        e = out.emin if y == 0 else max(int(mpmath.floor(mpmath.log(abs(y), 2))), out.emin)
        # floor(log2) from a 300-bit log can be off by one at an exact power of two: fix it.
        if y != 0 and abs(y) < mpmath.mpf(2) ** e and e > out.emin:
            e -= 1
        if y != 0 and abs(y) >= mpmath.mpf(2) ** (e + 1):
            e += 1
        ulp = mpmath.mpf(2) ** (e - out.p + 1)
        return float(abs(y_hat - y) / ulp)


def close(a, b):
    return a is not None and b is not None and abs(a - b) <= 1e-9 * max(1.0, abs(b))


def run_check(exe, lib, symbol, name, i, o, extra=()):
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "r.json")
        cmd = [exe, "check", "--lib", lib, "--symbol", symbol, "--function", name,
               "--input-format", i, "--output-format", o, "--quiet", "--json", path] + list(extra)
        r = subprocess.run(cmd, capture_output=True, text=True)
        if r.returncode not in (0, 1):
            raise SystemExit("FAIL %s: exit %d %s" % (" ".join(cmd), r.returncode, r.stderr))
        with open(path) as f:
            return json.load(f)


def check_kernel(exe, lib_path, lib, case, points, fails):
    symbol, name, i, o, rule = case
    inp, out = FORMATS[i], FORMATS[o]
    fmt = Mixed(inp, out)
    P = functions.resolve_params(name, {}, "exact", out, F32,
                                 lambda f, fn: round_approx(f, fn)[0])
    rep = run_check(exe, lib_path, symbol, name, i, o)
    acc = rep["accuracy"]
    where = "%s (%s -> %s)" % (symbol, i, o)

    def fail(msg):
        fails.append("FAIL %s: %s" % (where, msg))

    # The report's keys name both sides (the contract) and `format` is the output's.
    if (rep.get("input_format"), rep.get("output_format"), rep.get("format")) != (i, o, o):
        fail("format keys %r" % ((rep.get("input_format"), rep.get("output_format"),
                                  rep.get("format")),))
    expected_coverage = "exhaustive" if inp.width <= 16 else "sampled"
    if acc["coverage"] != expected_coverage:
        fail("coverage %s, expected %s" % (acc["coverage"], expected_coverage))
    w = acc["worst"]
    xb, ob, rb = (int(w[k]["bits"], 16) for k in ("input", "output", "reference"))
    ref_bits, _ = mine(name, False, fmt, xb, P)
    if ref_bits != rb:
        fail("worst point %s: reference %s, mpmath %s" % (inp.hex(xb), out.hex(rb),
                                                          out.hex(ref_bits)))
    kernel_out = call_kernel(lib, symbol, inp, out, [xb])[0]
    if kernel_out != ob:
        fail("worst point %s: reported output %s, the kernel gives %s" % (
            inp.hex(xb), out.hex(ob), out.hex(kernel_out)))
    y = exact_value(name, inp, xb, P)
    e = ulp_error(out, ob, y)
    if not (close(e, w["ulp"]) and close(e, acc["max_ulp"])):
        fail("worst point %s: ulp %r, max_ulp %r, mpmath %r" % (inp.hex(xb), w["ulp"],
                                                                acc["max_ulp"], e))
    # Every per-binade row: its worst input's error is the row's max_ulp.
    rows = acc["per_binade"]
    row_inputs = [int(r["worst_input"]["bits"], 16) for r in rows]
    row_outputs = call_kernel(lib, symbol, inp, out, row_inputs)
    for r, x, yo in zip(rows, row_inputs, row_outputs):
        er = ulp_error(out, yo, exact_value(name, inp, x, P))
        if not close(er, r["max_ulp"]):
            fail("binade %s worst %s: max_ulp %r, mpmath %r" % (r["binade"], inp.hex(x),
                                                                r["max_ulp"], er))
    # Random finite inputs: none beyond the reported maximum.
    rng = random.Random("mixed-check-" + symbol)
    xs = []
    while len(xs) < points:
        b = rng.randrange(1 << inp.width)
        if inp.decode(b)[0] == "num":
            xs.append(b)
    worst_seen = 0.0
    for x, yo in zip(xs, call_kernel(lib, symbol, inp, out, xs)):
        er = ulp_error(out, yo, exact_value(name, inp, x, P))
        if er is not None:
            worst_seen = max(worst_seen, er)
    if worst_seen > acc["max_ulp"] * (1 + 1e-9):
        fail("a random input has %r ulp, above the reported max_ulp %r" % (worst_seen,
                                                                           acc["max_ulp"]))
    got_rule = (acc.get("rounding") or {}).get("rule")
    if rule is not None and got_rule != rule:
        fail("rounding rule %r, expected %r (%s)" % (got_rule, rule,
                                                      (acc.get("rounding") or {}).get("message")))
    print("%s: max_ulp %.6g at %s, %d rows, %d random inputs (worst %.6g), rule %s" % (
        where, acc["max_ulp"], inp.hex(xb), len(rows), len(xs), worst_seen, got_rule),
        flush=True)


def check_bad_input(exe, lib_path, fails):
    """Bad pairs and conflicting options: exit 2, one line on stderr, nothing written."""
    base = [exe, "check", "--lib", lib_path, "--symbol", "lumen_silu_bf16_f32",
            "--function", "silu", "--quiet"]
    cases = [
        ["--format", "bf16", "--input-format", "bf16", "--output-format", "f32"],
        ["--format", "f32", "--output-format", "bf16"],
        ["--input-format", "bf16"],
        ["--output-format", "f32"],
        ["--input-format", "bf17", "--output-format", "f32"],
        ["--input-format", "bf16", "--output-format", "f64"],
        ["--input-format", "bf16", "--output-format", "f32", "--shard", "1/2"],
        ["--input-format", "bf16", "--output-format", "f32", "--in-place"],
    ]
    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, "r.json")
        for extra in cases:
            r = subprocess.run(base + extra + ["--json", out], capture_output=True, text=True)
            lines = r.stderr.strip().splitlines()
            if r.returncode != 2 or len(lines) != 1 or os.path.exists(out):
                fails.append("FAIL bad input %s: exit %d, stderr %r" % (" ".join(extra),
                                                                       r.returncode, r.stderr))
    print("bad input: %d cases" % len(cases), flush=True)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--ulpgauge", default="target/release/ulpgauge")
    ap.add_argument("--lib", default="kernels-under-test/build/liblumen_edge.so")
    ap.add_argument("--points", type=int, default=200)
    a = ap.parse_args()
    if not os.path.exists(a.lib):
        subprocess.run(["bash", "kernels-under-test/build.sh"], check=True,
                       stdout=subprocess.DEVNULL)
    lib = ctypes.CDLL(os.path.abspath(a.lib))
    fails = []
    for case in KERNELS:
        check_kernel(a.ulpgauge, a.lib, lib, case, a.points, fails)
    check_bad_input(a.ulpgauge, a.lib, fails)
    for line in fails:
        print(line)
    print("mixed check: %d kernels, %d failed checks" % (len(KERNELS), len(fails)))
    return 1 if fails else 0


if __name__ == "__main__":
    _ = Fraction
    sys.exit(main())
