#!/usr/bin/env bash
# The README's main command: installs what the build needs, builds ulpgauge and the Lumen Edge
# demo kernels, checks every one of them (JSON, CSV and SVG reports into reports/), certifies
# two of them, compares this build with the committed baseline and runs the compiler matrix.
# Findings are expected (several demo kernels are faulty on purpose), so ulpgauge's exit
# statuses 1 (a finding failed) and 3 (a kernel crashed or hung) do not stop the script.
set -euo pipefail
cd "$(dirname "$0")/.."
source tests/setup.sh
source kernels-under-test/compilers.sh
cargo build --release --locked
bash kernels-under-test/build.sh
bin=target/release/ulpgauge
mkdir -p reports

run() {
  local status=0
  "$bin" "$@" || status=$?
  if [ "$status" -ne 0 ] && [ "$status" -ne 1 ] && [ "$status" -ne 3 ]; then
    echo "run-demo: ulpgauge $* exited with $status" >&2
    exit "$status"
  fi
}

echo "== The shipped Lumen Edge kernels (kernels-under-test/lumen-edge.toml)"
run check --manifest kernels-under-test/lumen-edge.toml --html reports/lumen-edge.html \
  --json reports/lumen-edge.json --csv reports/lumen-edge.csv --plot reports/lumen-edge.svg \
  --junit reports/lumen-edge.xml

echo
echo "== Where does the blended f16 ELU overflow?"
run check --lib kernels-under-test/build/liblumen_edge.so --symbol lumen_elu_f16 \
  --function elu --format f16 \
  --json reports/elu-f16.json --csv reports/elu-f16.csv --plot reports/elu-f16.svg --html reports/elu-f16.html

echo
echo "== The hand-written SIMD sigmoid, exhaustively over every binary32 in [1, 2)"
run check --lib kernels-under-test/build/liblumen_edge.so --symbol lumen_sigmoid_f32_simd \
  --function sigmoid --format f32 --sweep exhaustive --range=1,2 \
  --json reports/sigmoid-f32-simd.json --csv reports/sigmoid-f32-simd.csv --plot reports/sigmoid-f32-simd.svg

echo
echo "== Kernels with one classic fault each (kernels-under-test/lumen-edge-faulty.toml)"
run check --manifest kernels-under-test/lumen-edge-faulty.toml --timeout 1 \
  --json reports/lumen-edge-faulty.json --csv reports/lumen-edge-faulty.csv --plot reports/lumen-edge-faulty.svg \
  --html reports/lumen-edge-faulty.html --junit reports/lumen-edge-faulty.xml
echo
echo "== Where the kernels run: the caller's FP environment and dispatch variants (kernels-under-test/lumen-edge-env.toml)"
run check --manifest kernels-under-test/lumen-edge-env.toml \
  --json reports/lumen-edge-env.json --junit reports/lumen-edge-env.xml --html reports/lumen-edge-env.html
echo
echo "== Strided kernels: y[i*sy] = f(x[i*sx]) (kernels-under-test/lumen-edge-strided.toml)"
run check --manifest kernels-under-test/lumen-edge-strided.toml \
  --json reports/lumen-edge-strided.json --junit reports/lumen-edge-strided.xml --html reports/lumen-edge-strided.html
echo
echo "== The dispatching SiLU with FMA hidden from glibc, then shown (--cpu-mask)"
run check --lib kernels-under-test/build/liblumen_env.so --symbol lumen_silu_f32 --function silu \
  --format f32 --cpu-mask=-FMA --cpu-mask=+FMA --json reports/silu-f32-cpu-mask.json
echo
echo "== Gated SwiGLU kernels over pairs (a, b): the binary16 one overflows in its product (kernels-under-test/lumen-edge-gated.toml)"
run check --manifest kernels-under-test/lumen-edge-gated.toml --json reports/lumen-edge-gated.json
echo
echo "== The 8-bit path: OCP FP8 kernels, exhaustively, and a bfloat16 cast that truncates"
run check --manifest kernels-under-test/lumen-edge-8bit.toml \
  --json reports/lumen-edge-8bit.json --html reports/lumen-edge-8bit.html
echo
echo "== The quantized path: int8/uint8 table kernels, all 256 codes (kernels-under-test/lumen-edge-int8.toml)"
run check --manifest kernels-under-test/lumen-edge-int8.toml \
  --json reports/lumen-edge-int8.json --csv reports/lumen-edge-int8.csv
echo
echo "== Activations fused with a cast: input and output formats differ (kernels-under-test/lumen-edge-mixed.toml)"
run check --manifest kernels-under-test/lumen-edge-mixed.toml \
  --json reports/lumen-edge-mixed.json --html reports/lumen-edge-mixed.html
echo
echo "== Certificates (kernels-under-test/specs/)"
run certify --spec kernels-under-test/specs/sigmoid-f16.toml --json reports/certificate-sigmoid-f16.json \
  --html reports/certificate-sigmoid-f16.html
run certify --spec kernels-under-test/specs/sigmoid-f32-simd.toml --json reports/certificate-sigmoid-f32-simd.json
run certify --spec kernels-under-test/specs/softsign-f32-rcp.toml --json reports/certificate-softsign-f32-rcp.json

echo
echo "== This build against the committed baseline"
run check --manifest kernels-under-test/lumen-edge.toml --sweep dense,edge --per-binade 8 \
  --quiet --json target/demo-candidate.json
run compare reports/baseline-lumen-edge.json target/demo-candidate.json --changed-only \
  --html reports/compare-lumen-edge.html

echo
echo "== Compiler matrix: two versions of gcc and of clang, from the distribution (compilers.sh)"
run matrix --manifest kernels-under-test/lumen-edge.toml "${MATRIX_BUILDS[@]}" \
  --sweep dense,edge --per-binade 8 --csv reports/matrix-lumen-edge.csv \
  --json reports/matrix-lumen-edge.json --html reports/matrix-lumen-edge.html

echo
echo "Reports written to reports/; open reports/lumen-edge.html in any browser (it works offline)."
