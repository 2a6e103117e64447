/* Lumen Edge (Tidewater Robotics): shared helpers of the demo kernels.  The 16-bit kernels
 * compute in float and convert with round-to-nearest-even, written out here so that the sources
 * build with compilers that lack _Float16 / __bf16. */
#ifndef LUMEN_COMMON_H
#define LUMEN_COMMON_H

#include <stdint.h>
#include <string.h>
#include "../ulpgauge_kernel.h"

#define LUMEN_EXPORT __attribute__((visibility("default")))

static inline uint32_t lumen_bits(float f) { uint32_t u; memcpy(&u, &f, 4); return u; }
static inline float lumen_float(uint32_t u) { float f; memcpy(&f, &u, 4); return f; }

/* binary16 -> binary32, exact. */
static inline float lumen_f16_to_f32(uint16_t h) {
    uint32_t sign = (uint32_t)(h & 0x8000u) << 16;
    uint32_t exp = (h >> 10) & 0x1fu, man = h & 0x3ffu;
    if (exp == 0x1f) return lumen_float(sign | 0x7f800000u | (man << 13));
    if (exp == 0) {
        float v = (float)man * 0x1p-24f;
        return (h & 0x8000u) ? -v : v;
    }
    return lumen_float(sign | ((exp + 112u) << 23) | (man << 13));
}

/* binary32 -> binary16, round to nearest even; overflow gives infinity. */
static inline uint16_t lumen_f32_to_f16(float f) {
    uint32_t u = lumen_bits(f);
    uint16_t sign = (uint16_t)((u >> 16) & 0x8000u);
    uint32_t a = u & 0x7fffffffu;
    if (a >= 0x7f800000u) return sign | (a > 0x7f800000u ? 0x7e00u : 0x7c00u);
    if (a >= 0x477ff000u) return sign | 0x7c00u; /* rounds to >= 65520 */
    if (a < 0x38800000u) {                         /* below 2^-14: subnormal or zero */
        float v = lumen_float(a) * 0x1p24f;         /* exact scaling; value in units of 2^-24 */
        uint32_t k = (uint32_t)v;
        float rest = v - (float)k;
        if (rest > 0.5f || (rest == 0.5f && (k & 1u))) k++;
        return sign | (uint16_t)k;
    }
    uint32_t r = a - 0x38000000u; /* rebias 127 -> 15 */
    uint32_t keep = r >> 13, drop = r & 0x1fffu;
    if (drop > 0x1000u || (drop == 0x1000u && (keep & 1u))) keep++;
    return sign | (uint16_t)keep;
}

static inline float lumen_bf16_to_f32(uint16_t b) { return lumen_float((uint32_t)b << 16); }

/* binary32 -> bfloat16, round to nearest even; NaN stays quiet NaN. */
static inline uint16_t lumen_f32_to_bf16(float f) {
    uint32_t u = lumen_bits(f);
    if ((u & 0x7fffffffu) > 0x7f800000u) return (uint16_t)((u >> 16) | 0x40u);
    u += 0x7fffu + ((u >> 16) & 1u);
    return (uint16_t)(u >> 16);
}

#endif
