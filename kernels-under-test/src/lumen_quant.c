/* Lumen Edge (Tidewater Robotics): the int8 / uint8 activations of the quantized inference
 * path.  Codes are affine: x = S_in * (q - Z_in), y = f(x) / S_out + Z_out rounded to an integer
 * and clamped to the type.  The manifest lumen-edge-int8.toml carries each kernel's scales.
 *
 *   lumen_sigmoid_i8_table   S_in = 1/16, Z_in = 0, S_out = 1/256, Z_out = -128.  A 256-entry
 *                            table built on first use by "add one half and cast": the cast cuts
 *                            toward zero, so every negative code comes out one step high.
 *   lumen_sigmoid_u8_table   S_in = 1/16, Z_in = 128, S_out = 1/256, Z_out = 0.  The table the
 *                            firmware team rebuilt: double precision, rint, then clamp.
 *   lumen_relu6_i8_round     S_in = 0.05, Z_in = 0, S_out = 0.1, Z_out = -128: codes land on
 *                            exact halves, which C's round() sends away from zero. */
#include <math.h>
#include <stdatomic.h>
#include "lumen_common.h"

static int clamp_code(long v, long lo, long hi) { return (int)(v < lo ? lo : v > hi ? hi : v); }

static int8_t sigmoid_i8[256];
static atomic_int sigmoid_i8_ready;

static void build_sigmoid_i8(void) {
    for (int q = -128; q < 128; q++) {
        float x = (float)q * 0.0625f;
        float t = 256.0f / (1.0f + expf(-x)) - 128.0f;
        /* The bug: (int) truncates toward zero, so t + 0.5 rounds only positive t correctly. */
        int v = (int)(t + 0.5f);
        sigmoid_i8[(uint8_t)q] = (int8_t)clamp_code(v, -128, 127);
    }
}

LUMEN_EXPORT void lumen_sigmoid_i8_table(const int8_t *q, int8_t *y, size_t n) {
    if (!atomic_load(&sigmoid_i8_ready)) {
        build_sigmoid_i8(); /* idempotent: concurrent first calls write the same bytes */
        atomic_store(&sigmoid_i8_ready, 1);
    }
    for (size_t i = 0; i < n; i++) y[i] = sigmoid_i8[(uint8_t)q[i]];
}

static uint8_t sigmoid_u8[256];
static atomic_int sigmoid_u8_ready;

LUMEN_EXPORT void lumen_sigmoid_u8_table(const uint8_t *q, uint8_t *y, size_t n) {
    if (!atomic_load(&sigmoid_u8_ready)) {
        for (int c = 0; c < 256; c++) {
            double x = (c - 128) * 0.0625;
            double t = 256.0 / (1.0 + exp(-x));
            sigmoid_u8[c] = (uint8_t)clamp_code((long)rint(t), 0, 255);
        }
        atomic_store(&sigmoid_u8_ready, 1);
    }
    for (size_t i = 0; i < n; i++) y[i] = sigmoid_u8[q[i]];
}

LUMEN_EXPORT void lumen_relu6_i8_round(const int8_t *q, int8_t *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        /* In hundredths: x = 5q/100, relu6 clamps 5q to [0, 600]; y/0.1 = that / 10, exact. */
        long h = 5L * q[i];
        h = h < 0 ? 0 : h > 600 ? 600 : h;
        double t = (double)h / 10.0 - 128.0;
        y[i] = (int8_t)clamp_code(lround(t), -128, 127); /* ties away from zero */
    }
}
