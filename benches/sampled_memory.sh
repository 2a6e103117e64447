#!/usr/bin/env bash
# Wall time and peak RSS of large sampled binary32 checks: a random sweep of 10^8 points and a
# dense sweep of 65,535 significands per binade (33.4 M points), on a correct tanh and on the
# patchy stress kernel (NaN on 8 of every 16 patterns for |x| >= 2^70, so the gap scans next to
# its non-finite runs are exercised). Figures are recorded in DEVELOPERS.md ("Findings at any
# scale"); nothing here is asserted.
#   benches/sampled_memory.sh [OUT_DIR]     (POINTS=N and PER_BINADE=K for a quicker run)
set -euo pipefail
cd "$(dirname "$0")/.."
out="${1:-target/sampled-memory}"
mkdir -p "$out"
cargo build --release --locked --quiet
bash kernels-under-test/build.sh >/dev/null
bin=target/release/ulpgauge
lib=kernels-under-test/build
points="${POINTS:-100000000}"
per_binade="${PER_BINADE:-65535}"
run() { # run NAME LIBRARY SYMBOL FUNCTION SWEEP-OPTIONS...
  local name="$1" library="$2" symbol="$3" function="$4" status=0
  shift 4
  /usr/bin/time -f "%e %M" -o "$out/$name.time" "$bin" check --lib "$library" --symbol "$symbol" \
    --function "$function" --format f32 "$@" --no-progress \
    --json "$out/$name.json" > "$out/$name.txt" || status=$?
  read -r seconds kb < <(tail -n 1 "$out/$name.time")
  python3 - "$out/$name.json" "$name" "$status" "$seconds" "$kb" <<'PY'
import json, sys
path, name, status, seconds, kb = sys.argv[1:]
r = json.load(open(path))
t = r["non_finite_total"]
print(f"{name}: exit {status}, {float(seconds):.1f} s, peak RSS {int(kb)/1024:.1f} MB, "
      f"{r['accuracy']['points']:,} points ({r['sweep']['coverage']}), "
      f"non-finite runs {t['runs']:,} over {t['inputs']:,} inputs")
PY
}
run random-tanh "$lib/liblumen_edge.so" lumen_tanh_f32 tanh --sweep random --points "$points"
run dense-tanh "$lib/liblumen_edge.so" lumen_tanh_f32 tanh --sweep dense --per-binade "$per_binade"
run random-patchy "$lib/liblumen_faulty.so" lumen_sigmoid_f32_patchy sigmoid --sweep random \
  --points "$points" --allow-non-finite
run dense-patchy "$lib/liblumen_faulty.so" lumen_sigmoid_f32_patchy sigmoid --sweep dense \
  --per-binade "$per_binade" --allow-non-finite
