/* Lumen Edge (Tidewater Robotics): plain scalar kernels, one per format, plus the derivative,
 * gradient and trailing-parameter shapes of the ABI.  They lean on the C library's expf/tanhf
 * and round once to the target format. */
#include <math.h>
#include "lumen_common.h"

static inline float sigmoidf_ref(float x) { return 1.0f / (1.0f + expf(-x)); }

LUMEN_EXPORT void lumen_sigmoid_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = sigmoidf_ref(x[i]);
}

LUMEN_EXPORT void lumen_tanh_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = tanhf(x[i]);
}

LUMEN_EXPORT void lumen_sigmoid_f16(const uint16_t *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = lumen_f32_to_f16(sigmoidf_ref(lumen_f16_to_f32(x[i])));
}

LUMEN_EXPORT void lumen_tanh_bf16(const uint16_t *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = lumen_f32_to_bf16(tanhf(lumen_bf16_to_f32(x[i])));
}

/* derivative: y = s(x) (1 - s(x)) */
LUMEN_EXPORT void lumen_sigmoid_deriv_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float s = sigmoidf_ref(x[i]);
        y[i] = s * (1.0f - s);
    }
}

/* gradient from x: dx = g s(x) (1 - s(x)) */
LUMEN_EXPORT void lumen_sigmoid_grad_f32(const float *x, const float *g, float *dx, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float s = sigmoidf_ref(x[i]);
        dx[i] = g[i] * (s * (1.0f - s));
    }
}

/* gradient from the forward output y = tanh(x): dx = g (1 - y^2) */
LUMEN_EXPORT void lumen_tanh_grad_y_f32(const float *y, const float *g, float *dx, size_t n) {
    for (size_t i = 0; i < n; i++) dx[i] = g[i] * (1.0f - y[i] * y[i]);
}

/* ELU with alpha passed as a trailing argument. */
LUMEN_EXPORT void lumen_elu_f32(const float *x, float *y, size_t n, float alpha) {
    for (size_t i = 0; i < n; i++) y[i] = x[i] > 0.0f ? x[i] : alpha * expm1f(x[i]);
}

/* Swish with beta = 1 (SiLU), x s(x), and the exact GELU, x Phi(x) = (x/2) erfc(-x/sqrt 2):
 * not in the manifest; the exhaustive binary32 timings of DEVELOPERS.md run them. */
LUMEN_EXPORT void lumen_swish_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = x[i] / (1.0f + expf(-x[i]));
}

LUMEN_EXPORT void lumen_gelu_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = 0.5f * x[i] * erfcf(-x[i] * 0.70710678118654752f);
}
