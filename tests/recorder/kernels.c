/*
 * Lumen Edge's Padé tanh, the kernel of the recorder round trip: the same arithmetic the test
 * evaluates with numpy, so a library check of this file and a check of the recorded outputs
 * must agree.  Only IEEE basic operations in binary32 (each correctly rounded, IEEE 754-2019
 * 5.4.1), compiled with -ffp-contract=off so that no multiply-add is fused; a binary16 result
 * is one rounding of the binary32 value (_Float16 conversion, round to nearest even).
 *
 *   t = x (27 + x^2) / (27 + 9 x^2), clamped to [-1, 1] (NaN stays NaN)
 */
#include <stddef.h>
#include <stdint.h>
#include <string.h>

static float pade_tanh(float x) {
    float x2 = x * x;
    float t = x * (27.0f + x2) / (27.0f + 9.0f * x2);
    return t > 1.0f ? 1.0f : (t < -1.0f ? -1.0f : t);
}

void lumen_pade_tanh_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = pade_tanh(x[i]);
}

void lumen_pade_tanh_f16(const uint16_t *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        _Float16 h, r;
        memcpy(&h, &x[i], sizeof h);
        r = (_Float16)pade_tanh((float)h);
        memcpy(&y[i], &r, sizeof r);
    }
}
