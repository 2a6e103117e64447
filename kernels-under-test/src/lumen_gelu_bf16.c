/* Lumen Edge (Tidewater Robotics): bfloat16 GELU, 0.5 x (1 + erf(x / sqrt 2)) in float. */
#include <math.h>
#include "lumen_common.h"

LUMEN_EXPORT void lumen_gelu_bf16(const uint16_t *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float v = lumen_bf16_to_f32(x[i]);
        y[i] = lumen_f32_to_bf16(0.5f * v * (1.0f + erff(v * 0.70710678118654752f)));
    }
}
