/* Lumen Edge (Tidewater Robotics): hand-written SIMD sigmoid with its own polynomial exp.
 * AVX2+FMA when the CPU has it, SSE2 otherwise (every x86-64 has SSE2), plain C elsewhere.
 * The ragged tail goes through the same vector code via a small stack buffer, so an element's
 * result does not depend on n or on its position. */
#include <math.h>
#include "lumen_common.h"

#if defined(__x86_64__)
#include <immintrin.h>

/* exp(t) on [-87, 88]: t = k ln2 + r, |r| <= ln2/2, degree-6 Taylor-like polynomial. */
#define LN2_HI 0.693359375f
#define LN2_LO -2.12194440e-4f
#define LOG2E 1.44269504088896341f
static const float P[7] = {1.0f, 1.0f, 0.5f, 1.66666672e-1f, 4.16666679e-2f, 8.33333377e-3f,
                           1.38888892e-3f};

__attribute__((target("avx2,fma"))) static void sigmoid8_avx2(const float *x, float *y) {
    __m256 v = _mm256_loadu_ps(x);
    __m256 t = _mm256_sub_ps(_mm256_setzero_ps(), v);
    t = _mm256_min_ps(_mm256_max_ps(t, _mm256_set1_ps(-87.0f)), _mm256_set1_ps(88.0f));
    __m256 k = _mm256_round_ps(_mm256_mul_ps(t, _mm256_set1_ps(LOG2E)),
                               _MM_FROUND_TO_NEAREST_INT | _MM_FROUND_NO_EXC);
    __m256 r = _mm256_fnmadd_ps(k, _mm256_set1_ps(LN2_HI), t);
    r = _mm256_fnmadd_ps(k, _mm256_set1_ps(LN2_LO), r);
    __m256 p = _mm256_set1_ps(P[6]);
    for (int j = 5; j >= 0; j--) p = _mm256_fmadd_ps(p, r, _mm256_set1_ps(P[j]));
    __m256i e = _mm256_slli_epi32(_mm256_add_epi32(_mm256_cvtps_epi32(k), _mm256_set1_epi32(127)), 23);
    p = _mm256_mul_ps(p, _mm256_castsi256_ps(e));
    __m256 s = _mm256_div_ps(_mm256_set1_ps(1.0f), _mm256_add_ps(_mm256_set1_ps(1.0f), p));
    __m256 nan = _mm256_cmp_ps(v, v, _CMP_UNORD_Q);
    _mm256_storeu_ps(y, _mm256_blendv_ps(s, v, nan));
}

static void sigmoid4_sse2(const float *x, float *y) {
    __m128 v = _mm_loadu_ps(x);
    __m128 t = _mm_sub_ps(_mm_setzero_ps(), v);
    t = _mm_min_ps(_mm_max_ps(t, _mm_set1_ps(-87.0f)), _mm_set1_ps(88.0f));
    __m128 k = _mm_cvtepi32_ps(_mm_cvtps_epi32(_mm_mul_ps(t, _mm_set1_ps(LOG2E))));
    __m128 r = _mm_sub_ps(t, _mm_mul_ps(k, _mm_set1_ps(LN2_HI)));
    r = _mm_sub_ps(r, _mm_mul_ps(k, _mm_set1_ps(LN2_LO)));
    __m128 p = _mm_set1_ps(P[6]);
    for (int j = 5; j >= 0; j--) p = _mm_add_ps(_mm_mul_ps(p, r), _mm_set1_ps(P[j]));
    __m128i e = _mm_slli_epi32(_mm_add_epi32(_mm_cvtps_epi32(k), _mm_set1_epi32(127)), 23);
    p = _mm_mul_ps(p, _mm_castsi128_ps(e));
    __m128 s = _mm_div_ps(_mm_set1_ps(1.0f), _mm_add_ps(_mm_set1_ps(1.0f), p));
    __m128 nan = _mm_cmpunord_ps(v, v);
    _mm_storeu_ps(y, _mm_or_ps(_mm_and_ps(nan, v), _mm_andnot_ps(nan, s)));
}

static void run_blocks(void (*block)(const float *, float *), size_t w, const float *x,
                       float *y, size_t n) {
    size_t i = 0;
    for (; i + w <= n; i += w) block(x + i, y + i);
    if (i < n) {
        float xin[8] = {0}, yout[8];
        memcpy(xin, x + i, (n - i) * sizeof(float));
        block(xin, yout);
        memcpy(y + i, yout, (n - i) * sizeof(float));
    }
}

LUMEN_EXPORT void lumen_sigmoid_f32_simd(const float *x, float *y, size_t n) {
    __builtin_cpu_init();
    if (__builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma"))
        run_blocks(sigmoid8_avx2, 8, x, y, n);
    else
        run_blocks(sigmoid4_sse2, 4, x, y, n);
}
#else
LUMEN_EXPORT void lumen_sigmoid_f32_simd(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = 1.0f / (1.0f + expf(-x[i]));
}
#endif
