/* Lumen Edge (Tidewater Robotics): activations fused with a cast, input and output in
 * different formats (the C types follow each side: float for f32, uint16_t bit patterns for
 * f16 and bf16).  They compute in double or float and convert once, with round-to-nearest-even
 * -- except the first bfloat16 tanh of the vision team, whose cast truncates. */
#include <math.h>
#include "lumen_common.h"

/* bf16 activations in, f32 out (the next layer accumulates in f32): computed in double. */
LUMEN_EXPORT void lumen_silu_bf16_f32(const uint16_t *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        double v = lumen_bf16_to_f32(x[i]);
        /* -inf / (1 + inf) would be NaN: the limit at -inf is -0. */
        y[i] = isinf(v) ? (v > 0 ? (float)v : -0.0f) : (float)(v / (1.0 + exp(-v)));
    }
}

/* The bug: the f32 result is cut to its top 16 bits instead of rounded to bfloat16. */
LUMEN_EXPORT void lumen_tanh_f32_bf16_trunc(const float *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = (uint16_t)(lumen_bits(tanhf(x[i])) >> 16);
}

/* f16 in, f32 out. */
LUMEN_EXPORT void lumen_sigmoid_f16_f32(const uint16_t *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        double v = lumen_f16_to_f32(x[i]);
        y[i] = (float)(1.0 / (1.0 + exp(-v)));
    }
}

/* f32 in, f16 out: a float sigmoid rounded once more into binary16. */
LUMEN_EXPORT void lumen_sigmoid_f32_f16(const float *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = lumen_f32_to_f16(1.0f / (1.0f + expf(-x[i])));
}

/* bf16 in, f16 out: GELU with erfc in double, through float. */
LUMEN_EXPORT void lumen_gelu_bf16_f16(const uint16_t *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        double v = lumen_bf16_to_f32(x[i]);
        /* -inf * erfc(+inf) would be NaN: the limit at -inf is -0. */
        double g = isinf(v) && v < 0 ? -0.0 : 0.5 * v * erfc(-v * 0.70710678118654752440);
        y[i] = lumen_f32_to_f16((float)g);
    }
}

/* f16 in, bf16 out: a float tanh rounded into bfloat16. */
LUMEN_EXPORT void lumen_tanh_f16_bf16(const uint16_t *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = lumen_f32_to_bf16(tanhf(lumen_f16_to_f32(x[i])));
}
