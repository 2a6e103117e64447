#!/usr/bin/env bash
# Exhaustive binary32 `check` over [1, 2) (2^23 inputs) of scalar kernels built on the C
# library's expf/log1pf/tanhf, forward and derivative, for sigmoid and the exp/log-based
# catalog functions; prints wall seconds per run and the ratio to the sigmoid forward run.
# Usage: bash benches/libm_range_check.sh [REFERENCE (auto|mpfr)] [FUNCTION...]
# (FUNCTION selu-published: SELU against its published decimal constants.)
# Env RANGE=LO,HI replaces [1, 2) (e.g. across a fast-path band edge); env REPORTS=DIR keeps
# each JSON report as DIR/FUNCTION-ROLE-REFERENCE.json, to compare `auto` with `mpfr` runs.
# Benchmark only (never a timed test); note `uptime` beside any figure recorded.
set -euo pipefail
cd "$(dirname "$0")/.."
reference=${1:-auto}
range=${RANGE:-1,2}
shift || true
bin=target/release/ulpgauge
[ -x "$bin" ] || cargo build --release
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
cat > "$dir/k.c" <<'C'
#include <math.h>
#include <stddef.h>
#define LOOP(name, expr) \
  void name(const float *x, float *y, size_t n) { for (size_t i = 0; i < n; i++) { float v = x[i]; y[i] = (expr); } }
static float sig(float v) { return 1.0f / (1.0f + expf(-v)); }
static float sp(float v) { return v > 0 ? v + log1pf(expf(-v)) : log1pf(expf(v)); }
static const float L = 1.0507009873554804934f, A = 1.6732632423543772848f;
static const float C = 0.7978845608028654f, K = 0.044715f;
static float gu(float v) { return C * (v + K * v * v * v); }
LOOP(k_sigmoid_f, sig(v))
LOOP(k_sigmoid_d, sig(v) * (1.0f - sig(v)))
LOOP(k_softplus_f, sp(v))
LOOP(k_softplus_d, sig(v))
LOOP(k_log_sigmoid_f, -sp(-v))
LOOP(k_log_sigmoid_d, sig(-v))
LOOP(k_mish_f, v * tanhf(sp(v)))
LOOP(k_mish_d, tanhf(sp(v)) + v * (1.0f - tanhf(sp(v)) * tanhf(sp(v))) * sig(v))
LOOP(k_selu_f, v > 0 ? L * v : L * A * expm1f(v))
LOOP(k_selu_d, v >= 0 ? L : L * A * expf(v))
LOOP(k_celu_f, v > 0 ? v : expm1f(v))
LOOP(k_celu_d, v > 0 ? 1.0f : expf(v))
LOOP(k_gelu_tanh_f, v * sig(2.0f * gu(v)))
LOOP(k_gelu_tanh_d, sig(2.0f * gu(v)) + 2.0f * v * C * (1.0f + 3.0f * K * v * v) * sig(2.0f * gu(v)) * (1.0f - sig(2.0f * gu(v))))
C
cc -O2 -fPIC -shared -o "$dir/libk.so" "$dir/k.c" -lm
functions=${*:-sigmoid softplus log-sigmoid mish selu celu gelu-tanh}
echo "reference=$reference  range=$range  $(uptime)"
printf '%-12s %-10s %8s %7s\n' function role seconds ratio
base=""
for f in $functions; do
  for role in forward derivative; do
    # selu-published: the same kernel measured against the published decimal constants
    # (the double-word fast path) instead of their binary32 roundings.
    fn=${f%-published}
    sym="k_${fn//-/_}_${role:0:1}"
    extra=()
    # SELU's constants are decimals; the kernel holds their binary32 roundings.
    [ "$f" = selu ] && extra=(--param-rounding f32)
    start=$(date +%s.%N)
    "$bin" check --lib "$dir/libk.so" --symbol "$sym" --function "$fn" --format f32 \
      --role "$role" --sweep exhaustive --range "$range" --reference "$reference" \
      --allow-non-finite "${extra[@]}" --json "$dir/r.json" >/dev/null 2>"$dir/err" && rc=0 || rc=$?
    end=$(date +%s.%N)
    # 0 clean, 1 a finding failed (still a full measurement); anything else is no figure.
    [ "$rc" -le 1 ] || { echo "$f $role: exit $rc: $(head -c 300 "$dir/err")"; continue; }
    [ -n "${REPORTS:-}" ] && cp "$dir/r.json" "$REPORTS/$f-$role-$reference.json"
    s=$(echo "$end - $start" | bc -l)
    [ -z "$base" ] && base=$s
    printf '%-12s %-10s %8.2f %7.2f\n' "$f" "$role" "$s" "$(echo "$s / $base" | bc -l)"
  done
done
