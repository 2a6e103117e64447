/* Plain scalar libm kernels for the floor benchmark (benches/floor.sh): one loop per function,
 * binary32, the signature ulpgauge calls (void f(const float *x, float *y, size_t n)).  Parameters
 * are baked at their catalog defaults (elu alpha = 1, leaky-relu alpha = 0.01). */
#include <math.h>
#include <stddef.h>

#define EXPORT __attribute__((visibility("default")))
#define KERNEL(name, expr)                                              \
    EXPORT void name(const float *x, float *y, size_t n) {             \
        for (size_t i = 0; i < n; i++) {                                \
            float v = x[i];                                             \
            y[i] = (expr);                                              \
        }                                                               \
    }

static float sigmoidf(float v) { return 1.0f / (1.0f + expf(-v)); }

KERNEL(floor_sigmoid_f32, sigmoidf(v))
KERNEL(floor_sigmoid_deriv_f32, sigmoidf(v) * (1.0f - sigmoidf(v)))
KERNEL(floor_tanh_f32, tanhf(v))
KERNEL(floor_elu_f32, v > 0.0f ? v : expm1f(v))
KERNEL(floor_swish_f32, v * sigmoidf(v))
KERNEL(floor_gelu_f32, 0.5f * v * erfcf(-v * 0.70710678f))
KERNEL(floor_step_f32, v >= 0.0f ? 1.0f : 0.0f)
KERNEL(floor_step_deriv_f32, 0.0f * v)
KERNEL(floor_relu_f32, v > 0.0f ? v : 0.0f)
KERNEL(floor_relu_deriv_f32, v >= 0.0f ? 1.0f : 0.0f)
KERNEL(floor_leaky_relu_f32, v >= 0.0f ? v : 0.01f * v)
KERNEL(floor_leaky_relu_deriv_f32, v >= 0.0f ? 1.0f : 0.01f)
KERNEL(floor_relu6_f32, fminf(fmaxf(v, 0.0f), 6.0f))
KERNEL(floor_relu6_deriv_f32, v >= 0.0f && v < 6.0f ? 1.0f : 0.0f)
KERNEL(floor_hard_sigmoid_f32, fminf(fmaxf(v + 3.0f, 0.0f), 6.0f) / 6.0f)
KERNEL(floor_hard_sigmoid_deriv_f32, v >= -3.0f && v < 3.0f ? 1.0f / 6.0f : 0.0f)
KERNEL(floor_hard_swish_f32, v * fminf(fmaxf(v + 3.0f, 0.0f), 6.0f) / 6.0f)
KERNEL(floor_hard_swish_deriv_f32, v < -3.0f ? 0.0f : v >= 3.0f ? 1.0f : (2.0f * v + 3.0f) / 6.0f)
KERNEL(floor_softsign_f32, v / (1.0f + fabsf(v)))
KERNEL(floor_softsign_deriv_f32, 1.0f / ((1.0f + fabsf(v)) * (1.0f + fabsf(v))))
