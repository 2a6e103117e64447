/* Plain scalar libm kernels for the floor benchmark (benches/floor.sh): one loop per function,
 * binary32, the signature ulpgauge calls (void f(const float *x, float *y, size_t n)).  Parameters
 * are baked at their catalog defaults (elu and celu alpha = 1, leaky-relu alpha = 0.01, swish beta =
 * 1); SELU holds the binary32 roundings of its constants (check it with --param-rounding f32). */
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
static float softplusf(float v) { return v > 0.0f ? v + log1pf(expf(-v)) : log1pf(expf(v)); }
static const float SELU_L = 1.0507009873554804934f, SELU_A = 1.6732632423543772848f;
static const float GT_C = 0.7978845608028654f, GT_K = 0.044715f;
static float gelu_tanh_sf(float v) { return sigmoidf(2.0f * GT_C * (v + GT_K * v * v * v)); }
/* Derivatives as an author writes them: each libm value computed once (with errno semantics the
 * compiler may not merge repeated calls itself). */
static float sigmoid_deriv(float v) { float s = sigmoidf(v); return s * (1.0f - s); }
static float tanh_deriv(float v) { float t = tanhf(v); return 1.0f - t * t; }
static float swish_deriv(float v) { float s = sigmoidf(v); return s * (1.0f + v * (1.0f - s)); }
static float softsign_deriv(float v) { float d = 1.0f + fabsf(v); return 1.0f / (d * d); }
static float mish_deriv(float v) {
    float t = tanhf(softplusf(v));
    return t + v * (1.0f - t * t) * sigmoidf(v);
}
static float gelu_tanh_deriv(float v) {
    float s = gelu_tanh_sf(v);
    return s + 2.0f * v * GT_C * (1.0f + 3.0f * GT_K * v * v) * s * (1.0f - s);
}

KERNEL(floor_sigmoid_f32, sigmoidf(v))
KERNEL(floor_sigmoid_deriv_f32, sigmoid_deriv(v))
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
KERNEL(floor_softsign_deriv_f32, softsign_deriv(v))
KERNEL(floor_tanh_deriv_f32, tanh_deriv(v))
KERNEL(floor_elu_deriv_f32, v > 0.0f ? 1.0f : expf(v))
KERNEL(floor_swish_deriv_f32, swish_deriv(v))
KERNEL(floor_silu_f32, v * sigmoidf(v))
KERNEL(floor_silu_deriv_f32, swish_deriv(v))
KERNEL(floor_gelu_deriv_f32, 0.5f * erfcf(-v * 0.70710678f) + v * 0.39894228f * expf(-0.5f * v * v))
KERNEL(floor_softplus_f32, softplusf(v))
KERNEL(floor_softplus_deriv_f32, sigmoidf(v))
KERNEL(floor_log_sigmoid_f32, -softplusf(-v))
KERNEL(floor_log_sigmoid_deriv_f32, sigmoidf(-v))
KERNEL(floor_mish_f32, v * tanhf(softplusf(v)))
KERNEL(floor_mish_deriv_f32, mish_deriv(v))
KERNEL(floor_selu_f32, v > 0.0f ? SELU_L * v : SELU_L * SELU_A * expm1f(v))
KERNEL(floor_selu_deriv_f32, v >= 0.0f ? SELU_L : SELU_L * SELU_A * expf(v))
KERNEL(floor_celu_f32, v > 0.0f ? v : expm1f(v))
KERNEL(floor_celu_deriv_f32, v > 0.0f ? 1.0f : expf(v))
KERNEL(floor_gelu_tanh_f32, v * gelu_tanh_sf(v))
KERNEL(floor_gelu_tanh_deriv_f32, gelu_tanh_deriv(v))
