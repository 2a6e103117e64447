//! The C signatures ulpgauge calls, and one unsafe entry point that dispatches on them.
//!
//! Pointer types do not change the C calling convention, so f32 and 16-bit kernels share one
//! set of function-pointer types over bytes; what differs is the number of input arrays and of
//! trailing `float` parameters.

use std::ffi::c_void;

/// Most trailing parameters a kernel may take (no catalog function has more).
pub const MAX_TRAILING: usize = 2;

type Unary0 = unsafe extern "C" fn(*const u8, *mut u8, usize);
type Unary1 = unsafe extern "C" fn(*const u8, *mut u8, usize, f32);
type Unary2 = unsafe extern "C" fn(*const u8, *mut u8, usize, f32, f32);
type Binary0 = unsafe extern "C" fn(*const u8, *const u8, *mut u8, usize);
type Binary1 = unsafe extern "C" fn(*const u8, *const u8, *mut u8, usize, f32);
type Binary2 = unsafe extern "C" fn(*const u8, *const u8, *mut u8, usize, f32, f32);
type Strided0 = unsafe extern "C" fn(*const u8, isize, *mut u8, isize, usize);
type Strided1 = unsafe extern "C" fn(*const u8, isize, *mut u8, isize, usize, f32);
type Strided2 = unsafe extern "C" fn(*const u8, isize, *mut u8, isize, usize, f32, f32);

/// How to call one kernel symbol.
#[derive(Clone, Debug)]
pub struct Abi {
    /// Bytes per input element (x, g): 4 for f32, 2 for f16 and bf16, 1 for the FP8 formats.
    pub elem_bytes: usize,
    /// Bytes per output element (the output format's, which may differ from the input's).
    pub out_bytes: usize,
    /// Takes (x or y, g, dx, n) instead of (x, y, n).
    pub gradient: bool,
    /// Trailing `float` arguments.
    pub trailing: Vec<f32>,
    /// Takes (x, sx, y, sy, n) with element strides (forward and derivative kernels only).
    pub strided: bool,
}

impl Abi {
    /// Number of input arrays.
    pub fn inputs(&self) -> usize {
        if self.gradient {
            2
        } else {
            1
        }
    }

    /// Calls the kernel.
    ///
    /// # Safety
    /// `symbol` must be a function of the shape this `Abi` describes; `a` (and `b` for gradient
    /// kernels) must hold `n` readable elements and `out` `n` writable ones.
    pub unsafe fn call(
        &self,
        symbol: *const c_void,
        a: *const u8,
        b: *const u8,
        out: *mut u8,
        n: usize,
    ) {
        let t = &self.trailing;
        match (self.gradient, t.len()) {
            (false, 0) => std::mem::transmute::<*const c_void, Unary0>(symbol)(a, out, n),
            (false, 1) => std::mem::transmute::<*const c_void, Unary1>(symbol)(a, out, n, t[0]),
            (false, _) => {
                std::mem::transmute::<*const c_void, Unary2>(symbol)(a, out, n, t[0], t[1])
            }
            (true, 0) => std::mem::transmute::<*const c_void, Binary0>(symbol)(a, b, out, n),
            (true, 1) => std::mem::transmute::<*const c_void, Binary1>(symbol)(a, b, out, n, t[0]),
            (true, _) => {
                std::mem::transmute::<*const c_void, Binary2>(symbol)(a, b, out, n, t[0], t[1])
            }
        }
    }

    /// Calls a strided kernel: element i of x is `a[i*sx]`, of y `out[i*sy]`.
    ///
    /// # Safety
    /// `symbol` must be a strided function of this `Abi`'s element and trailing types; `a` and
    /// `out` must point at element 0 of arrays holding every element the strides reach.
    pub unsafe fn call_strided(
        &self,
        symbol: *const c_void,
        a: *const u8,
        sx: isize,
        out: *mut u8,
        sy: isize,
        n: usize,
    ) {
        let t = &self.trailing;
        match t.len() {
            0 => std::mem::transmute::<*const c_void, Strided0>(symbol)(a, sx, out, sy, n),
            1 => std::mem::transmute::<*const c_void, Strided1>(symbol)(a, sx, out, sy, n, t[0]),
            _ => std::mem::transmute::<*const c_void, Strided2>(symbol)(
                a, sx, out, sy, n, t[0], t[1],
            ),
        }
    }
}
