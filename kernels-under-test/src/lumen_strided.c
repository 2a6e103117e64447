/* Lumen Edge (Tidewater Robotics): strided sigmoids for the sensor-fusion path, which applies
 * activations in place across interleaved channels (x[i*sx], y[i*sy]; x and y point at element
 * 0, negative strides walk down from there).
 *
 * lumen_sigmoid_f32_strided walks both arrays with pointers: correct for every stride.
 * lumen_sigmoid_f32_unit is its contiguous twin, the same formula over (x, y, n).
 * lumen_sigmoid_f32_strided_ob1 is the first version: unit strides take a plain loop, other
 * strides a loop unrolled by four whose remainder advances the x pointer before reading it, so
 * the last n % 4 elements get the sigmoid of the next x element (for the very last one, of
 * whatever lies one stride past the end).  The unit-stride path hides the bug from any test
 * that calls it contiguously. */
#include <math.h>
#include <stddef.h>
#include "lumen_common.h"

static inline float sigmoid1(float x) { return 1.0f / (1.0f + expf(-x)); }

LUMEN_EXPORT void lumen_sigmoid_f32_unit(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = sigmoid1(x[i]);
}

LUMEN_EXPORT void lumen_sigmoid_f32_strided(const float *x, ptrdiff_t sx, float *y,
                                            ptrdiff_t sy, size_t n) {
    for (size_t i = 0; i < n; i++, x += sx, y += sy) *y = sigmoid1(*x);
}

LUMEN_EXPORT void lumen_sigmoid_f32_strided_ob1(const float *x, ptrdiff_t sx, float *y,
                                                ptrdiff_t sy, size_t n) {
    if (sx == 1 && sy == 1) {
        for (size_t i = 0; i < n; i++) y[i] = sigmoid1(x[i]);
        return;
    }
    size_t i = 0;
    for (; i + 4 <= n; i += 4) {
        y[(ptrdiff_t)i * sy] = sigmoid1(x[(ptrdiff_t)i * sx]);
        y[(ptrdiff_t)(i + 1) * sy] = sigmoid1(x[(ptrdiff_t)(i + 1) * sx]);
        y[(ptrdiff_t)(i + 2) * sy] = sigmoid1(x[(ptrdiff_t)(i + 2) * sx]);
        y[(ptrdiff_t)(i + 3) * sy] = sigmoid1(x[(ptrdiff_t)(i + 3) * sx]);
    }
    const float *xp = x + (ptrdiff_t)i * sx;
    float *yp = y + (ptrdiff_t)i * sy;
    for (; i < n; i++) {
        xp += sx; /* bug: advanced before the read instead of after */
        *yp = sigmoid1(*xp);
        yp += sy;
    }
}
