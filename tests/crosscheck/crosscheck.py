#!/usr/bin/env python3
"""Independent cross-check of ulpgauge's correctly rounded references.

For every catalog function, format (f32, f16, bf16; and the OCP FP8 formats e4m3, e5m2 in both
OFP8 overflow modes, e4m3-sat and e5m2-sat, all 256 patterns each, see ofp8.py) and role (forward, derivative) this script
samples input patterns, computes the correctly rounded value itself -- definitions written from
the published formulas (functions.py), mpmath at >= 300 bits with Ziv re-evaluation at 600,
1200 and 2400 bits near rounding boundaries, fractions.Fraction for the piecewise-rational
pieces, its own IEEE 754 round-to-nearest-even (ieee.py, checked against numpy and ml_dtypes by
validate.py) -- and compares bit for bit with `ulpgauge batch`.  The golden 16-bit tables, when
present, are compared at the same points.

Usage (from the repository root):
  python3 tests/crosscheck/crosscheck.py --ulpgauge target/release/ulpgauge
      [--points N] [--extra-points N] [--seed S] [--only FUNC[,FUNC]] [--formats f32,f16]
      [--workers 2] [--golden-dir tests/golden] [--exhaustive-16] [--max-lines 50]
Prints one line per mismatch and ends with `crosscheck: N passed, M failed`; exit status 1 on
any mismatch (or any problem in the format self-checks), 0 otherwise.
"""

import argparse
import gzip
import multiprocessing
import os
import struct
import subprocess
import sys
import time
from fractions import Fraction

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import mpmath  # noqa: E402
from mpmath import mp  # noqa: E402

import functions  # noqa: E402
import sampling  # noqa: E402
import validate  # noqa: E402
import validate_fp8  # noqa: E402
from ieee import F32, FORMATS, mpf_round  # noqa: E402
from ofp8 import FP8  # noqa: E402

FORMATS = dict(FORMATS, **FP8)

# Working precisions of the Ziv loop; at each, the approximation is trusted to 2^-(prec - 100)
# relative (mpmath's functions are accurate to about the working precision; the slack of 100
# bits covers the cancellation near a zero of f' and the few roundings of our formulas).
PRECISIONS = (300, 600, 1200, 2400)
SLACK = 100

# Non-default parameter runs: (function, params, param-rounding).
EXTRA_RUNS = [
    ("leaky-relu", {"alpha": "0.2"}, "exact"),
    ("elu", {"alpha": "0.5"}, "exact"),
    ("celu", {"alpha": "2"}, "exact"),
    ("swish", {"beta": "1.5"}, "exact"),
    ("gelu-tanh", {}, "f32"),
    ("selu", {}, "f32"),
    ("selu", {}, "format"),
    ("gelu-tanh", {}, "format"),
]


class Undecided(Exception):
    pass


def round_approx(fmt, fn):
    """Ziv: the correctly rounded pattern of the value fn(prec) approximates."""
    for prec in PRECISIONS:
        v = fn(prec)
        if not mpmath.isfinite(v) or v == 0:
            raise Undecided("approximation %r at %d bits" % (v, prec))
        bits = mpf_round(fmt, v, prec - SLACK)
        if bits is not None:
            return bits, v
    raise Undecided("rounding undecided at %d bits" % PRECISIONS[-1])


def describe_exact(q, eps):
    with mp.workprec(200):
        text = mpmath.nstr(mpmath.mpf(q.numerator) / q.denominator, 25) if q else "0"
    return text + {0: "", 1: " (+ tiny)", -1: " (- tiny)"}[eps]


def mine(name, deriv, fmt, bits, P):
    """Our correctly rounded pattern at input `bits`, and a description of the exact value."""
    d = fmt.decode(bits)
    if d[0] == "nan":
        return fmt.qnan, "nan"
    if d[0] == "inf":
        r = functions.limit(name, deriv, not d[1], P)
        if r[0] == "zero":
            return (fmt.sign_bit if r[1] else 0), ("-0" if r[1] else "+0") + " (limit)"
        if r[0] == "inf":
            return fmt.overflow(r[1]), ("-inf" if r[1] else "+inf")
        return fmt.round_fraction(r[1], r[2]), describe_exact(r[1], r[2]) + " (limit)"
    x, negative_zero = d[1], d[2] and d[1] == 0
    r = functions.evaluate(name, deriv, x, P)
    if r[0] == "exact":
        q, eps = r[1], r[2]
        keeps = (not deriv) and name in functions.KEEPS_NEGATIVE_ZERO and negative_zero
        return fmt.round_fraction(q, eps, zero_negative=keeps), describe_exact(q, eps)
    bits_out, v = round_approx(fmt, r[1])
    return bits_out, mpmath.nstr(v, 25)


def run_ulpgauge(exe, name, fmt, deriv, params, rounding):
    cmd = [exe, "batch", "--function", name, "--format", fmt.name]
    if fmt.name.endswith("-sat"):
        # The option's spelling of the saturating mode (the same format as `e4m3-sat`).
        cmd[-1] = fmt.name[: -len("-sat")]
        cmd += ["--fp8-overflow", "saturate"]
    if deriv:
        cmd.append("--derivative")
    for k, v in sorted(params.items()):
        cmd += ["--param", "%s=%s" % (k, v)]
    if rounding != "exact":
        cmd += ["--param-rounding", rounding]
    env = dict(os.environ, RAYON_NUM_THREADS="1")
    return subprocess.Popen(cmd, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env=env), cmd


def golden_table(golden_dir, fmt, name, deriv):
    path = os.path.join(golden_dir, "%s-%s-%s.u%d.gz" % (
        fmt.name, name, "derivative" if deriv else "forward", fmt.width))
    if not os.path.exists(path):
        return None, path
    with gzip.open(path, "rb") as fh:
        raw = fh.read()
    count = 1 << fmt.width
    if len(raw) != count * fmt.width // 8:
        return "bad", path
    return struct.unpack("<%d%s" % (count, "H" if fmt.width == 16 else "B"), raw), path


def kinds_of(fmt, x_bits, y_bits, value, kinds):
    """Counts the hard outcomes among the checked points (finite inputs only)."""
    if fmt.decode(x_bits)[0] != "num":
        return
    y = fmt.decode(y_bits)
    if y[0] == "inf" or (y[0] == "nan" and fmt.width == 8):
        kinds["overflow"] += 1  # (E4M3's non-saturating overflow is NaN)
    elif y[0] == "num" and y[1] == 0 and value not in ("0",):
        kinds["underflow"] += 1  # a nonzero exact value rounded to a signed zero
    elif y[0] == "num" and abs(y[1]) < Fraction(2) ** fmt.emin:
        kinds["subnormal"] += 1


def task(job):
    """One (function, format, role, params) combination; returns counts and failure lines."""
    name, fmt_name, deriv, params, rounding, n, opts = job
    fmt = FORMATS[fmt_name]
    role = "derivative" if deriv else "forward"
    started = time.time()
    rng = sampling.rng_for(opts["seed"], name, fmt_name, role, sorted(params.items()), rounding)
    if fmt.width == 8:
        points = list(range(256))  # always exhaustive
    elif opts["exhaustive16"] and fmt.width == 16:
        points = list(range(1 << 16))
    else:
        points = sampling.sample(fmt, n, rng)
    proc, cmd = run_ulpgauge(opts["ulpgauge"], name, fmt, deriv, params, rounding)
    # ulpgauge reads all of stdin before it starts, so this write does not deadlock.
    proc.stdin.write("\n".join(fmt.hex(b) for b in points) + "\n")
    proc.stdin.close()
    P = functions.resolve_params(name, params, rounding, fmt, F32,
                                 lambda f, fn: round_approx(f, fn)[0])
    ours = []
    for b in points:
        try:
            ours.append(mine(name, deriv, fmt, b, P))
        except Undecided as e:
            ours.append((None, str(e)))
    out = proc.stdout.read()
    err = proc.stderr.read()
    proc.wait()
    label = "%s %s %s%s%s" % (
        name, fmt_name, role,
        "".join(" %s=%s" % kv for kv in sorted(params.items())),
        "" if rounding == "exact" else " param-rounding=" + rounding)
    lines = []
    if proc.returncode != 0:
        lines.append("FAIL %s: `%s` exited %d: %s" % (label, " ".join(cmd), proc.returncode,
                                                       err.strip()))
        return label, 0, len(points), lines, (0, None, {}), time.time() - started
    theirs = {}
    for line in out.split("\n"):
        if line.strip():
            a, b = line.split()
            theirs.setdefault(int(a, 16), int(b, 16))
    # Golden tables: 16-bit and 8-bit formats, default parameters, exact constants only.
    table, golden_note = None, None
    if fmt.width <= 16 and not params and rounding == "exact":
        table, path = golden_table(opts["golden_dir"], fmt, name, deriv)
        if table is None:
            golden_note = "missing " + path
        elif table == "bad":
            # Every point of this combination then fails its golden comparison.
            lines.append("FAIL golden %s: wrong size" % path)
            golden_note = "bad " + path
    passed = failed = golden_checked = 0
    kinds = {"subnormal": 0, "overflow": 0, "underflow": 0}
    for b, (bits_out, value) in zip(points, ours):
        if bits_out is not None:
            kinds_of(fmt, b, bits_out, value, kinds)
        t = theirs.get(b)
        ok = t is not None and bits_out is not None and t == bits_out
        if not ok:
            lines.append("FAIL %s in=%s ulpgauge=%s mine=%s exact=%s" % (
                label, fmt.hex(b), "missing" if t is None else fmt.hex(t),
                "undecided" if bits_out is None else fmt.hex(bits_out), value))
        if table is not None:
            golden_checked += 1
            if table == "bad":
                ok = False
            elif table[b] != bits_out:
                ok = False
                lines.append("FAIL golden %s in=%s table=%s mine=%s exact=%s" % (
                    label, fmt.hex(b), fmt.hex(table[b]),
                    "undecided" if bits_out is None else fmt.hex(bits_out), value))
        if ok:
            passed += 1
        else:
            failed += 1
    golden = (golden_checked, golden_note, kinds)
    return label, passed, failed, lines, golden, time.time() - started


def jobs(args):
    names = functions.NAMES if not args.only else args.only.split(",")
    for nm in names:
        if nm not in functions.NAMES:
            sys.exit("crosscheck: unknown function %r" % nm)
    fmts = args.formats.split(",")
    opts = {"seed": args.seed, "ulpgauge": args.ulpgauge, "golden_dir": args.golden_dir,
            "exhaustive16": args.exhaustive_16}
    out = []
    for nm in names:
        for f in fmts:
            for deriv in (False, True):
                out.append((nm, f, deriv, {}, "exact", args.points, opts))
    if args.extra_points > 0:
        for nm, params, rounding in EXTRA_RUNS:
            if nm in names:
                for f in fmts:
                    for deriv in (False, True):
                        out.append((nm, f, deriv, params, rounding, args.extra_points, opts))
    # Slowest first (erfc and the four-exponential formulas) for a balanced pool.
    cost = {"gelu": 0, "mish": 1, "gelu-tanh": 2, "swish": 3, "silu": 3}
    out.sort(key=lambda j: (cost.get(j[0], 9), j[1] != "f32"))
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[1])
    ap.add_argument("--ulpgauge", default="target/release/ulpgauge")
    ap.add_argument("--points", type=int, default=10000,
                    help="points per function x format x role (default 10000)")
    ap.add_argument("--extra-points", type=int, default=3000,
                    help="points per non-default parameter run (0 to skip)")
    ap.add_argument("--seed", default="1")
    ap.add_argument("--only", default="", help="comma-separated function names")
    ap.add_argument("--formats", default="f32,f16,bf16",
                    help="comma-separated; also e4m3, e5m2, e4m3-sat, e5m2-sat")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--exhaustive-16", action="store_true",
                    help="check all 65,536 inputs of f16 and bf16 instead of a sample")
    here = os.path.dirname(os.path.abspath(__file__))
    ap.add_argument("--golden-dir", default=os.path.join(here, "..", "golden"))
    ap.add_argument("--max-lines", type=int, default=50,
                    help="failure lines printed per combination")
    args = ap.parse_args()
    started = time.time()
    if not os.access(args.ulpgauge, os.X_OK):
        print("crosscheck: %s is not an executable" % args.ulpgauge)
        print("crosscheck: 0 passed, 1 failed")
        return 1

    todo = jobs(args)
    import warnings
    warnings.simplefilter("ignore", RuntimeWarning)  # numpy's NaN/overflow casts, on purpose
    problems = validate.run_all()
    for p in problems:
        print("FAIL format self-check: %s" % p)
    print("format self-checks (IEEE 754-2019 limits, numpy float16/float32, ml_dtypes bfloat16): "
          + ("ok" if not problems else "%d problem(s)" % len(problems)))
    if any(f in FP8 for f in args.formats.split(",")):
        fp8_problems, compared = validate_fp8.run_all(args.ulpgauge)
        for p in fp8_problems:
            print("FAIL OFP8 check: %s" % p)
        print("OFP8 checks (specification limits, ml_dtypes float8_e4m3fn/float8_e5m2 for "
              "every pattern, ulpgauge's reading and rounding at %d values): %s" % (
                  compared, "ok" if not fp8_problems else "%d problem(s)" % len(fp8_problems)))
        problems += fp8_problems

    passed = failed = golden_checked = 0
    golden_missing = []
    kinds = {"subnormal": 0, "overflow": 0, "underflow": 0}
    with multiprocessing.Pool(args.workers) as pool:
        for label, p, f, lines, golden, secs in pool.imap_unordered(task, todo):
            passed += p
            failed += f
            for line in lines[: args.max_lines]:
                print(line)
            if len(lines) > args.max_lines:
                print("FAIL %s: ... %d more" % (label, len(lines) - args.max_lines))
            golden_checked += golden[0]
            if golden[1]:
                golden_missing.append(golden[1])
            for k, v in golden[2].items():
                kinds[k] += v
            if f:
                print("%s: %d passed, %d failed (%.1f s)" % (label, p, f, secs), flush=True)
    if golden_missing:
        print("golden tables: %d of the 16-bit tables absent or unreadable (e.g. %s); "
              "not compared" % (len(golden_missing), golden_missing[0].split(" ", 1)[1]))
    print("golden tables: compared at %d of the points" % golden_checked)
    print("hard outcomes among the points: %d subnormal results, %d overflows (to infinity, "
          "or NaN in e4m3), "
          "%d nonzero values rounded to a signed zero" % (
              kinds["subnormal"], kinds["overflow"], kinds["underflow"]))
    print("combinations: %d; time %.1f s" % (len(todo), time.time() - started))
    failed += len(problems)
    print("crosscheck: %d passed, %d failed" % (passed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
