/* Lumen Edge (Tidewater Robotics): a sigmoid from a library built the way fast-math builds do:
 * a load-time constructor switches flush-to-zero and denormals-are-zero on for the whole
 * process.  Trips ulpgauge's fp-environment check. */
#include <math.h>
#include "lumen_common.h"

#if defined(__x86_64__)
#include <xmmintrin.h>
__attribute__((constructor)) static void lumen_fast_denormals(void) {
    _mm_setcsr(_mm_getcsr() | 0x8040u); /* FTZ (bit 15) | DAZ (bit 6) */
}
#elif defined(__aarch64__)
__attribute__((constructor)) static void lumen_fast_denormals(void) {
    uint64_t fpcr;
    __asm__ volatile("mrs %0, fpcr" : "=r"(fpcr));
    fpcr |= (uint64_t)1 << 24; /* FZ */
    __asm__ volatile("msr fpcr, %0" ::"r"(fpcr));
}
#endif

LUMEN_EXPORT void lumen_sigmoid_f32_fast(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = 1.0f / (1.0f + expf(-x[i]));
}
