//! Turning a fast value and its proven error bound into a [`Reference`], or declining.
//!
//! The rule is the engine's: decide only when every real number the bound allows rounds to the
//! same pattern of the format and lies in the same clamped binade max(⌊log2|y|⌋, emin).  The
//! allowed set is an interval [L, H]; since RN and the clamped binade are monotone, checking
//! its two ends suffices.

use super::dd::{ilogb, is_pow2, next_down, next_up, pow2, two_sum, Dd, Ev, SLACK};
use crate::activation::Role;
use crate::format::{ExactValue, Layout};
use crate::reference::Reference;

/// Precision recorded for references decided by the fast path (double-word significands).
pub const FAST_PRECISION: u32 = 106;

/// Largest relative bound the decision accepts (2^−40; see [`super::dd::Ev`]).
const MAX_REL: f64 = 9.094947017729282e-13;

/// a < b, false when either is NaN (a NaN bound declines).
#[inline(always)]
fn less(a: f64, b: f64) -> bool {
    a < b
}

/// What a function family computed at one input.
pub enum Outcome {
    /// y = 2^scale·v·(1 + θ), |θ| ≤ v.r.
    Value(Ev, i32),
    /// y = base + delta·(1 + θ), |θ| ≤ delta.r < 1/2; base an exact nonzero normal f64.
    Near(f64, Ev),
    /// y = base + δ as in [`Outcome::Near`] with δ below 2^(ilogb(base) − 54) on the given side
    /// (true: above), for a base that stays the same over many inputs (a saturation level, a
    /// constant slope): decided once per thread and kept.
    Beside(f64, bool),
    /// y = s + c + θ with s = h + l an exact normalized double-word (h normal), c an f64 and
    /// |θ| ≤ e < |c|, |c| < |h|/4: a leading part known exactly and the sign of the rest (see
    /// [`decide_leading`]), so that a leading part exactly on a rounding boundary is decided by
    /// the rest's sign, as the engine decides it.
    Leading(Dd, f64, f64),
    /// y is exactly this (nonzero, normal) f64: rounded like the engine's exact rationals.
    Exact(f64),
    /// y is an exact rational, known here only as this enclosure (a parameter that is no
    /// binary64 times x): decided like [`Outcome::Value`], reported as exact (precision 0) as
    /// the engine reports a rational value; a tie of the format declines to the engine.
    Rational(Ev),
    /// A reference given as is (the engine's asymptotic tails, replicated).
    Fixed(Reference),
    /// No fast answer: the caller uses MPFR.
    Decline,
}

/// RN into `format` and the clamped binade of 2^k·(h + l), a normalized double-word
/// (|l| ≤ ulp(h)/2, h normal nonzero).  None on overflow.
///
/// The binade is ⌊log2|h|⌋ + k, one less when |h| is a power of two and l pulls towards zero.
/// Scaled by 2^−q (q the quantum exponent), s_h = |h|·2^(k−q) < 2^(p+1) is an exact f64 and
/// g = frac(s_h) − 1/2 is a multiple of ulp(s_h); the scaled l has magnitude ≤ ulp(s_h)/2, so it
/// decides only when g = 0 (a tie of h alone), and then by its sign alone.
#[inline(always)]
pub fn round_dd(format: Layout, h: f64, l: f64, k: i32) -> Option<(u32, i32)> {
    round_flagged(format, h, l, k).map(|(bits, binade, _)| (bits, binade))
}

/// [`round_dd`], and whether 2^k·h with l = 0 would be a point where the rounding or the
/// binade changes (a midpoint of the format or a power of two): only then can a neighbour of
/// 2^k·h round or fall differently.
#[inline(always)]
fn round_flagged(format: Layout, h: f64, l: f64, k: i32) -> Option<(u32, i32, bool)> {
    let negative = h < 0.0;
    let (h, l) = if negative { (-h, -l) } else { (h, l) };
    if k == 0 && format == BINARY32 {
        if let Some(r) = round_binary32(h, l, negative) {
            return Some(r);
        }
    }
    round_general(format, h, l, k, negative)
}

/// [`round_flagged`] by the format's field arithmetic, for h ≥ 0 (`negative`: the sign to
/// encode).
#[inline(always)]
fn round_general(
    format: Layout,
    h: f64,
    l: f64,
    k: i32,
    negative: bool,
) -> Option<(u32, i32, bool)> {
    let emin = format.emin();
    let p = format.precision() as i32;
    let mut b = ilogb(h) as i64 + k as i64;
    if is_pow2(h) && l < 0.0 {
        b -= 1;
    }
    if b > format.emax() as i64 {
        return None;
    }
    if b <= (emin - p - 1) as i64 {
        // |y| < 2^(emin − p), half the smallest subnormal: rounds to a signed zero.
        return Some((format.encode(negative, 0, 0), emin, false));
    }
    let b = b as i32;
    let cb = b.max(emin);
    let q = cb - p + 1;
    // s_h = h·2^(k − q): |k − q| can exceed the f64 exponent range only in intermediate
    // factors, so scale in two exact steps.
    let shift = k as i64 - q as i64;
    let s1 = (shift / 2) as i32;
    let s2 = (shift - shift / 2) as i32;
    let sh = h * pow2(s1) * pow2(s2);
    let n0 = sh.floor();
    let g = (sh - n0) - 0.5;
    let up = if sh == n0 {
        false
    } else if g > 0.0 {
        true
    } else if g < 0.0 {
        false
    } else if l > 0.0 {
        true
    } else if l < 0.0 {
        false
    } else {
        (n0 as u64) % 2 == 1
    };
    let kint = n0 as u64 + up as u64;
    let boundary = (sh != n0 && g == 0.0) || is_pow2(h);
    Some((format.encode(negative, kint, q), cb, boundary))
}

/// binary32's layout, whose rounding the hardware does ([`round_binary32`]).
const BINARY32: Layout = Layout::new(8, 23);

/// [`round_flagged`] into binary32 for k = 0 and h ≥ 0 (`negative`: the sign to encode) by the
/// hardware's conversion, which rounds to nearest with ties to even: that is RN of h + l
/// except when h lies exactly halfway between two binary32 numbers and l ≠ 0, where l's sign
/// picks the side (the general path's tie rule).  Only for h in binary32's normal range with a
/// finite rounding; `None` leaves everything else to the general path.  The two distances to
/// the neighbours are exact (Sterbenz: each neighbour is within a factor 2 of h).
#[inline(always)]
fn round_binary32(h: f64, l: f64, negative: bool) -> Option<(u32, i32, bool)> {
    const EMIN: i32 = -126;
    let e = ilogb(h);
    let f = h as f32;
    if e < EMIN || !f.is_finite() {
        return None;
    }
    let near = f as f64;
    let mut bits = f.to_bits();
    let mut tie = false;
    if h != near {
        // near ≥ 2^−126 > 0, so a neighbour below it is a positive pattern.
        let toward = if h > near { bits + 1 } else { bits - 1 };
        let other = f32::from_bits(toward) as f64;
        if (h - near).abs() == (other - h).abs() {
            tie = true;
            let (below, above) = if h > near {
                (bits, toward)
            } else {
                (toward, bits)
            };
            if l > 0.0 {
                bits = above;
            } else if l < 0.0 {
                bits = below;
            }
            if !f32::from_bits(bits).is_finite() {
                return None;
            }
        }
    }
    let binade = (e - (is_pow2(h) && l < 0.0) as i32).max(EMIN);
    Some((bits | (negative as u32) << 31, binade, tie || is_pow2(h)))
}

/// Decides 2^k·v with absolute error bound e (in the unscaled units of v): every point of
/// [v − e, v + e]·2^k must round alike into the format and binary64 and share the clamped
/// binade; returns the bits, the binade and RN_binary64.
#[inline(always)]
fn decide_interval(format: Layout, v: Dd, e: f64, k: i32) -> Option<(u32, i32, f64)> {
    if v.hi == 0.0 || !v.hi.is_finite() || !less(e, v.hi.abs() * MAX_REL) {
        // e must be ≤ 2^−40·|v|: the ends keep v's sign and stay normal.
        return None;
    }
    let approx = nearest_f64(v, e, k)?;
    // RN(lo − e) rounds by at most half the gap beside it, so one step down (up) gives a
    // number below (above) the exact lo − e (lo + e); TwoSum then adds hi exactly.
    let low = two_sum(v.hi, next_down(v.lo - e));
    let high = two_sum(v.hi, next_up(v.lo + e));
    let (bits, binade) = round_within(format, approx, low, high, k)?;
    Some((bits, binade, approx))
}

/// 2^k·x as an f64 (RN, through at most two roundings: within 1 ulp of binary64).
#[inline(always)]
fn ldexp(x: f64, k: i32) -> f64 {
    let k = k.clamp(-2200, 2200);
    let s1 = k / 3;
    let s2 = (k - s1) / 2;
    let s3 = k - s1 - s2;
    x * pow2(s1) * pow2(s2) * pow2(s3)
}

/// RN_binary64 of every point of [v − e, v + e]·2^k, when they all agree; `None` otherwise.
/// This is the engine's `ExactValue::approx` = RN_binary64(y), subnormals included, so both
/// paths report identical figures.
#[inline(always)]
fn nearest_f64(v: Dd, e: f64, k: i32) -> Option<f64> {
    // Common case first: unscaled, normal, and the whole interval within a quarter ulp of
    // v.hi, hence strictly inside v.hi's rounding interval (whose half-widths are ulp(v.hi)/2
    // above and at least ulp(v.hi)/4 below): RN_binary64 is v.hi.
    if k == 0 && v.hi.is_normal() && v.lo.abs() + e < pow2(ilogb(v.hi) - 54) * 0.9 {
        return Some(v.hi);
    }
    // Widen e so that rounding lo ∓ e cannot move an end inwards (each rounding moves it by at
    // most 2^−53 of |lo| + e).
    let e = e * (1.0 + pow2(-40)) + v.lo.abs() * pow2(-50);
    let low = two_sum(v.hi, v.lo - e);
    let high = two_sum(v.hi, v.lo + e);
    let scaled = ldexp(low.0, k);
    if scaled.is_normal() && ldexp(scaled, -k) == low.0 {
        // two_sum's leading part is RN(sum), and scaling a normal binary64 is exact.
        return (low.0 == high.0).then_some(scaled);
    }
    // Below 2^−1022: count in units of 2^−1074, where every end is below 2^53 and the scaling
    // of both parts is exact (they stay normal or become exact small integers' fractions).
    let (a, b) = (units(low, k)?, units(high, k)?);
    (a == b && a.abs() <= pow2(52)).then(|| ldexp(a, -1074))
}

/// The integer nearest to 2^(k+1074)·(s + t) (a function rather than a closure so that it
/// inlines into the FMA build, see [`super::arch`]).
#[inline(always)]
fn units((s, t): (f64, f64), k: i32) -> Option<f64> {
    nearest_integer(ldexp(s, k + 1074), ldexp(t, k + 1074))
}

/// The integer nearest to s + t (ties to even), for |s| < 2^52 and |t| ≤ ulp(s)/2; `None`
/// when the sum lies too close to a half-integer for the f64 arithmetic here to tell.
#[inline(always)]
fn nearest_integer(s: f64, t: f64) -> Option<f64> {
    if s.is_nan() || s.abs() >= pow2(52) {
        return None;
    }
    let n = s.round_ties_even();
    // s − n is exact (|s − n| ≤ 1/2 and both are multiples of ulp(s)); r has error ≤ 2^−54.
    let r = (s - n) + t;
    if (r.abs() - 0.5).abs() < pow2(-50) {
        return None;
    }
    Some(if r > 0.5 {
        n + 1.0
    } else if r < -0.5 {
        n - 1.0
    } else {
        n
    })
}

/// Absolute error bound of v from its relative bound: |y| ≤ |v|/(1 − r), |v| ≤ |v.hi|(1+2^−52).
#[inline(always)]
fn absolute(v: &Ev) -> f64 {
    v.r * v.v.hi.abs() * SLACK
}

thread_local! {
    /// The key of this thread's last [`remembered_beside`] answer (see [`beside_key`]): saturated
    /// and tiny-input regions ask for the same one billions of times in a row.
    static LAST_BESIDE_KEY: std::cell::Cell<(u64, u64)> = const { std::cell::Cell::new((0, 0)) };
    /// That answer.
    static LAST_BESIDE: std::cell::Cell<Option<Reference>> = const { std::cell::Cell::new(None) };
}

/// Base, side and format packed for [`remembered_beside`]'s one-entry memo (never (0, 0): the side
/// word holds the format's precision).
#[inline(always)]
fn beside_key(format: Layout, base: f64, up: bool) -> (u64, u64) {
    let shape = (format.precision() as u64) << 8 | (format.emax() as u64) << 16;
    (base.to_bits(), shape | up as u64)
}

/// [`decide_beside`] through this thread's one-entry memo.
#[inline(always)]
fn remembered_beside(format: Layout, base: f64, up: bool) -> Option<Reference> {
    let key = beside_key(format, base, up);
    if LAST_BESIDE_KEY.get() == key {
        if let Some(r) = LAST_BESIDE.get() {
            return Some(r);
        }
    }
    let r = decide_beside(format, base, up)?;
    LAST_BESIDE_KEY.set(key);
    LAST_BESIDE.set(Some(r));
    Some(r)
}

/// The reference of y = base + δ with 0 < |δ| < 2^(ilogb(base) − 54), δ > 0 exactly when `up`
/// (see [`finish`]); it depends on base, the side and the format only.
#[inline(always)]
fn decide_beside(format: Layout, base: f64, up: bool) -> Option<Reference> {
    let (bits, binade) = round_beside(format, base, up)?;
    if !format.is_finite(bits) {
        return None;
    }
    // |δ| < 2^(eb−54) is below half an ulp of base in binary64 (a quarter below a power of
    // two is still ≥ 2^(eb−54)), so RN_binary64(y) = base.
    let r = Reference {
        bits,
        exact: Some(ExactValue {
            approx: base,
            binade,
        }),
        precision: FAST_PRECISION,
    };
    Some(r)
}

/// RN into the format and the clamped binade of base + δ, δ as in [`decide_beside`] (also the
/// engine's `above`/`below` points, base ± 2^(eb−60)); `None` on overflow.
#[inline(always)]
fn round_beside(format: Layout, base: f64, up: bool) -> Option<(u32, i32)> {
    match format.normal_bits(base) {
        // base is a normal number of the format: y rounds to it (δ is far below half its ulp)
        // and lies in its binade, or in the one below when base is a power of two and δ points
        // towards zero — what `round_dd` gives for base ± 2^(eb−60), without its arithmetic.
        Some(bits) => {
            let towards_zero = up == (base < 0.0);
            let below = is_pow2(base) && towards_zero;
            Some((bits, (ilogb(base) - below as i32).max(format.emin())))
        }
        None => {
            let side = if up { 1.0 } else { -1.0 };
            let (ph, pl) = two_sum(base, side * pow2(ilogb(base) - 60));
            round_dd(format, ph, pl, 0)
        }
    }
}

/// Applies the decision rule to an outcome.
#[inline(always)]
pub fn finish(format: Layout, outcome: Outcome) -> Option<Reference> {
    let reference = |bits: u32, binade: i32, approx: f64, precision: u32| Reference {
        bits,
        exact: Some(ExactValue { approx, binade }),
        precision,
    };
    match outcome {
        Outcome::Decline => None,
        Outcome::Fixed(r) => Some(r),
        Outcome::Beside(base, up) => remembered_beside(format, base, up),
        Outcome::Leading(s, c, e) => {
            let (bits, binade, approx) = decide_leading(format, s, c, e)?;
            Some(reference(bits, binade, approx, FAST_PRECISION))
        }
        Outcome::Exact(x) => {
            let (bits, binade) = round_dd(format, x, 0.0, 0)?;
            Some(reference(bits, binade, x, 0))
        }
        Outcome::Rational(v) => {
            if !less(v.r, MAX_REL) {
                return None;
            }
            let (bits, binade, approx) = decide_interval(format, v.v, absolute(&v), 0)?;
            Some(reference(bits, binade, approx, 0))
        }
        Outcome::Value(v, k) => {
            if !less(v.r, MAX_REL) {
                return None;
            }
            let (bits, binade, approx) = decide_interval(format, v.v, absolute(&v), k)?;
            Some(reference(bits, binade, approx, FAST_PRECISION))
        }
        Outcome::Near(base, delta) => {
            if !less(delta.r, 0.5) || delta.v.hi == 0.0 {
                return None;
            }
            let eb = ilogb(base);
            // base is a multiple of 2^(eb−52); every rounding boundary (value or midpoint) of a
            // format with p ≤ 52 near base is a multiple of 2^(eb−53), so the nearest one other
            // than base is ≥ 2^(eb−53) away, and the nearest other power of two farther still.
            // With 0 < |delta| < 2^(eb−54), y and any point strictly between base and base ±
            // 2^(eb−54) on delta's side round alike and share a binade.
            let limit = pow2(eb - 54);
            if delta.v.hi.abs() * (1.0 + delta.r) * SLACK < limit {
                return decide_beside(format, base, delta.v.hi > 0.0);
            }
            let sum = delta.add_f(base);
            if !less(sum.r, MAX_REL) {
                return None;
            }
            let (bits, binade, approx) = decide_interval(format, sum.v, absolute(&sum), 0)?;
            Some(reference(bits, binade, approx, FAST_PRECISION))
        }
    }
}

/// Widening of [`decide_quick`]'s enclosure (2^−80) beyond what any slower fast path that its
/// callers skip would use (their enclosures stay within 2^−85·|y| of y).
const QUICK_MARGIN: f64 = 8.271806125530277e-25;

/// The reference of y = (h + l)·(1 + θ), |θ| ≤ rel (< 2^−55, h + l any sum of two f64), when
/// the whole enclosure, widened by [`QUICK_MARGIN`], lies strictly inside the binary64 rounding
/// interval of a binary64 number A that is no rounding boundary of the format; `None`
/// otherwise (the caller then takes its slower path).
///
/// With A = RN(h + l) (TwoSum: A + l' = h + l exactly) normal, not a power of two, |y − A| ≤
/// |l'| + rel·|h + l| ≤ (|l'| + rel·|A|·(1 + 2^−52)), below half the gap 2^(ilogb(A)−52) on
/// either side when the test passes (SLACK covers the test's own two roundings and the 2^−52).
/// In that open interval the only binary64 number is A, and every point where RN into the
/// format (p ≤ 52) or the binade changes is a binary64 number; A itself is not one
/// ([`round_flagged`]'s flag), so every point of the interval has RN_binary64 = A and rounds
/// and falls like A: the answer of [`decide_interval`] for any enclosure inside it, so a
/// slower path whose enclosure lies within the margin would decide the same reference.
#[inline(always)]
pub fn decide_quick(format: Layout, h: f64, l: f64, rel: f64) -> Option<Reference> {
    let (a, rest) = two_sum(h, l);
    if !a.is_normal() || ilogb(a) < -960 || is_pow2(a) {
        return None;
    }
    let reach = (rest.abs() + (rel + QUICK_MARGIN) * a.abs()) * SLACK;
    if !less(reach, pow2(ilogb(a) - 53)) {
        return None;
    }
    let (bits, binade, boundary) = round_flagged(format, a, 0.0, 0)?;
    if boundary || !format.is_finite(bits) {
        return None;
    }
    Some(Reference {
        bits,
        exact: Some(ExactValue { approx: a, binade }),
        precision: FAST_PRECISION,
    })
}

/// RN into `format`, the clamped binade and RN_binary64 of y = s + c + θ ([`Outcome::Leading`]).
///
/// Every point where one of the three changes (a midpoint or number of the format, a power of
/// two, a binary64 midpoint) lies, near s (within |h|/4), on the grid G of multiples of
/// 2^(eb−54), eb = ilogb(h).  If l = 0, s = h ∈ G; if not, s − g for g ∈ G is a multiple of
/// min(q, 2^(eb−54)), q the lowest set bit of l (h is a multiple of 2^(eb−52)), so it is zero
/// or at least that large.  So with d = min(q, 2^(eb−54))/4 and |c| + e < d, no such point
/// lies strictly between s and y, nor at y: y rounds and falls like s nudged towards c's side,
/// and s itself can be such a point only when l = 0 or |l| is half a binary64 gap (handled by
/// [`nearest_nudged`]; `round_dd` takes the nudge as a tiny l of c's sign).  Otherwise the
/// ends s + (c ∓ e), each rounded outwards twice (c ∓ e, then l + it) and added exactly by
/// TwoSum, must have one RN_binary64, and [`round_within`] rounds them into the format.
#[inline(always)]
fn decide_leading(format: Layout, s: Dd, c: f64, e: f64) -> Option<(u32, i32, f64)> {
    if !less(e, c.abs())
        || !less(c.abs(), s.hi.abs() * 0.25)
        || !s.hi.is_normal()
        || ilogb(s.hi) < -960
        || (s.lo != 0.0 && !s.lo.is_normal())
    {
        return None;
    }
    let eb = ilogb(s.hi);
    let quantum = if s.lo == 0.0 {
        pow2(eb - 54)
    } else {
        lowest_bit(s.lo).min(pow2(eb - 54))
    };
    if c.abs() + e < quantum * 0.25 {
        let up = c > 0.0;
        let l = if s.lo == 0.0 {
            let tiny = pow2((eb - 100).max(-1022));
            if up {
                tiny
            } else {
                -tiny
            }
        } else {
            s.lo
        };
        let (bits, binade) = round_dd(format, s.hi, l, 0)?;
        if !format.is_finite(bits) {
            return None;
        }
        return Some((bits, binade, nearest_nudged(s, up)));
    }
    let low = two_sum(s.hi, next_down(s.lo + next_down(c - e)));
    let high = two_sum(s.hi, next_up(s.lo + next_up(c + e)));
    // TwoSum's leading part is RN_binary64 of each end, so of every point between.
    if low.0 != high.0 {
        return None;
    }
    let (bits, binade) = round_within(format, low.0, low, high, 0)?;
    Some((bits, binade, low.0))
}

/// RN into the format and the clamped binade of every point of an interval [L, H] (the ends
/// as double-words, scaled by 2^k) whose points all have RN_binary64 = `approx`.  Every point
/// where the rounding or the binade changes is a binary64 number (p ≤ 24), and one inside the
/// interval would round to itself, so it could only be `approx`: unless `approx` is such a
/// point (or zero), the interval rounds and falls like `approx` alone; if it is, both ends
/// decide.
#[inline(always)]
fn round_within(
    format: Layout,
    approx: f64,
    low: (f64, f64),
    high: (f64, f64),
    k: i32,
) -> Option<(u32, i32)> {
    // A zero approximation (|y| < 2^−1075) takes the ends too: its sign is the ends' own.
    let (bits, binade, boundary) = round_flagged(format, approx, 0.0, 0)?;
    let decided = if boundary || approx == 0.0 {
        let lo_end = round_dd(format, low.0, low.1, k)?;
        (lo_end == round_dd(format, high.0, high.1, k)?).then_some(lo_end)?
    } else {
        (bits, binade)
    };
    format.is_finite(decided.0).then_some(decided)
}

/// The lowest set bit of a normal nonzero f64, as a power of two (v is a multiple of it); 0
/// when that is below 2^−1022, which leaves [`decide_leading`] no nudge.
#[inline(always)]
fn lowest_bit(v: f64) -> f64 {
    let significand = v.to_bits() & ((1u64 << 52) - 1) | 1u64 << 52;
    let exponent = ilogb(v) - 52 + significand.trailing_zeros() as i32;
    if exponent < -1022 {
        0.0
    } else {
        pow2(exponent)
    }
}

/// RN_binary64(s + 0·side): s = h + l normalized by TwoSum, so h = RN(s) and s is a binary64
/// midpoint only when l is exactly half the gap from h to a neighbour; then the nudge decides.
#[inline(always)]
fn nearest_nudged(s: Dd, up: bool) -> f64 {
    let (h, l) = (s.hi, s.lo);
    if l == 0.0 {
        return h;
    }
    let (above, below) = (next_up(h), next_down(h));
    // The gaps are powers of two: their halves are exact.
    if up && l == (above - h) * 0.5 {
        above
    } else if !up && l == (below - h) * 0.5 {
        below
    } else {
        h
    }
}

/// The engine's reference for its `tiny(negative)` tail: a signed zero, binade emin, and the
/// approximation RN_binary64 of its enclosure [2^−1100, 2^−1080], a signed zero.
#[inline(always)]
pub fn engine_tiny(format: Layout, negative: bool) -> Reference {
    let approx = 0.0;
    Reference {
        bits: format.encode(negative, 0, 0),
        exact: Some(ExactValue {
            approx: if negative { -approx } else { approx },
            binade: format.emin(),
        }),
        precision: 64,
    }
}

/// The engine's reference for `above(a)` / `below(a)` with an f64 a: rounded and binned like a
/// point just beside a, approximated by a itself.
#[inline(always)]
pub fn engine_beside(format: Layout, a: f64, above: bool) -> Option<Reference> {
    let (bits, binade) = round_beside(format, a, above)?;
    Some(Reference {
        bits,
        exact: Some(ExactValue { approx: a, binade }),
        precision: 64,
    })
}

/// The engine's tail (|x| ≥ 2^12) of a function that tends to x with slope 1 at +∞ and to −0
/// from below at −∞ (GELU, mish, GELU-tanh, both roles): f just below x, f′ just above 1, and
/// the negative tiny on the left, as the engine's `in_tail` answers.
#[inline(always)]
pub fn rectifier_tail(format: Layout, x: f64, role: Role) -> Outcome {
    match (role, x > 0.0) {
        (Role::Forward, true) => {
            engine_beside(format, x, false).map_or(Outcome::Decline, Outcome::Fixed)
        }
        (Role::Derivative, true) => {
            engine_beside(format, 1.0, true).map_or(Outcome::Decline, Outcome::Fixed)
        }
        (_, false) => Outcome::Fixed(engine_tiny(format, true)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The hardware-conversion path against the general one, on binary32 patterns' own values,
    /// the midpoints between neighbours (ties), points a quarter of an ulp to either side, the
    /// powers of two, the bottom of the normal range and the top of the finite range, each with
    /// l = 0 and l of either sign.
    #[test]
    fn binary32_rounding_is_the_general_rounding() {
        let mut state = 0x9E37_79B9_7F4A_7C15u64;
        let mut next = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        };
        let mut patterns: Vec<u32> = (0..200_000).map(|_| next() as u32 & 0x7fff_ffff).collect();
        patterns.extend((0..=254u32).map(|e| e << 23));
        patterns.extend([
            0x0080_0000,
            0x0080_0001,
            0x007f_ffff,
            0x7f7f_fffe,
            0x7f7f_ffff,
        ]);
        let mut checked = 0;
        for bits in patterns {
            let a = f32::from_bits(bits);
            if !a.is_finite() || a == 0.0 {
                continue;
            }
            let a = a as f64;
            let b = f32::from_bits(bits + 1) as f64;
            let half = (b - a) / 2.0;
            for h in [
                a,
                a + half,
                a + half / 2.0,
                a + 3.0 * half / 2.0,
                a - half / 4.0,
            ] {
                for l in [0.0, h * 1e-20, -h * 1e-20] {
                    for negative in [false, true] {
                        let fast = round_binary32(h, l, negative);
                        let general = round_general(BINARY32, h, l, 0, negative);
                        if let Some(fast) = fast {
                            assert_eq!(Some(fast), general, "h = {h:e}, l = {l:e}, {negative}");
                            checked += 1;
                        }
                    }
                }
            }
        }
        assert!(checked > 5_000_000, "{checked} compared");
    }
}
