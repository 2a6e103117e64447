#!/usr/bin/env bash
# Builds the Lumen Edge demo kernels: ./build.sh [OUTPUT_DIR]   (default: kernels-under-test/build)
# CC and CFLAGS override the compiler and flags, so the same sources build with several of them:
#   CC=clang CFLAGS="-O3 -ffast-math" kernels-under-test/build.sh /tmp/lumen-clang
# The Rust kernel is built too when cargo is on PATH.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
out="${1:-$here/build}"
mkdir -p "$out"
out="$(cd "$out" && pwd)"
CC="${CC:-cc}"
CFLAGS="${CFLAGS:--O2}"
src="$here/src"
# shellcheck disable=SC2086  # CFLAGS is a list of flags
build() { # build NAME SOURCES...
  local name="$1"; shift
  "$CC" $CFLAGS -std=c11 -fPIC -shared -fvisibility=hidden -o "$out/lib$name.so" "$@" -lm
}
build lumen_edge "$src/lumen_scalar.c" "$src/lumen_simd.c" "$src/lumen_elu_f16.c" "$src/lumen_gelu_bf16.c" "$src/lumen_fp8.c" "$src/lumen_mixed.c"
build lumen_faulty "$src/lumen_faulty.c"
build lumen_fastmath "$src/lumen_fastmath.c"
build lumen_env "$src/lumen_env.c"
build lumen_strided "$src/lumen_strided.c"
build lumen_gated "$src/lumen_swiglu_f16.c" "$src/lumen_swiglu_wide.c"
build lumen_quant "$src/lumen_quant.c"
if command -v cargo >/dev/null 2>&1; then
  cargo build --quiet --release --offline --manifest-path "$here/rust-kernel/Cargo.toml" \
    --target-dir "$out/rust-target"
  cp "$out/rust-target/release/liblumen_edge_rs.so" "$out/liblumen_edge_rs.so"
fi
echo "built into $out"
