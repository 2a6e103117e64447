/* Lumen Edge (Tidewater Robotics): branch-free binary16 ELU (alpha = 1).  Both branches are
 * computed for every element in binary16 precision and blended by multiplying with 0/1 masks.
 * Known defect kept on purpose: e^x overflows binary16 above x ~ 11.09, and 0 * inf = NaN, so
 * large positive inputs come out NaN. */
#include <math.h>
#include "lumen_common.h"

static inline float to_half(float v) { return lumen_f16_to_f32(lumen_f32_to_f16(v)); }

LUMEN_EXPORT void lumen_elu_f16(const uint16_t *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float v = lumen_f16_to_f32(x[i]);
        float pos = (float)(v > 0.0f), neg = 1.0f - pos;
        float e = to_half(expf(v));            /* e^x rounded to binary16: inf past 11.09 */
        float em1 = to_half(e - 1.0f);
        y[i] = lumen_f32_to_f16(to_half(pos * v) + to_half(neg * em1));
    }
}
