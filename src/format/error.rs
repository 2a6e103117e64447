//! The error measures every report uses: ulp error against the exact value, and the step
//! distance between two representable values.

use super::{layout::pow2, Format, Layout};

/// What the measures need to know of an exact real value y: an approximation and the binade.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct ExactValue {
    /// y rounded to the nearest binary64, ties to even (subnormals included; 0 below 2^−1075).
    pub approx: f64,
    /// max(⌊log2 |y|⌋, emin) of the target format, decided exactly; `emin` for y = 0.
    pub binade: i32,
}

impl ExactValue {
    /// ulp(y) = 2^(max(⌊log2|y|⌋, emin) − p + 1) (Goldberg's definition, as in J.-M. Muller,
    /// "On the definition of ulp(x)", INRIA RR-5504, 2005); ulp(0) is the smallest subnormal.
    pub fn ulp(&self, format: &dyn Format) -> f64 {
        pow2(self.binade - format.precision() as i32 + 1)
    }
}

/// ulp error |ŷ − y| / ulp(y) of a finite output pattern `output` against the exact value y.
/// +0 and −0 are equal here; the sign of zero is judged elsewhere.
pub fn ulp_error(format: &dyn Format, output: u32, exact: &ExactValue) -> f64 {
    ulp_error_in(format.layout(), output, exact)
}

/// [`ulp_error`] from the format's layout, for per-point code (inlined, no virtual calls).
#[inline]
pub fn ulp_error_in(layout: Layout, output: u32, exact: &ExactValue) -> f64 {
    let y_hat = layout.to_f64(output);
    // ŷ and y are both far inside binary64's range, so the difference loses at most 2^−53
    // relative, i.e. well under 2^−28 ulp of the target format. Multiplying by 1/ulp(y) gives
    // the bits dividing by ulp(y) would (both powers of two are exact).
    (y_hat - exact.approx).abs() * layout.inverse_ulp_of_binade(exact.binade)
}

/// Number of representable steps between two non-NaN patterns (+0 and −0 are one point).
pub fn step_distance(format: &dyn Format, a: u32, b: u32) -> u64 {
    format.ordinal(a).abs_diff(format.ordinal(b))
}
