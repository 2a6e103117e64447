/* Strided kernels with one stride fault each, for tests/strided_kernels.rs (Lumen Edge
 * scenario; invented for the tests).  Shape: void NAME(const float *x, ptrdiff_t sx, float *y,
 * ptrdiff_t sy, size_t n), x and y pointing at element 0. */
#include <math.h>
#include <stddef.h>
#include "lumen_common.h"

static inline float sig(float v) { return 1.0f / (1.0f + expf(-v)); }

/* Clears the element after each y element (a "padding" store), inside y's gaps. */
LUMEN_EXPORT void lumen_stride_gap_store(const float *x, ptrdiff_t sx, float *y, ptrdiff_t sy,
                                         size_t n) {
    for (size_t i = 0; i < n; i++) {
        y[(ptrdiff_t)i * sy] = sig(x[(ptrdiff_t)i * sx]);
        if (sy > 1 && i + 1 < n) y[(ptrdiff_t)i * sy + 1] = 0.0f;
    }
}

/* Takes the BLAS convention for negative strides (the pointer is the lowest address), so with
 * x pointing at element 0 it reads above the span. */
LUMEN_EXPORT void lumen_stride_blas_negative(const float *x, ptrdiff_t sx, float *y,
                                             ptrdiff_t sy, size_t n) {
    if (sx < 0) x += (ptrdiff_t)(n - 1) * -sx;
    if (sy < 0) y += (ptrdiff_t)(n - 1) * -sy;
    for (size_t i = 0; i < n; i++) y[(ptrdiff_t)i * sy] = sig(x[(ptrdiff_t)i * sx]);
}

/* Treats an x stride of 0 as "contiguous". */
LUMEN_EXPORT void lumen_stride_zero_is_one(const float *x, ptrdiff_t sx, float *y,
                                           ptrdiff_t sy, size_t n) {
    if (sx == 0) sx = 1;
    for (size_t i = 0; i < n; i++) y[(ptrdiff_t)i * sy] = sig(x[(ptrdiff_t)i * sx]);
}
