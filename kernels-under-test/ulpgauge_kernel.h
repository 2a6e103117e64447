/*
 * ulpgauge_kernel.h — the C ABI ulpgauge calls.
 *
 * A kernel is an exported C function with one of these shapes.  T is `float` for f32,
 * `uint16_t` (the raw bit pattern) for f16 and bf16, and `uint8_t` (the raw bit pattern) for the
 * OCP FP8 formats e4m3 and e5m2 (OFP8 v1.0: E4M3 has no infinities and one NaN per sign,
 * S.1111.111; out-of-range results follow --fp8-overflow, NaN/inf by default or saturating).
 * For the 8-bit affine-quantized formats i8 and u8, T is `int8_t` or `uint8_t` (the code q
 * itself; x = S_in*(q - Z_in), the expected code clamp(RNE(f(x)/S_out + Z_out))), forward and
 * derivative roles only, always called on all 256 codes.  ulpgauge never passes overlapping buffers
 * unless the manifest declares `in-place = true`, in which case it may also call with y == x.
 *
 *   forward:     void NAME(const T *x, T *y, size_t n);              y[i] = f(x[i])
 *   derivative:  void NAME(const T *x, T *y, size_t n);              y[i] = f'(x[i])
 *   gradient:    void NAME(const T *x, const T *g, T *dx, size_t n); dx[i] = g[i] * f'(x[i])
 *   gradient from the forward output (sigmoid, tanh, elu):
 *                void NAME(const T *y, const T *g, T *dx, size_t n); dx[i] = g[i] * h(y[i])
 *                where h(f(x)) = f'(x).
 *
 * Mixed formats (check --input-format F --output-format G, or input-format/output-format in a
 * manifest): the types follow each side, x and g of F's type, y and dx of G's, e.g.
 *   void NAME(const uint16_t *x, float *y, size_t n);                bf16 in, f32 out
 *   void NAME(const float *x, uint16_t *y, size_t n);                f32 in, bf16 out
 * Strided kernels (signature = "strided" in the manifest, --signature strided), forward and
 * derivative roles: element strides, negative allowed; x and y point at element 0, element i is
 * x[i*sx] (so with sx < 0 the array lies below x), and sx may be 0 (every y is f(x[0])):
 *   strided:     void NAME(const T *x, ptrdiff_t sx, T *y, ptrdiff_t sy, size_t n);
 *                y[i*sy] = f(x[i*sx]); nothing between y's elements may be written.
 *
 * Parameters (alpha, beta) are either baked into the kernel or passed as trailing `float`
 * arguments, in the catalog's order for the function (`ulpgauge functions` lists it):
 *   void NAME(const T *x, T *y, size_t n, float alpha);
 *
 * What ulpgauge checks besides accuracy: the output of an element does not depend on n or on its
 * position; any element-aligned buffer address works; nothing is written outside y[0..n); x is
 * not written; the FP control state (MXCSR) is left as found, also at load time; repeated and
 * concurrent calls give identical results (unless declared not thread-safe).
 *
 * Loading a library runs its code: test only kernels you trust.  ulpgauge runs kernels in a
 * separate worker process so that a crash or hang does not take it down, but that worker is not
 * a sandbox.
 */
#ifndef ULPGAUGE_KERNEL_H
#define ULPGAUGE_KERNEL_H

#include <stddef.h>
#include <stdint.h>

#ifdef __cplusplus
extern "C" {
#endif

typedef void (*ulpgauge_f32_kernel)(const float *x, float *y, size_t n);
typedef void (*ulpgauge_u16_kernel)(const uint16_t *x, uint16_t *y, size_t n);
typedef void (*ulpgauge_f32_gradient)(const float *x, const float *g, float *dx, size_t n);
typedef void (*ulpgauge_u16_gradient)(const uint16_t *x, const uint16_t *g, uint16_t *dx,
                                      size_t n);
typedef void (*ulpgauge_u8_kernel)(const uint8_t *x, uint8_t *y, size_t n);
typedef void (*ulpgauge_u8_gradient)(const uint8_t *x, const uint8_t *g, uint8_t *dx, size_t n);
typedef void (*ulpgauge_i8_quantized)(const int8_t *q, int8_t *y, size_t n);
typedef void (*ulpgauge_u8_quantized)(const uint8_t *q, uint8_t *y, size_t n);
/* Mixed formats, a few of the pairs: input type, then output type. */
typedef void (*ulpgauge_u16_f32_kernel)(const uint16_t *x, float *y, size_t n);
typedef void (*ulpgauge_f32_u16_kernel)(const float *x, uint16_t *y, size_t n);
typedef void (*ulpgauge_u16_u8_kernel)(const uint16_t *x, uint8_t *y, size_t n);
typedef void (*ulpgauge_f32_u8_kernel)(const float *x, uint8_t *y, size_t n);
typedef void (*ulpgauge_f32_strided)(const float *x, ptrdiff_t sx, float *y, ptrdiff_t sy,
                                     size_t n);
typedef void (*ulpgauge_u16_strided)(const uint16_t *x, ptrdiff_t sx, uint16_t *y, ptrdiff_t sy,
                                     size_t n);
typedef void (*ulpgauge_u8_strided)(const uint8_t *x, ptrdiff_t sx, uint8_t *y, ptrdiff_t sy,
                                    size_t n);

#ifdef __cplusplus
}
#endif

#endif
