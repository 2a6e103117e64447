//! Exact decisions for rational values: no error bound, only exact signs.
//!
//! A rational y is given by q = RN_binary64(y) and the sign of y − q.  Every point where the
//! rounding into a format with p ≤ 24 or its clamped binade changes (a number or midpoint of
//! the format, a power of two) is a binary64 number, and y lies in q's binary64 rounding
//! interval, whose other binary64 numbers are q's neighbours outside it: so y rounds and falls
//! like q nudged towards y's side — [`round_dd`] with a tiny low part of that sign.  The
//! reference then equals the engine's for the exact rational (`Value::Exact`): precision 0,
//! approximation RN_binary64(y) = q.
//!
//! [`nearest_ratio`] finds q and the side for y = N/V (N, V short sums of binary64 numbers) from
//! exact signs of N − m·V, each summed exactly as a nonoverlapping expansion (Shewchuk's
//! Grow-Expansion; the sign of such an expansion is that of its largest nonzero component).

use super::dd::{ilogb, is_pow2, next_down, next_up, pow2, two_prod, two_sum};
use super::decide::round_dd;
use crate::format::{ExactValue, Layout};
use crate::reference::Reference;

/// Values outside [2^−960, 2^960] are left to the engine: products and their exact errors stay
/// far from binary64's underflow and overflow.
const LOW: f64 = 1.0261342003245941e-289; // 2^−960
/// See [`LOW`].
const HIGH: f64 = 9.7453140114e288; // 2^960
/// Terms of [`nearest_ratio`] stay within [2^−400, 2^400]: their products with q and half a gap
/// (and those products' exact errors) stay normal.
const TERM_LOW: f64 = 3.8725919148493183e-121; // 2^−400
/// See [`TERM_LOW`].
const TERM_HIGH: f64 = 2.5822498780869086e120; // 2^400

/// The engine's reference for an exact zero from a nonzero input: +0, binade emin.
#[inline(always)]
pub fn zero(format: Layout) -> Reference {
    Reference {
        bits: format.encode(false, 0, 0),
        exact: Some(ExactValue {
            approx: 0.0,
            binade: format.emin(),
        }),
        precision: 0,
    }
}

/// The reference of an exact y with RN_binary64(y) = q (nonzero) and sign(y − q) = side
/// (−1, 0 or 1); None when |q| is outside [2^−960, 2^960].
#[inline(always)]
pub fn near(format: Layout, q: f64, side: i32) -> Option<Reference> {
    let magnitude = q.abs();
    if !(LOW..=HIGH).contains(&magnitude) {
        return None;
    }
    let negative = q < 0.0;
    // Towards zero: y is below a power of two in magnitude, so in the binade below.
    let towards_zero = side != 0 && ((side < 0) != negative);
    let binade = ilogb(q) - (is_pow2(q) && towards_zero) as i32;
    let bits = if binade > format.emax() {
        // RN overflows (the binade alone is past the largest finite number's).
        format.infinity(negative)
    } else if side == 0 {
        match format.normal_bits(q) {
            Some(bits) => bits,
            None => round_dd(format, q, 0.0, 0)?.0,
        }
    } else {
        // Far below half an ulp of q and nonzero: `round_dd` uses its sign only.
        let nudge = pow2(ilogb(q) - 80);
        round_dd(format, q, if side > 0 { nudge } else { -nudge }, 0)?.0
    };
    Some(Reference {
        bits,
        exact: Some(ExactValue {
            approx: q,
            binade: binade.max(format.emin()),
        }),
        precision: 0,
    })
}

/// [`near`] for an exactly representable value.
#[inline(always)]
pub fn value(format: Layout, v: f64) -> Option<Reference> {
    if v == 0.0 {
        return Some(zero(format));
    }
    near(format, v, 0)
}

/// The sign of y − q for y = n/d (d > 0) and q = RN(n/d): IEEE division rounds correctly, and
/// the remainder n − q·d of a correctly rounded quotient is a binary64 number, which one FMA
/// gives exactly (|n| within [2^−900, 2^900]).
#[inline(always)]
pub fn quotient(n: f64, d: f64) -> (f64, i32) {
    let q = n / d;
    let r = (-q).mul_add(d, n);
    (q, sign(r))
}

/// −1, 0 or 1.
#[inline(always)]
pub fn sign(v: f64) -> i32 {
    (v > 0.0) as i32 - (v < 0.0) as i32
}

/// Most terms a sum may have (numerator terms + 4 per denominator term).
const MAX_TERMS: usize = 16;

/// A nonoverlapping expansion, components in increasing magnitude (zeros allowed).
#[derive(Clone, Copy)]
struct Expansion {
    parts: [f64; MAX_TERMS],
    len: usize,
}

impl Expansion {
    #[inline(always)]
    fn new() -> Expansion {
        Expansion {
            parts: [0.0; MAX_TERMS],
            len: 0,
        }
    }
    /// Grow-Expansion: adds b exactly (TwoSum never rounds away any part of a sum).
    #[inline(always)]
    fn add(&mut self, b: f64) {
        let mut q = b;
        for part in self.parts.iter_mut().take(self.len) {
            let (s, e) = two_sum(q, *part);
            *part = e;
            q = s;
        }
        self.parts[self.len] = q;
        self.len += 1;
    }
    /// The sign of the exact sum: that of the largest nonzero component, which exceeds the
    /// sum of all smaller ones in magnitude.
    #[inline(always)]
    fn sign(&self) -> i32 {
        for &p in self.parts[..self.len].iter().rev() {
            if p != 0.0 {
                return sign(p);
            }
        }
        0
    }
}

/// Subtracts m·V exactly (each m·v_j as two binary64 numbers by FMA).
#[inline(always)]
fn subtract_product(e: &mut Expansion, m: f64, den: &[f64]) {
    for &v in den {
        let (p, err) = two_prod(m, v);
        e.add(-p);
        e.add(-err);
    }
}

/// The sign of Σnum − m·Σden − h·Σden from plain binary64 sums when they decide it, with
/// Higham's running error bound: each addition errs by at most u·|its result|, so the computed
/// sum is within u·Σ|partial sums| of the exact one (the first partial sum, num[0] alone, is
/// exact; the products' parts are exact by FMA, h·v_j exactly).  Terms go in the order num[0],
/// −RN(m·v_0) first: that is where the value cancels, so the bound stays small.
#[inline(always)]
fn filtered_sign(num: &[f64], den: &[f64], m: f64, h: f64) -> Option<i32> {
    let (p0, e0) = two_prod(m, den[0]);
    let mut s = num[0] - p0;
    let mut bound = s.abs();
    let add = |t: f64, s: &mut f64, bound: &mut f64| {
        *s += t;
        *bound += s.abs();
    };
    for &n in &num[1..] {
        add(n, &mut s, &mut bound);
    }
    add(-e0, &mut s, &mut bound);
    for &v in &den[1..] {
        let (p, e) = two_prod(m, v);
        add(-p, &mut s, &mut bound);
        add(-e, &mut s, &mut bound);
    }
    if h != 0.0 {
        for &v in den {
            add(-(h * v), &mut s, &mut bound);
        }
    }
    // u = 2^−53, doubled to cover the rounding of the bound's own sum.
    (s.abs() > bound * 2.220446049250313e-16).then(|| sign(s))
}

/// RN_binary64(y) and sign(y − RN_binary64(y)) for y = Σnum / Σden > 0, from a guess within a
/// few binary64 ulps; None when the guess is farther off or a term leaves the safe range.
///
/// Signs of N − m·V decide: at m = q (which side y is on), then at the midpoint m = q ± gap/2
/// on that side (whether y stays in q's rounding interval; an exact tie goes to the even
/// significand, as RN does); past the midpoint, q moves one step and the test repeats.
/// The midpoint's product is q·V ± (gap/2)·V, whose second part is exact (a power of two
/// times each v_j).
#[inline(always)]
pub fn nearest_ratio(num: &[f64], den: &[f64], guess: f64) -> Option<(f64, i32)> {
    debug_assert!(num.len() + 4 * den.len() + den.len() <= MAX_TERMS);
    let safe = |v: &f64| *v == 0.0 || (TERM_LOW..=TERM_HIGH).contains(&v.abs());
    // A guess that is not positive (or NaN) fails the range test in the loop.
    if !num.iter().all(safe) || !den.iter().all(safe) {
        return None;
    }
    // The common case: the guess is RN and plain sums decide both signs.
    if (TERM_LOW..=TERM_HIGH).contains(&guess) {
        if let Some(s0) = filtered_sign(num, den, guess, 0.0) {
            let neighbour = if s0 > 0 {
                next_up(guess)
            } else {
                next_down(guess)
            };
            let h = (neighbour - guess) * 0.5;
            if filtered_sign(num, den, guess, h) == Some(-s0) {
                return Some((guess, s0));
            }
        }
    }
    let mut q = guess;
    for _ in 0..4 {
        if !(TERM_LOW..=TERM_HIGH).contains(&q) {
            return None;
        }
        let mut e = Expansion::new();
        for &n in num {
            e.add(n);
        }
        subtract_product(&mut e, q, den);
        let s0 = e.sign();
        if s0 == 0 {
            return Some((q, 0));
        }
        let neighbour = if s0 > 0 { next_up(q) } else { next_down(q) };
        // Half the gap towards y: a power of two, so h·v_j is exact.
        let h = (neighbour - q) * 0.5;
        let mut m = e;
        for &v in den {
            m.add(-(h * v));
        }
        let s1 = m.sign();
        if s1 == 0 {
            // A tie between q and its neighbour: the even significand wins.
            let even = q.to_bits() & 1 == 0;
            return Some(if even { (q, s0) } else { (neighbour, -s0) });
        }
        if s1 != s0 {
            return Some((q, s0));
        }
        q = neighbour;
    }
    None
}
