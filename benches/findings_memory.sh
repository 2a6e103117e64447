#!/usr/bin/env bash
# Peak memory, report size and terminal length of exhaustive binary32 checks, whatever the
# kernel does: the patchy stress kernel (NaN on 8 of every 16 patterns for |x| >= 2^70, 60.8 M
# runs) and a correct tanh. Figures are recorded in DEVELOPERS.md ("Findings at any scale").
#   benches/findings_memory.sh [OUT_DIR]        (RANGE=LO,HI narrows the sweep for a quick run)
set -euo pipefail
cd "$(dirname "$0")/.."
out="${1:-target/findings-memory}"
mkdir -p "$out"
cargo build --release --locked --quiet
bash kernels-under-test/build.sh >/dev/null
bin=target/release/ulpgauge
lib=kernels-under-test/build
range=()
[ -n "${RANGE:-}" ] && range=(--range "$RANGE")
run() { # run NAME LIBRARY SYMBOL FUNCTION
  local name="$1" library="$2" symbol="$3" function="$4" status=0
  /usr/bin/time -f "%e %M" -o "$out/$name.time" "$bin" check --lib "$library" --symbol "$symbol" \
    --function "$function" --format f32 --sweep exhaustive "${range[@]}" --no-progress \
    --json "$out/$name.json" > "$out/$name.txt" || status=$?
  read -r seconds kb < <(tail -n 1 "$out/$name.time")
  python3 - "$out/$name.json" "$name" "$status" "$seconds" "$kb" "$out/$name.txt" <<'PY'
import json, os, sys
path, name, status, seconds, kb, text = sys.argv[1:]
r = json.load(open(path))
lines = sum(1 for _ in open(text))
t = r["non_finite_total"]
print(f"{name}: exit {status}, {float(seconds):.1f} s, peak RSS {int(kb)/1024:.1f} MB, "
      f"JSON {os.path.getsize(path)/1024:.0f} KB, terminal {lines} lines, "
      f"non_finite_total runs {t['runs']:,} inputs {t['inputs']:,}, max_ulp {r['accuracy']['max_ulp']}")
PY
}
run patchy "$lib/liblumen_faulty.so" lumen_sigmoid_f32_patchy sigmoid
run tanh "$lib/liblumen_edge.so" lumen_tanh_f32 tanh
