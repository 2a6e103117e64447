/* Lumen Edge (Tidewater Robotics): kernels with one defect each, as fixtures for ulpgauge's
 * hygiene checks and crash handling.  Each comment names the check it trips. */
#include <math.h>
#include <stdint.h>
#include "lumen_common.h"

static inline float sigmoidf_ref(float x) { return 1.0f / (1.0f + expf(-x)); }

/* tail: blocks of 8 use the exact formula, the ragged tail a cheap rational approximation, so an
 * element's output depends on n and on its position. */
LUMEN_EXPORT void lumen_sigmoid_f32_ragged(const float *x, float *y, size_t n) {
    size_t i = 0;
    for (; i + 8 <= n; i += 8)
        for (size_t k = 0; k < 8; k++) y[i + k] = sigmoidf_ref(x[i + k]);
    for (; i < n; i++) y[i] = 0.5f + 0.5f * x[i] / (1.0f + fabsf(x[i]));
}

/* alignment: ported from a vector unit whose loads ignore the low four address bits, it reads
 * each block of 4 from x rounded down to a 16-byte boundary. */
LUMEN_EXPORT void lumen_sigmoid_f32_aligned(const float *x, float *y, size_t n) {
    size_t i = 0;
    for (; i + 4 <= n; i += 4) {
        float v[4];
        memcpy(v, (const void *)((uintptr_t)(x + i) & ~(uintptr_t)15), sizeof v);
        for (int k = 0; k < 4; k++) y[i + k] = sigmoidf_ref(v[k]);
    }
    for (; i < n; i++) y[i] = sigmoidf_ref(x[i]);
}

/* bounds: always stores whole blocks of 4, so up to 3 elements past y[n-1] are written. */
LUMEN_EXPORT void lumen_sigmoid_f32_overrun(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i += 4) {
        float v[4];
        for (size_t k = 0; k < 4; k++) v[k] = i + k < n ? x[i + k] : 0.0f;
        for (size_t k = 0; k < 4; k++) y[i + k] = sigmoidf_ref(v[k]);
    }
}

/* input-untouched: uses x as scratch space for e^-x. */
LUMEN_EXPORT void lumen_sigmoid_f32_scratch(const float *x, float *y, size_t n) {
    float *t = (float *)x;
    for (size_t i = 0; i < n; i++) {
        t[i] = expf(-x[i]);
        y[i] = 1.0f / (1.0f + t[i]);
    }
}

/* determinism: stages the batch in one static buffer, which concurrent callers overwrite. */
#define STAGE 65536
static float shared_chunk[STAGE];
LUMEN_EXPORT void lumen_tanh_f32_shared(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i += STAGE) {
        size_t m = n - i < STAGE ? n - i : STAGE;
        memcpy(shared_chunk, x + i, m * sizeof(float));
        for (size_t k = 0; k < m; k++) y[i + k] = tanhf(((volatile float *)shared_chunk)[k]);
    }
}

/* crash: a special case for the saturation point x = 9 (0x4880) reads a table that was never
 * set up; every other input is fine. */
static const float *volatile saturation_table = 0;
LUMEN_EXPORT void lumen_tanh_f16_crash(const uint16_t *x, uint16_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        if (x[i] == 0x4880u)
            y[i] = lumen_f32_to_f16(*saturation_table);
        else
            y[i] = lumen_f32_to_f16(tanhf(lumen_f16_to_f32(x[i])));
    }
}

/* hang: e^-x by scaling and squaring halves the argument until it is small; +inf never gets
 * small, so the kernel spins forever on that one input. */
LUMEN_EXPORT void lumen_sigmoid_f32_hang(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        volatile float r = -x[i];
        int k = 0;
        while (r < -0.5f) {
            r = r * 0.5f;
            k++;
        }
        float e = expf(r);
        for (int j = 0; j < k; j++) e *= e;
        y[i] = 1.0f / (1.0f + e);
    }
}

/* findings at scale: a range-reduction shortcut that misreads one bit of the significand for
 * huge arguments, so for every finite |x| >= 2^70 the output is NaN on 8 of every 16
 * consecutive bit patterns (bit 3 set): 486,539,264 inputs in 60,817,408 runs over the whole
 * binary32 domain, the worst case for anything that lists findings one by one. */
LUMEN_EXPORT void lumen_sigmoid_f32_patchy(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        uint32_t bits;
        memcpy(&bits, &x[i], sizeof bits);
        int huge = isfinite(x[i]) && fabsf(x[i]) >= 0x1p70f;
        y[i] = huge && (bits >> 3) & 1 ? NAN : sigmoidf_ref(x[i]);
    }
}
