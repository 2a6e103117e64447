//! Lumen Edge (Tidewater Robotics): softsign x / (1 + |x|) for f32, exported with the C ABI
//! that ulpgauge calls (`void lumen_softsign_f32(const float *x, float *y, size_t n)`).

/// Computes y[i] = x[i] / (1 + |x[i]|) for i in 0..n.
///
/// # Safety
/// `x` and `y` must point to `n` valid, non-overlapping floats.
#[no_mangle]
pub unsafe extern "C" fn lumen_softsign_f32(x: *const f32, y: *mut f32, n: usize) {
    let (x, y) = (
        std::slice::from_raw_parts(x, n),
        std::slice::from_raw_parts_mut(y, n),
    );
    for (out, &v) in y.iter_mut().zip(x) {
        *out = v / (1.0 + v.abs());
    }
}
