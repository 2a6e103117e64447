/* Lumen Edge (Tidewater Robotics): 8-bit activations of the quantized inference path.
 * OCP FP8 (OFP8 v1.0) E4M3 and E5M2 values are passed as uint8_t bit patterns; the kernels
 * compute in float and convert back with round-to-nearest-even and the non-saturating mode
 * (E4M3 overflow gives NaN, E5M2 overflow gives infinity).  Also here: a bfloat16 tanh whose
 * final cast truncates, the fast path the bfloat16 team shipped first. */
#include <math.h>
#include "lumen_common.h"

static float fp8_decode(uint8_t b, int mbits, int bias, int finite_only) {
    int ebits = 7 - mbits;
    int e = (b >> mbits) & ((1 << ebits) - 1), m = b & ((1 << mbits) - 1);
    float s = (b & 0x80) ? -1.0f : 1.0f;
    if (finite_only ? ((b & 0x7f) == 0x7f) : (e == (1 << ebits) - 1))
        return (finite_only || m) ? NAN : s * INFINITY;
    if (e == 0) return s * ldexpf((float)m, 1 - bias - mbits);
    return s * ldexpf((float)((1 << mbits) | m), e - bias - mbits);
}

static uint8_t fp8_encode(float v, int mbits, int bias, int finite_only) {
    int ebits = 7 - mbits;
    uint8_t sign = signbit(v) ? 0x80 : 0;
    uint8_t nan = finite_only ? 0x7f : (uint8_t)(((1 << ebits) - 1) << mbits | (1 << (mbits - 1)));
    uint8_t inf = finite_only ? 0x7f : (uint8_t)(((1 << ebits) - 1) << mbits);
    if (isnan(v)) return nan;
    float a = fabsf(v);
    int emax = bias + (finite_only ? 1 : 0), emin = 1 - bias;
    float max = finite_only ? ldexpf((float)((2 << mbits) - 2), emax - mbits)
                            : ldexpf((float)((2 << mbits) - 1), emax - mbits);
    if (isinf(a)) return sign | inf;
    if (a == 0.0f) return sign;
    int e = ilogbf(a);
    if (e < emin) e = emin;
    float q = ldexpf(1.0f, e - mbits);
    float k = rintf(a / q); /* round to nearest even at the format's precision */
    if (k * q > max) return sign | inf;
    int kk = (int)k, qe = e - mbits;
    if (kk >> (mbits + 1)) { kk >>= 1; qe++; }     /* carried into the next binade */
    if (kk < (1 << mbits)) return sign | (uint8_t)kk; /* subnormal */
    int field = qe + mbits + bias;
    return sign | (uint8_t)(field << mbits) | (uint8_t)(kk & ((1 << mbits) - 1));
}

LUMEN_EXPORT void lumen_sigmoid_e4m3(const uint8_t *x, uint8_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float v = fp8_decode(x[i], 3, 7, 1);
        y[i] = fp8_encode(1.0f / (1.0f + expf(-v)), 3, 7, 1);
    }
}

LUMEN_EXPORT void lumen_gelu_e5m2(const uint8_t *x, uint8_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float v = fp8_decode(x[i], 2, 15, 0);
        y[i] = fp8_encode(0.5f * v * (1.0f + erff(v * 0.70710678118654752f)), 2, 15, 0);
    }
}

LUMEN_EXPORT void lumen_gelu_e4m3(const uint8_t *x, uint8_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float v = fp8_decode(x[i], 3, 7, 1);
        y[i] = fp8_encode(0.5f * v * (1.0f + erff(v * 0.70710678118654752f)), 3, 7, 1);
    }
}

/* The bug: the float result is cut to its top 16 bits instead of rounded. */
LUMEN_EXPORT void lumen_tanh_bf16_trunc(const uint16_t *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float v = tanhf(lumen_bf16_to_f32(x[i]));
        y[i] = (uint16_t)(lumen_bits(v) >> 16);
    }
}

/* Training in E5M2: the derivative s(x)(1 - s(x)) and the gradient g s(x)(1 - s(x)). */
LUMEN_EXPORT void lumen_sigmoid_deriv_e5m2(const uint8_t *x, uint8_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float s = 1.0f / (1.0f + expf(-fp8_decode(x[i], 2, 15, 0)));
        y[i] = fp8_encode(s * (1.0f - s), 2, 15, 0);
    }
}

LUMEN_EXPORT void lumen_sigmoid_grad_e5m2(const uint8_t *x, const uint8_t *g, uint8_t *dx,
                                          size_t n) {
    for (size_t i = 0; i < n; i++) {
        float s = 1.0f / (1.0f + expf(-fp8_decode(x[i], 2, 15, 0)));
        dx[i] = fp8_encode(fp8_decode(g[i], 2, 15, 0) * s * (1.0f - s), 2, 15, 0);
    }
}

/* f16 activations in, E4M3 out (the next matmul reads FP8): a float sigmoid, one conversion. */
LUMEN_EXPORT void lumen_sigmoid_f16_e4m3(const uint16_t *x, uint8_t *y, size_t n) {
    for (size_t i = 0; i < n; i++)
        y[i] = fp8_encode(1.0f / (1.0f + expf(-lumen_f16_to_f32(x[i]))), 3, 7, 1);
}
