/* Lumen Edge (Tidewater Robotics): two kernels whose results depend on where they run.
 *
 * lumen_softsign_f32_rcp was written for the Lumen runtime, whose worker threads always run
 * with flush-to-zero and denormals-are-zero on.  It computes softsign(x) = x / (1 + |x|) as
 * sign(x) / (1 + 1/|x|) with a reciprocal refined by one Newton step (the shape of an
 * rcp-estimate SIMD kernel), and guards only x == 0.  With DAZ on, a subnormal x compares equal
 * to zero and is returned as is (its correct result); with DAZ off, 1/|x| overflows for
 * |x| < 2^-128 and the Newton step turns the infinity into NaN.
 *
 * lumen_silu_f32 picks a path at run time from what glibc reports of the CPU (so glibc's
 * tunables can hide FMA from it): lumen_silu_f32_fma evaluates its exp polynomial with fused
 * multiply-adds, lumen_silu_f32_sse2 with separate multiplies and adds.  Both are exported so
 * that each path can be measured on any machine; they round differently on many inputs. */
#include <math.h>
#include <stdint.h>
#include "lumen_common.h"
#if defined(__x86_64__) && defined(__has_include)
#if __has_include(<sys/platform/x86.h>)
#include <sys/platform/x86.h>
#define LUMEN_GLIBC_CPU 1
#endif
#endif

static inline float recip_newton(float d) {
    float r = 1.0f / d; /* stands for an rcp estimate */
    return r * (2.0f - d * r);
}

LUMEN_EXPORT void lumen_softsign_f32_rcp(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float v = x[i];
        if (v == 0.0f) { /* under DAZ every subnormal lands here too */
            y[i] = v;
            continue;
        }
        float a = fabsf(v);
        if (a == INFINITY) {
            y[i] = copysignf(1.0f, v);
            continue;
        }
        float u = recip_newton(a);
        y[i] = copysignf(recip_newton(1.0f + u), v);
    }
}

/* exp(t) = p * 2^e for t in [-110, 88.7]: t = e ln2 + r, a degree-7 polynomial in r.  MADD is
 * fmaf or a*b + c. */
#define LUMEN_EXP_BODY(MADD)                                                          \
    float k = nearbyintf(t * 0x1.715476p+0f);                                         \
    float r = MADD(-k, 0x1.62e4p-1f, t);                                              \
    r = MADD(-k, 0x1.7f7d1cp-20f, r);                                                 \
    float p = 0x1.a01a02p-13f;                                                        \
    p = MADD(p, r, 0x1.6c16c2p-10f);                                                  \
    p = MADD(p, r, 0x1.111112p-7f);                                                   \
    p = MADD(p, r, 0x1.555556p-5f);                                                   \
    p = MADD(p, r, 0x1.555556p-3f);                                                   \
    p = MADD(p, r, 0x1p-1f);                                                          \
    p = MADD(p, r, 1.0f);                                                             \
    p = MADD(p, r, 1.0f);                                                             \
    *e = (int)k;                                                                      \
    return p;

#define LUMEN_MUL_ADD(a, b, c) ((a) * (b) + (c))

#if defined(__x86_64__)
__attribute__((target("fma"))) static float exp_fma(float t, int *e) {
    LUMEN_EXP_BODY(__builtin_fmaf)
}
#endif
static float exp_plain(float t, int *e) {
    LUMEN_EXP_BODY(LUMEN_MUL_ADD)
}

static inline float pow2(int e) { return lumen_float((uint32_t)(e + 127) << 23); }

static inline float silu_with(float v, float (*exp_)(float, int *)) {
    int e;
    if (v != v) return v;
    if (v > 88.0f) return v; /* exp(-v) < 2^-126: v / (1 + tiny) rounds to v */
    if (v < -110.0f) return copysignf(0.0f, -1.0f);
    if (v < -80.0f) { /* v * exp(v), rounded once into the subnormals */
        float p = exp_(v, &e);
        return (v * p * pow2(e + 100)) * 0x1p-100f;
    }
    float p = exp_(-v, &e);
    float ex = e > 127 ? p * 2.0f * pow2(e - 1) : p * pow2(e);
    return v / (1.0f + ex);
}

#if defined(__x86_64__)
__attribute__((target("fma"))) LUMEN_EXPORT void lumen_silu_f32_fma(const float *x, float *y,
                                                                     size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = silu_with(x[i], exp_fma);
}
#endif

LUMEN_EXPORT void lumen_silu_f32_sse2(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = silu_with(x[i], exp_plain);
}

LUMEN_EXPORT void lumen_silu_f32(const float *x, float *y, size_t n) {
#if defined(LUMEN_GLIBC_CPU)
    if (CPU_FEATURE_ACTIVE(FMA)) {
        lumen_silu_f32_fma(x, y, n);
        return;
    }
#endif
    lumen_silu_f32_sse2(x, y, n);
}
