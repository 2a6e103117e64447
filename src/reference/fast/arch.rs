//! Runtime dispatch to a build of the fast path with hardware FMA.
//!
//! The crate targets baseline x86-64, where `f64::mul_add` is an out-of-line software routine
//! and `floor`/`round_ties_even` are libm calls.  [`reference_fma`] is compiled with the `fma`
//! target feature (which implies AVX and SSE4.1, so rounding is one instruction), and every
//! primitive below it is `#[inline(always)]`, so the whole evaluation is compiled again inside
//! it.  Software and hardware FMA are both correctly rounded, so both builds return identical
//! bits.

use super::FastEvaluator;
use crate::reference::Reference;

/// Whether this CPU has FMA (checked once per evaluator).
pub fn has_fma() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("fma")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// [`FastEvaluator::evaluate`] compiled with hardware FMA.
///
/// # Safety
/// The CPU must support FMA ([`has_fma`]).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "fma")]
pub unsafe fn reference_fma(fast: &FastEvaluator, x_bits: u32) -> Option<Reference> {
    fast.evaluate(x_bits)
}
