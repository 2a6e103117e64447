#!/usr/bin/env python3
"""Independent cross-check of ulpgauge's gated references y(a, b) = act(a)*b.

For swiglu (silu), geglu (gelu, erf form), geglu-tanh (gelu, tanh form) and reglu (relu), each
role (forward = act(a)*b, derivative-a = act'(a)*b, derivative-b = act(a)) and the formats f32,
f16, bf16, this script samples pairs of input patterns and computes the correctly rounded value
itself: the definitions below are written here from the published formulas (SiLU: Elfwing et
al. 2018; GELU and its tanh form: Hendrycks & Gimpel 2016; the gated forms: Shazeer 2020), the
product is part of the exact value (mpmath at >= 300 bits, Ziv re-evaluation at 600, 1200 and
2400 bits near a rounding boundary; fractions.Fraction for relu and the exact points), and the
rounding into the format is ieee.py's round-to-nearest-even (written from IEEE 754-2019 and
checked against numpy and ml_dtypes by validate.py, which runs first).  Each value is compared
bit for bit with `ulpgauge batch --function G --role R` fed the same pairs.

Conventions checked (IEEE 754-2019 7.2 and 6.3 for the product; ulpgauge's documented choices
for limits): NaN in either operand gives NaN (derivative-b ignores b); 0*inf (a factor exactly
zero, or tending to zero at a = +-inf) gives NaN; an exactly zero product has the sign of
act(a)'s rounded zero xor b's sign; at a = +-inf act and act' are their limits; at a kink
(relu at 0) act' is its right-hand value.

Sampled pairs per combination: special values against each other, a from sampling.py's points
with random b, products near the overflow threshold (b chosen around max/act(a)) and products
near and below the smallest normal (subnormal and underflowing results).

Usage (from the repository root):
  python3 tests/crosscheck/gated.py --ulpgauge target/release/ulpgauge [--points N]
      [--seed S] [--only swiglu,reglu] [--formats f32,f16,bf16] [--workers 2]
Prints one line per mismatch and ends with `gated crosscheck: N passed, M failed`; exit status 1
on any mismatch, 0 otherwise.
"""

import argparse
import multiprocessing
import os
import subprocess
import sys
import time
from fractions import Fraction

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import mpmath  # noqa: E402
from mpmath import mp  # noqa: E402

import sampling  # noqa: E402
import validate  # noqa: E402
from ieee import FORMATS, mpf_round  # noqa: E402

PRECISIONS = (300, 600, 1200, 2400)
SLACK = 100
ROLES = ("forward", "derivative-a", "derivative-b")
ACT = {"swiglu": "silu", "geglu": "gelu", "geglu-tanh": "gelu-tanh", "reglu": "relu"}
GELU_TANH_K = Fraction(44715, 1000000)


class Undecided(Exception):
    pass


def act_value(act, deriv, x):
    """act(x) or act'(x) at a nonzero finite mpf x, at the current mpmath precision."""
    if act == "silu":
        s = 1 / (1 + mpmath.exp(-x))
        if not deriv:
            return x * s
        return s * (1 + x * (1 - s)) if x < 0 else s + x * s / (1 + mpmath.exp(x))
    if act == "gelu":
        if not deriv:
            return x / 2 * mpmath.erfc(-x / mpmath.sqrt(2))
        return mpmath.erfc(-x / mpmath.sqrt(2)) / 2 + x * mpmath.exp(-x * x / 2) / mpmath.sqrt(
            2 * mpmath.pi)
    if act == "gelu-tanh":
        c = mpmath.sqrt(2 / mpmath.pi)
        k = mpmath.mpf(GELU_TANH_K.numerator) / GELU_TANH_K.denominator
        u = c * (x + k * x ** 3)
        # 0.5*(1 + tanh(u)) = 1/(1 + e^(-2u)), without cancellation for negative u.
        s = 1 / (1 + mpmath.exp(-2 * u))
        if not deriv:
            return x * s
        du = c * (1 + 3 * k * x * x)
        # d/dx x*s(x) = s + x*s'(x), s' = 2u' s (1 - s); 1 - s = 1/(1 + e^(2u)).
        return s + x * 2 * du * s / (1 + mpmath.exp(2 * u))
    raise ValueError(act)


def limit(act, deriv, positive):
    """('inf', neg) | ('zero', neg) | ('one',): act or act' as a -> +-inf."""
    if positive:
        return ("one",) if deriv else ("inf", False)
    # silu, gelu, gelu-tanh and their derivatives tend to 0 from below; relu's are exactly 0.
    return ("zero", act != "relu")


def exact_act(act, deriv, x):
    """The exact value as a Fraction when it is rational, else None (x finite)."""
    if act == "relu":
        if deriv:
            return Fraction(1) if x >= 0 else Fraction(0)  # right-hand value at the kink
        return x if x > 0 else Fraction(0)
    if x == 0:
        return Fraction(1, 2) if deriv else Fraction(0)  # act'(0) = 1/2 for the three smooth ones
    return None


def act_rounded(fmt, act, deriv, a_bits):
    """RN(act(a)) (derivative-b, and the sign of act(a)'s zero): pattern."""
    d = fmt.decode(a_bits)
    if d[0] == "nan":
        return fmt.qnan
    if d[0] == "inf":
        lim = limit(act, deriv, not d[1])
        if lim[0] == "inf":
            return fmt.overflow(lim[1])
        if lim[0] == "zero":
            return fmt.sign_bit if lim[1] else 0
        return fmt.round_fraction(Fraction(1))
    x, neg = d[1], d[2]
    q = exact_act(act, deriv, x)
    if q is not None:
        # silu, gelu, gelu-tanh behave like x/2 or x near 0: f(-0) = -0 (IEEE keeps the sign);
        # relu's zero is +0.
        keeps = (not deriv) and act != "relu" and neg and x == 0
        return fmt.round_fraction(q, zero_negative=keeps)
    return ziv(fmt, lambda: act_value(act, deriv, mpmath.mpf(x.numerator) / x.denominator))


def ziv(fmt, fn):
    for prec in PRECISIONS:
        with mp.workprec(prec):
            v = fn()
        if not mpmath.isfinite(v) or v == 0:
            raise Undecided("approximation %r at %d bits" % (v, prec))
        # Far below a quarter of the smallest subnormal (or far above the overflow threshold)
        # the rounding is decided by the sign alone (IEEE 754-2019 6.3, 7.4); the relative
        # error (2^-200) cannot move v across those 2^8 margins.
        e = int(mpmath.floor(mpmath.log(abs(v), 2)))
        if e < fmt.emin - fmt.p - 8:
            return fmt.sign_bit if v < 0 else 0
        if e > fmt.emax + 8:
            return fmt.overflow(v < 0)
        bits = mpf_round(fmt, v, prec - SLACK)
        if bits is not None:
            return bits
    raise Undecided("undecided at %d bits" % PRECISIONS[-1])


def sign_of_act(act, deriv, x):
    """-1, 0, +1: the sign of act(x) (x a finite Fraction)."""
    q = exact_act(act, deriv, x)
    if q is not None:
        return (q > 0) - (q < 0)
    with mp.workprec(300):
        v = act_value(act, deriv, mpmath.mpf(x.numerator) / x.denominator)
    return 1 if v > 0 else -1


def mine(fmt, gated, role, a_bits, b_bits):
    """Our correctly rounded pattern of the role at (a, b)."""
    act = ACT[gated]
    deriv = role == "derivative-a"
    if role == "derivative-b":
        return act_rounded(fmt, act, False, a_bits)
    da, db = fmt.decode(a_bits), fmt.decode(b_bits)
    if da[0] == "nan" or db[0] == "nan":
        return fmt.qnan
    b_neg = db[1] if db[0] == "inf" else db[2]
    if db[0] == "inf":
        if da[0] == "inf":
            lim = limit(act, deriv, not da[1])
            s = 0 if lim[0] == "zero" else (-1 if lim[0] == "inf" and lim[1] else 1)
        else:
            s = sign_of_act(act, deriv, da[1])
        return fmt.qnan if s == 0 else fmt.overflow((s < 0) != b_neg)
    b = db[1]
    if da[0] == "inf":
        lim = limit(act, deriv, not da[1])
        if lim[0] == "inf":
            return fmt.qnan if b == 0 else fmt.overflow(lim[1] != b_neg)
        if lim[0] == "zero":
            return fmt.sign_bit if lim[1] != b_neg else 0
        return fmt.round_fraction(b, zero_negative=b_neg)
    x = da[1]
    q = exact_act(act, deriv, x)
    if b == 0 or q == 0:
        act_neg = bool(act_rounded(fmt, act, deriv, a_bits) & fmt.sign_bit)
        return fmt.sign_bit if act_neg != b_neg else 0
    if q is not None:
        return fmt.round_fraction(q * b)
    bm = lambda: mpmath.mpf(b.numerator) / b.denominator  # noqa: E731
    value = lambda: act_value(act, deriv, mpmath.mpf(x.numerator) / x.denominator) * bm()  # noqa
    try:
        return ziv(fmt, value)
    except Undecided:
        if x <= 0:
            raise
    # Large a: act(a) = a - a*Phi(-a) (or a*sigma(-a)) lies just below a, and act'(a) just above
    # 1 (act'(a) - 1 = a*phi(a) - Phi(-a) > 0, sigma(-a)*(a*sigma(a) - 1) > 0 for a > 1.3), by
    # less than e^(-a); when base*b is itself a rounding boundary the side alone decides.
    base = (Fraction(1) if deriv else x) * b
    eps = (1 if deriv else -1) * (1 if b > 0 else -1)
    with mp.workprec(2600):
        close = abs(value() - mpmath.mpf(base.numerator) / base.denominator) <= abs(
            mpmath.mpf(base.numerator) / base.denominator) * mpmath.mpf(2) ** -2000
    if not close:
        raise Undecided("undecided at %d bits, not near a*b" % PRECISIONS[-1])
    return fmt.round_fraction(base, eps)


def pairs(fmt, gated, role, n, rng):
    """Sampled (a, b) pattern pairs: specials, sampled a with random b, overflowing and
    subnormal products."""
    act = ACT[gated]
    deriv = role == "derivative-a"
    spec = sampling.specials(fmt)
    out = [(a, b) for a in spec for b in spec]
    a_points = sampling.sample(fmt, max(n // 4, 64), rng)
    max_v = fmt.decode(fmt.max_bits)[1]
    tiny = Fraction(2) ** fmt.emin
    for a in a_points:
        out.append((a, rng.getrandbits(fmt.width)))
    # Products near the overflow threshold and near/below the smallest normal: b = T/act(a)
    # rounded, and its neighbours.
    finite = [a for a in a_points if fmt.decode(a)[0] == "num" and fmt.decode(a)[1] != 0]
    for _ in range(n // 4):
        a = rng.choice(finite)
        x = fmt.decode(a)[1]
        q = exact_act(act, deriv, x)
        if q is None:
            with mp.workprec(80):
                v = act_value(act, deriv, mpmath.mpf(x.numerator) / x.denominator)
            if v == 0:
                continue
            v = Fraction(float(v)) if abs(v) > 1e-300 else None
        else:
            v = q
        if not v:
            continue
        target = max_v if rng.random() < 0.5 else tiny * Fraction(rng.choice([1, 3, 1, 1]),
                                                                    rng.choice([1, 2, 64, 1 << 11]))
        want = target / abs(v) * rng.choice([1, -1])
        if want > max_v or -want > max_v or want == 0:
            continue
        b = fmt.round_fraction(want)
        o = fmt.ordinal(b)
        for k in range(-2, 3):
            out.append((a, fmt.from_ordinal(o + k)))
    seen = {}
    for p in out:
        seen.setdefault(p, None)
    return list(seen)


def task(job):
    gated, fmt_name, role, n, opts = job
    fmt = FORMATS[fmt_name]
    started = time.time()
    rng = sampling.rng_for(opts["seed"], "gated", gated, fmt_name, role)
    pts = pairs(fmt, gated, role, n, rng)
    cmd = [opts["ulpgauge"], "batch", "--function", gated, "--format", fmt_name, "--role", role]
    env = dict(os.environ, RAYON_NUM_THREADS="1")
    proc = subprocess.Popen(cmd, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env=env)
    out, err = proc.communicate("\n".join("%s %s" % (fmt.hex(a), fmt.hex(b)) for a, b in pts))
    label = "%s %s %s" % (gated, fmt_name, role)
    if proc.returncode != 0:
        return label, 0, len(pts), ["FAIL %s: `%s` exited %d: %s" % (
            label, " ".join(cmd), proc.returncode, err.strip())], time.time() - started
    theirs = {}
    for line in out.split("\n"):
        if line.strip():
            a, b, y = line.split()
            theirs[(int(a, 16), int(b, 16))] = int(y, 16)
    passed, failed, lines = 0, 0, []
    for a, b in pts:
        try:
            want = mine(fmt, gated, role, a, b)
        except Undecided as e:
            failed += 1
            lines.append("FAIL %s a=%s b=%s: %s" % (label, fmt.hex(a), fmt.hex(b), e))
            continue
        got = theirs.get((a, b))
        same = got == want or (got is not None and fmt.is_nan(got) and fmt.is_nan(want))
        if same:
            passed += 1
        else:
            failed += 1
            lines.append("FAIL %s a=%s b=%s: ulpgauge %s, mpmath %s" % (
                label, fmt.hex(a), fmt.hex(b), None if got is None else fmt.hex(got),
                fmt.hex(want)))
    return label, passed, failed, lines, time.time() - started


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--ulpgauge", required=True)
    ap.add_argument("--points", type=int, default=2000)
    ap.add_argument("--seed", default="gated-1")
    ap.add_argument("--only", default="")
    ap.add_argument("--formats", default="f32,f16,bf16")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--max-lines", type=int, default=50)
    args = ap.parse_args()
    problems = validate.run_all()
    if problems:
        for p in problems:
            print("FORMAT SELF-CHECK FAILED: " + p)
        return 1
    names = [g for g in ACT if not args.only or g in args.only.split(",")]
    opts = {"ulpgauge": args.ulpgauge, "seed": args.seed}
    jobs = [(g, f, r, args.points, opts) for g in names for f in args.formats.split(",")
            for r in ROLES]
    started = time.time()
    total_pass, total_fail, printed = 0, 0, 0
    with multiprocessing.Pool(args.workers) as pool:
        for label, p, f, lines, secs in pool.imap_unordered(task, jobs):
            total_pass += p
            total_fail += f
            print("%-36s %6d points, %d failed, %.1f s" % (label, p + f, f, secs), flush=True)
            for line in lines:
                if printed < args.max_lines:
                    print("  " + line)
                    printed += 1
    print("gated crosscheck: %d passed, %d failed (%d combinations, %.0f s)" % (
        total_pass, total_fail, len(jobs), time.time() - started))
    return 1 if total_fail else 0


if __name__ == "__main__":
    sys.exit(main())
