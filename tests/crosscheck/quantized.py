#!/usr/bin/env python3
"""8-bit affine-quantized references (`--format i8|u8`) computed independently of ulpgauge.

For each configuration (function, role, type, scales, zero points) the real input of every
code q is x = S_in*(q - Z_in) as a Python `fractions.Fraction` (scales are exact decimals),
the exact output t = f(x)/S_out + Z_out is evaluated with Fractions where f is rational at x
(relu, leaky-relu, relu6, hard-sigmoid, hard-swish, softsign, step, the linear pieces of elu,
selu and celu) and with mpmath at 256 bits, then 1024 to confirm, elsewhere, then rounded to an
integer with ties to even (IEEE 754-2019 roundTiesToEven, the convention judged) and with ties
away from zero (C's round()), each clamped to the type's range ([-128, 127] for int8_t,
[0, 255] for uint8_t, C11 7.20.2.1).  Every one of the 256 codes is compared with
`ulpgauge eval --format i8|u8 ... all`: x (exactly), both rounded codes, and t (to 1e-12).

Function definitions: the textbook ones (common practice); GELU x*Phi(x) (Hendrycks & Gimpel
2016); SELU's constants are the paper's 31-digit values (Klambauer et al. 2017), as in
functions.py; hard-sigmoid relu6(x + 3)/6 and hard-swish x*relu6(x + 3)/6 (Howard et al. 2019).

Usage: python3 tests/crosscheck/quantized.py --ulpgauge target/release/ulpgauge
"""

import argparse
import subprocess
import sys
from fractions import Fraction

import mpmath
from mpmath import mp, mpf

SELU_LAMBDA = Fraction("1.0507009873554804934193349852946")
SELU_ALPHA = Fraction("1.6732632423543772848170429916717")

# (function, derivative, type, S_in, Z_in, S_out, Z_out)
CONFIGS = [
    ("sigmoid", False, "i8", "0.0625", 0, "0.00390625", -128),
    ("sigmoid", False, "u8", "0.0625", 128, "0.00390625", 0),
    ("sigmoid", False, "u8", "0.1", 100, "0.003", 3),
    ("sigmoid", True, "i8", "0.0625", 0, "0.001", -128),
    ("tanh", False, "i8", "0.1", 3, "0.0078125", 0),
    ("tanh", True, "u8", "0.05", 128, "0.004", 0),
    ("gelu", False, "u8", "0.05", 100, "0.05", 20),
    ("silu", False, "i8", "0.1", -5, "0.07", -10),
    ("softplus", False, "u8", "0.125", 64, "0.1", 0),
    ("mish", False, "i8", "0.07", 0, "0.05", -30),
    ("elu", False, "i8", "0.1", 0, "0.1", 0),
    ("elu", False, "i8", "0.3", 20, "0.15", 7),
    ("selu", False, "i8", "0.1", 0, "0.1", 0),
    ("relu", False, "i8", "0.1", 0, "0.2", 0),
    ("relu", False, "u8", "0.3", 128, "0.6", 1),
    ("relu6", False, "i8", "0.05", 0, "0.1", -128),
    ("leaky-relu", False, "i8", "0.25", 0, "0.5", 0),
    ("hard-sigmoid", False, "i8", "0.1", 0, "0.00390625", -128),
    ("hard-swish", False, "u8", "0.03", 128, "0.015", 7),
    ("hard-swish", True, "i8", "0.05", -10, "0.0125", 0),
    ("softsign", False, "u8", "0.3", 128, "0.01", 128),
    ("step", False, "i8", "0.5", 7, "0.25", -2),
]


def rational(name, deriv, x):
    """f(x) (or f'(x)) as a Fraction where it is rational at x, else None."""
    if name == "relu":
        return Fraction(1 if x >= 0 else 0) if deriv else max(x, Fraction(0))
    if name == "leaky-relu":
        a = Fraction("0.01")
        return (Fraction(1) if x >= 0 else a) if deriv else (x if x >= 0 else a * x)
    if name == "relu6":
        return Fraction(1 if 0 <= x < 6 else 0) if deriv else min(max(x, Fraction(0)), Fraction(6))
    if name == "hard-sigmoid":
        if deriv:
            return Fraction(1, 6) if -3 <= x < 3 else Fraction(0)
        return min(max(x + 3, Fraction(0)), Fraction(6)) / 6
    if name == "hard-swish":
        if deriv:
            return Fraction(0) if x < -3 else Fraction(1) if x >= 3 else (2 * x + 3) / 6
        return x * min(max(x + 3, Fraction(0)), Fraction(6)) / 6
    if name == "softsign":
        return 1 / (1 + abs(x)) ** 2 if deriv else x / (1 + abs(x))
    if name == "step":
        return Fraction(0) if deriv else Fraction(1 if x >= 0 else 0)
    if name in ("elu", "celu", "selu") and (x > 0 or (deriv and x >= 0)):
        scale = SELU_LAMBDA if name == "selu" else Fraction(1)
        return scale if deriv else scale * x
    if x == 0 and not deriv and name in ("sigmoid",):
        return Fraction(1, 2)
    if x == 0 and name in ("tanh", "gelu", "silu", "mish", "elu", "selu", "celu"):
        return Fraction(0) if not deriv else None
    return None


def transcendental(name, deriv, x):
    """f(x) (or f'(x)) with mpmath at the current precision; x a Fraction."""
    X = mpf(x.numerator) / x.denominator
    s = 1 / (1 + mp.exp(-X))
    if name == "sigmoid":
        return s * (1 - s) if deriv else s
    if name == "tanh":
        return 1 - mp.tanh(X) ** 2 if deriv else mp.tanh(X)
    if name == "silu":
        return s * (1 + X * (1 - s)) if deriv else X * s
    if name == "softplus":
        return s if deriv else mp.log1p(mp.exp(X))
    if name == "gelu":
        phi = mp.ncdf(X)
        return phi + X * mp.npdf(X) if deriv else X * phi
    if name == "mish":
        return X * mp.tanh(mp.log1p(mp.exp(X)))
    if name == "elu":
        return mp.exp(X) if deriv else mp.expm1(X)
    if name == "selu":
        la, al = (mpf(q.numerator) / q.denominator for q in (SELU_LAMBDA, SELU_ALPHA))
        return la * al * mp.exp(X) if deriv else la * al * mp.expm1(X)
    raise ValueError(name)


def to_int(t, away):
    """t (a Fraction) rounded to an integer: ties to even (Python's round of a Fraction) or
    ties away from zero."""
    if not away:
        return round(t)
    f = t.numerator // t.denominator
    frac = t - f
    if frac == Fraction(1, 2):
        return f + 1 if t > 0 else f
    return f + 1 if frac > Fraction(1, 2) else f


def expected(name, deriv, x, s_out, z_out, lo, hi):
    """(t as float, clamped ties-to-even code, clamped ties-away code)."""
    clamp = lambda v: min(max(v, lo), hi)  # noqa: E731
    y = rational(name, deriv, x)
    if y is not None:
        t = y / s_out + z_out
        return float(t), clamp(to_int(t, False)), clamp(to_int(t, True))
    answers = []
    for prec in (256, 1024):
        with mp.workprec(prec):
            t = transcendental(name, deriv, x) / (mpf(s_out.numerator) / s_out.denominator) + z_out
            # Nearest integer; t is irrational here, so never a tie.  Undecided if within
            # 2^-(prec-40) of a half-integer (not met).
            frac = t - mpmath.floor(t)
            if abs(frac - mpf(0.5)) < mpf(2) ** (40 - prec) * max(1, abs(t)):
                raise SystemExit("quantized: %s at x = %s undecided at %d bits" % (name, x, prec))
            code = int(mpmath.floor(t + mpf(0.5)))
            answers.append((float(t), clamp(code)))
    assert answers[0][1] == answers[1][1], (name, x, answers)
    return answers[1][0], answers[1][1], answers[1][1]


def check(exe, config):
    name, deriv, ty, s_in, z_in, s_out, z_out = config
    lo, hi = (-128, 127) if ty == "i8" else (0, 255)
    cmd = [exe, "eval", "--function", name, "--format", ty, "--input-scale", s_in,
           "--input-zero-point", str(z_in), "--output-scale", s_out,
           "--output-zero-point", str(z_out), "all"]
    if deriv:
        cmd.insert(2, "--derivative")
    out = subprocess.run(cmd, check=True, capture_output=True, text=True).stdout.splitlines()
    assert out[0] == "q,x,t,t_exact,expected,ties_away", out[0]
    rows = [r.split(",") for r in out[1:]]
    assert [int(r[0]) for r in rows] == list(range(lo, hi + 1)), "every code, in order"
    S_in, S_out = Fraction(s_in), Fraction(s_out)
    bad, ties = 0, 0
    for q, x_text, t_text, _t_exact, even, away in rows:
        q = int(q)
        x = S_in * (q - z_in)
        if Fraction(x_text) != x:
            bad += 1
            print("  x differs at q=%d: ulpgauge %s, here %s" % (q, x_text, x))
            continue
        t, e, a = expected(name, deriv, x, S_out, z_out, lo, hi)
        ties += e != a
        ok = (int(even), int(away)) == (e, a) and abs(float(t_text) - t) <= 1e-12 * max(1, abs(t))
        if not ok:
            bad += 1
            if bad <= 5:
                print("  %s q=%d x=%s: ulpgauge t=%s codes (%s, %s); here t=%r codes (%d, %d)"
                      % (name, q, x, t_text, even, away, t, e, a))
    label = "%s%s %s x=%s*(q-%d) y=f/%s+%d" % (name, "'" if deriv else "", ty, s_in, z_in, s_out, z_out)
    print("%-60s 256 codes, %2d where the tie rules differ: %s" % (label, ties, "ok" if not bad else "%d DIFFER" % bad))
    return bad


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--ulpgauge", required=True)
    args = ap.parse_args()
    bad = sum(check(args.ulpgauge, c) for c in CONFIGS)
    if bad:
        print("quantized: %d codes differ" % bad)
        sys.exit(1)
    print("quantized: %d configurations x 256 codes agree" % len(CONFIGS))


if __name__ == "__main__":
    main()
