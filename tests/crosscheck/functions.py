"""The 19 activation functions and their derivatives, written independently of ulpgauge from the
published definitions, evaluated with mpmath (transcendental pieces) or fractions.Fraction
(piecewise-rational pieces, where exact ties occur and must round to even).

Sources of the definitions:
- sigmoid, tanh, softplus, log-sigmoid, softsign, relu, relu6, step, leaky-relu: the usual
  textbook definitions (common practice).
- ELU: Clevert, Unterthiner, Hochreiter, "Fast and Accurate Deep Network Learning by Exponential
  Linear Units" (2016): x for x > 0, alpha*(exp(x) - 1) for x <= 0.
- SELU: Klambauer, Unterthiner, Mayr, Hochreiter, "Self-Normalizing Neural Networks" (2017):
  lambda*ELU_alpha(x), lambda = 1.0507009873554804934193349852946,
  alpha = 1.6732632423543772848170429916717 (the paper's 31-digit values, taken as exact).
- CELU: Barron, "Continuously Differentiable Exponential Linear Units" (2017):
  x for x > 0, alpha*(exp(x/alpha) - 1) for x <= 0.
- GELU: Hendrycks & Gimpel, "Gaussian Error Linear Units" (2016): x*Phi(x), and its tanh form
  0.5*x*(1 + tanh(sqrt(2/pi)*(x + 0.044715*x^3))).
- Swish: Ramachandran, Zoph, Le, "Searching for Activation Functions" (2017): x*sigmoid(beta*x);
  SiLU is beta = 1.
- Mish: Misra, "Mish: A Self Regularized Non-Monotonic Activation Function" (2019):
  x*tanh(softplus(x)).
- hard-sigmoid relu6(x + 3)/6 and hard-swish x*relu6(x + 3)/6: Howard et al., "Searching for
  MobileNetV3" (2019).

Conventions (the project's, given in the brief): the derivative at a kink is the right-hand
value; step(-0) = 1; an exact zero result is +0 except f(-0) = -0 for the forward functions that
behave like c*x (c > 0) at 0; +-inf inputs give the limits, with a zero limit signed by the side
it is approached from; NaN gives the canonical quiet NaN.

Every evaluation returns one of
  ("exact", q, eps)  the value q + eps*(an infinitesimal), q a Fraction, eps in {-1, 0, 1}
  ("approx", fn)     fn(prec) -> nonzero mpf, accurate to a few ulps of prec bits
  ("inf", negative)
"""

from fractions import Fraction

import mpmath
from mpmath import mp, mpf

# Beyond |x| >= TAIL every exponential piece is below e^-1024 < 2^-1477 (and |x| < 2^128 in all
# three formats), so each function equals its asymptote a plus a correction below
# max(|a|, 1)*2^-1000 whose sign is known from the formula (worked out per function below).
# Rounding boundaries in the supported formats are dyadic with exponent >= -150, so a rational
# a with denominator D is either a boundary or at least 2^-150/D away from one; every a used
# here has D < 2^250, so the correction only matters when a is itself a boundary, and then only
# its sign: ("exact", a, sign) expresses exactly that.
TAIL = 1024

SELU_LAMBDA = Fraction("1.0507009873554804934193349852946")
SELU_ALPHA = Fraction("1.6732632423543772848170429916717")
GELU_TANH_K = Fraction("0.044715")

# f(x) ~ c*x at 0 with c > 0: IEEE arithmetic keeps -0 for these (f(-0) = -0).
KEEPS_NEGATIVE_ZERO = {
    "tanh", "leaky-relu", "elu", "swish", "silu", "gelu", "gelu-tanh", "mish", "selu",
    "hard-swish", "celu", "softsign",
}

# Parameters (name -> default decimal) and built-in constants of each function.
PARAMS = {
    "leaky-relu": {"alpha": "0.01"},
    "elu": {"alpha": "1"},
    "swish": {"beta": "1"},
    "celu": {"alpha": "1"},
}

NAMES = [
    "step", "sigmoid", "tanh", "relu", "leaky-relu", "elu", "swish", "silu", "gelu",
    "gelu-tanh", "softplus", "mish", "selu", "hard-sigmoid", "hard-swish", "relu6", "celu",
    "log-sigmoid", "softsign",
]

HALF = Fraction(1, 2)


def mpq(q):
    """A Fraction as an mpf at the current precision (exact when dyadic and short)."""
    if q.denominator == 1:
        return mpf(q.numerator)
    return mpf(q.numerator) / q.denominator


def exact(q, eps=0):
    return ("exact", Fraction(q), eps)


def approx(fn):
    return ("approx", fn)


def sigmoid(z):
    """1/(1 + e^-z): no cancellation for either sign of z."""
    return 1 / (1 + mp.exp(-z))


# ---- limits at +-inf ------------------------------------------------------------------------

def limit(name, deriv, positive, P):
    """lim f (or f') as x -> +inf (positive) or -inf.  ('zero', negative) for a zero limit."""
    Z = lambda negative: ("zero", negative)  # noqa: E731
    pos_inf = ("inf", False)
    if name == "step":
        return Z(False) if deriv or not positive else exact(1)
    if name in ("sigmoid",):
        return Z(False) if deriv or not positive else exact(1)
    if name == "tanh":
        return Z(False) if deriv else exact(1 if positive else -1)
    if name == "relu":
        if deriv:
            return exact(1) if positive else Z(False)
        return pos_inf if positive else Z(False)
    if name == "leaky-relu":
        a = P["alpha"]
        if deriv:
            return exact(1) if positive else (exact(a) if a else Z(False))
        if positive:
            return pos_inf
        return ("inf", a > 0) if a else Z(False)
    if name in ("elu", "celu"):
        if deriv:
            return exact(1) if positive else Z(False)  # alpha*e^x -> 0 from above
        return pos_inf if positive else exact(-P["alpha"])
    if name == "selu":
        if deriv:
            return exact(P["lambda"]) if positive else Z(False)
        return pos_inf if positive else exact(-P["lambda"] * P["alpha"])
    if name in ("swish", "silu", "gelu", "gelu-tanh", "mish"):
        # x*g(x) with g -> 0+ as x -> -inf: approached from below; f' -> 0 from below too
        # (f' ~ (1 + z)e^z for swish/mish, Phi + x*phi < 0 for gelu).
        if positive:
            return exact(1) if deriv else pos_inf
        return Z(True)
    if name == "softplus":
        if deriv:
            return exact(1) if positive else Z(False)
        return pos_inf if positive else Z(False)
    if name == "log-sigmoid":
        if deriv:
            return Z(False) if positive else exact(1)
        return Z(True) if positive else ("inf", True)
    if name == "hard-sigmoid":
        return Z(False) if deriv or not positive else exact(1)
    if name == "hard-swish":
        # Exactly zero for x <= -3: an exactly zero tail gives +0.
        if deriv:
            return exact(1) if positive else Z(False)
        return pos_inf if positive else Z(False)
    if name == "relu6":
        return Z(False) if deriv or not positive else exact(6)
    if name == "softsign":
        return Z(False) if deriv else exact(1 if positive else -1)
    raise KeyError(name)


# ---- finite inputs ----------------------------------------------------------------------------

def evaluate(name, deriv, x, P):
    """f(x) or f'(x) at a finite Fraction x (x == 0 covers both zeros; the caller signs exact
    zero results).  P holds the resolved parameters and constants as Fractions (or None for an
    exact irrational constant)."""
    xf = float(x)  # exact: x is a value of a format narrower than binary64
    if name == "step":
        return exact(0 if deriv or x < 0 else 1)
    if name == "relu":
        if deriv:
            return exact(1 if x >= 0 else 0)
        return exact(max(x, 0))
    if name == "leaky-relu":
        a = P["alpha"]
        if deriv:
            return exact(1 if x >= 0 else a)
        return exact(x if x >= 0 else a * x)
    if name == "relu6":
        if deriv:
            return exact(1 if 0 <= x < 6 else 0)
        return exact(min(max(x, 0), 6))
    if name == "hard-sigmoid":
        if deriv:
            return exact(Fraction(1, 6) if -3 <= x < 3 else 0)
        return exact(min(max(x + 3, 0), 6) / 6)
    if name == "hard-swish":
        if deriv:
            if x < -3:
                return exact(0)
            return exact(1 if x >= 3 else (2 * x + 3) / 6)
        return exact(x * min(max(x + 3, 0), 6) / 6)
    if name == "softsign":
        if deriv:
            return exact(1 / (1 + abs(x)) ** 2)
        return exact(x / (1 + abs(x)))

    if name == "sigmoid" or (name == "softplus" and deriv) or (name == "log-sigmoid" and deriv):
        # sigmoid, softplus' = sigmoid(x), log-sigmoid' = sigmoid(-x).
        t = -x if name == "log-sigmoid" else x
        if name == "sigmoid" and deriv:
            if x == 0:
                return exact(Fraction(1, 4))
            if abs(x) >= TAIL:
                return exact(0, +1)  # e^-|x|/(1 + e^-|x|)^2 > 0, tiny
            m = -abs(xf)
            return approx(lambda p: _at(p, lambda: mp.exp(m) / (1 + mp.exp(m)) ** 2))
        if t == 0:
            return exact(HALF)
        if t >= TAIL:
            return exact(1, -1)  # 1 - sigmoid(-t), just below 1
        if t <= -TAIL:
            return exact(0, +1)  # < e^t, positive
        tf = float(t)
        return approx(lambda p: _at(p, lambda: sigmoid(mpf(tf))))

    if name == "tanh":
        if deriv:
            if x == 0:
                return exact(1)
            if abs(x) >= TAIL:
                return exact(0, +1)  # sech^2 < 4e^-2|x|
            return approx(lambda p: _at(p, lambda: 1 / mp.cosh(mpf(xf)) ** 2))
        if x == 0:
            return exact(0)
        if abs(x) >= TAIL:
            return exact(1, -1) if x > 0 else exact(-1, +1)
        return approx(lambda p: _at(p, lambda: mp.tanh(mpf(xf))))

    if name in ("elu", "selu", "celu"):
        if name == "selu":
            scale, alpha, temp = P["lambda"], P["alpha"], Fraction(1)
        elif name == "elu":
            scale, alpha, temp = Fraction(1), P["alpha"], Fraction(1)
        else:
            scale, alpha, temp = Fraction(1), P["alpha"], P["alpha"]
        if x > 0:
            return exact(scale if deriv else scale * x)
        if x == 0:
            return exact(scale if deriv else 0)  # the derivative's right-hand value
        z = x / temp  # < 0
        if z <= -TAIL:
            # scale*alpha*e^z/temp > 0 tiny; f = -scale*alpha + scale*alpha*e^z, above.
            return exact(0, +1) if deriv else exact(-scale * alpha, +1)
        k = scale * alpha / temp if deriv else scale * alpha
        if deriv:
            return approx(lambda p: _at(p, lambda: mpq(k) * mp.exp(mpq(z))))
        return approx(lambda p: _at(p, lambda: mpq(k) * mp.expm1(mpq(z))))

    if name == "softplus":  # forward
        if x == 0:
            return approx(lambda p: _at(p, lambda: mp.log(2)))
        if x >= TAIL:
            return exact(x, +1)  # x + log1p(e^-x)
        if x <= -TAIL:
            return exact(0, +1)
        if x > 0:
            return approx(lambda p: _at(p, lambda: mpf(xf) + mp.log1p(mp.exp(-mpf(xf)))))
        return approx(lambda p: _at(p, lambda: mp.log1p(mp.exp(mpf(xf)))))

    if name == "log-sigmoid":  # forward: ln(sigmoid(x)) = -softplus(-x)
        if x == 0:
            return approx(lambda p: _at(p, lambda: -mp.log(2)))
        if x >= TAIL:
            return exact(0, -1)
        if x <= -TAIL:
            return exact(x, -1)
        if x < 0:
            return approx(lambda p: _at(p, lambda: mpf(xf) - mp.log1p(mp.exp(mpf(xf)))))
        return approx(lambda p: _at(p, lambda: -mp.log1p(mp.exp(-mpf(xf)))))

    if name in ("swish", "silu"):
        beta = Fraction(1) if name == "silu" else P["beta"]
        z = beta * x
        if x == 0:
            return exact(HALF if deriv else 0)
        if z >= TAIL:
            # f = x - x*sigmoid(-z) just below x; f' = 1 + t(z - 1 - z t), t = sigmoid(-z): above 1.
            return exact(1, +1) if deriv else exact(x, -1)
        if z <= -TAIL:
            # f = x*sigmoid(z) < 0 tiny; f' = sigmoid(z)(1 + z sigmoid(-z)) ~ (1 + z)e^z < 0.
            return exact(0, -1)

        def sw():
            zm = mpq(z)
            s = sigmoid(zm)
            if deriv:
                return s * (1 + zm * sigmoid(-zm))
            return mpf(xf) * s
        return approx(lambda p: _at(p, sw))

    if name == "gelu":
        if x == 0:
            return exact(HALF if deriv else 0)
        if x >= TAIL:
            # f = x - x*Phi(-x) below x; f' = 1 - Phi(-x) + x*phi(x) > 1 since Phi(-x) < phi(x)/x.
            return exact(1, +1) if deriv else exact(x, -1)
        if x <= -TAIL:
            # f = x*Phi(x) < 0; f' = Phi(x) + x*phi(x) < phi(x)(1/|x| - |x|) < 0; both tiny.
            return exact(0, -1)

        def ge():
            xm = mpf(xf)
            cdf = mp.erfc(-xm / mp.sqrt(2)) / 2
            if deriv:
                return cdf + xm * mp.exp(-xm * xm / 2) / mp.sqrt(2 * mp.pi)
            return xm * cdf
        return approx(lambda p: _at(p, ge))

    if name == "gelu-tanh":
        if x == 0:
            return exact(HALF if deriv else 0)
        if x >= TAIL:
            # 2u > 1600: f = x*sigmoid(2u) below x;
            # f' = 1 + t(2xu'(1 - t) - 1) > 1 with t = sigmoid(-2u).
            return exact(1, +1) if deriv else exact(x, -1)
        if x <= -TAIL:
            # f = x*sigmoid(2u) < 0 tiny; f' = s(1 + 2xu'(1 - s)) with 2xu' < -1600: < 0 tiny.
            return exact(0, -1)
        c, k = P["c"], P["k"]

        def gt():
            xm = mpf(xf)
            cm = mp.sqrt(2 / mp.pi) if c is None else mpq(c)
            km = mpq(k)
            u = cm * (xm + km * xm ** 3)
            s = sigmoid(2 * u)
            if deriv:
                du = cm * (1 + 3 * km * xm * xm)
                return s + 2 * xm * du * s * sigmoid(-2 * u)
            # 0.5*x*(1 + tanh(u)) = x*sigmoid(2u)
            return xm * s
        return approx(lambda p: _at(p, gt))

    if name == "mish":
        if x == 0:
            # f'(0) = tanh(ln 2) = 3/5.
            return exact(Fraction(3, 5) if deriv else 0)
        if x >= TAIL:
            # tanh(softplus(x)) = 1 - 2/(E + 1), E = (1 + e^x)^2: f below x; f' - 1 =
            # (2/(E + 1))(2x sigmoid(x) E/(E + 1) - 1) > 0.
            return exact(1, +1) if deriv else exact(x, -1)
        if x <= -TAIL:
            # f = x*tanh(sp) < 0 tiny; f' <= e^x - |x|e^x/4 < 0 tiny.
            return exact(0, -1)

        def mi():
            # With e = e^x: tanh(ln(1 + e)) = n/(n + 2), n = e(e + 2); all terms positive.
            xm = mpf(xf)
            e = mp.exp(xm)
            n = e * (e + 2)
            if deriv:
                return n / (n + 2) + 4 * xm * e * (e + 1) / (n + 2) ** 2
            return xm * n / (n + 2)
        return approx(lambda p: _at(p, mi))

    raise KeyError(name)


def _at(prec, thunk):
    with mp.workprec(prec):
        return +thunk()


def resolve_params(name, user, rounding, fmt, f32, round_approx):
    """Parameter values and constants as Fractions (None: the exact irrational sqrt(2/pi)).
    rounding: 'exact' | 'f32' | 'format' rounds each to the nearest value of binary32 or of the
    kernel's format, as a kernel storing them would see them."""
    P = {}
    for pname, default in PARAMS.get(name, {}).items():
        P[pname] = Fraction(user.get(pname, default))
    if name == "selu":
        P["lambda"], P["alpha"] = SELU_LAMBDA, SELU_ALPHA
    if name == "gelu-tanh":
        P["c"], P["k"] = None, GELU_TANH_K
    if rounding == "exact":
        return P
    target = f32 if rounding == "f32" else fmt
    out = {}
    for key, v in P.items():
        if v is None:
            bits = round_approx(target, lambda p: _at(p, lambda: mp.sqrt(2 / mp.pi)))
        else:
            bits = target.round_fraction(v)
        out[key] = target.decode(bits)[1]
    return out


assert mpmath.__version__  # mpmath is the arbitrary-precision engine of every approx value
