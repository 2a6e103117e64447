/* Lumen Edge (Tidewater Robotics): the bfloat16 and binary32 SwiGLU of the same feed-forward
 * block, y = silu(a) * b, computed in binary32 as a / (1 + exp(-a)) * b (two roundings in the
 * gate, one in the product, one more to bfloat16): a few ulps off in binary32, and exp(-a)
 * overflowing for a < -88.7 makes the gate a / inf = -0, a zero where y is a tiny nonzero. */
#include <math.h>
#include "lumen_common.h"

static inline float swiglu(float a, float b) { return a / (1.0f + expf(-a)) * b; }

LUMEN_EXPORT void lumen_swiglu_bf16(const uint16_t *a, const uint16_t *b, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++)
        y[i] = lumen_f32_to_bf16(swiglu(lumen_bf16_to_f32(a[i]), lumen_bf16_to_f32(b[i])));
}

LUMEN_EXPORT void lumen_swiglu_f32(const float *a, const float *b, float *y, size_t n) {
    for (size_t i = 0; i < n; i++)
        y[i] = swiglu(a[i], b[i]);
}
