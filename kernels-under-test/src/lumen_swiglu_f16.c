/* Lumen Edge (Tidewater Robotics): the binary16 SwiGLU of the assistant's feed-forward block,
 * y = silu(a) * b.  To save a conversion it multiplies the two inputs first and rounds a*b to
 * binary16, then applies the gate sigma(a).  Known defect kept on purpose: a*b overflows
 * binary16 once |a*b| > 65504 (rounding to inf from 65520 on), although a*sigma(a)*b is far
 * smaller for negative a, so large |b| with negative a come out -inf or +inf. */
#include <math.h>
#include "lumen_common.h"

static inline float to_half(float v) { return lumen_f16_to_f32(lumen_f32_to_f16(v)); }

LUMEN_EXPORT void lumen_swiglu_f16(const uint16_t *a, const uint16_t *b, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float x = lumen_f16_to_f32(a[i]);
        float ab = to_half(x * lumen_f16_to_f32(b[i])); /* the product, in binary16 */
        float gate = 1.0f / (1.0f + expf(-x));
        y[i] = lumen_f32_to_f16(ab * gate);
    }
}
