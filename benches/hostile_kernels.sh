#!/usr/bin/env bash
# Wall time, peak RSS of ulpgauge, exit status and crash verdict of `check` on every kernel of
# the hostile catalog (tests/hostile/lumen_hostile.c), default options (dense + edge f32 sweep,
# --timeout 10, --kernel-memory 4G) unless the case says otherwise.  Prints a Markdown table for
# DEVELOPERS.md ("Hostile kernels"); note `uptime` beside it.
#   benches/hostile_kernels.sh [OUT_DIR]        (ONLY=SUBSTRING runs the matching cases)
set -euo pipefail
cd "$(dirname "$0")/.."
out="${1:-target/hostile-kernels}"
mkdir -p "$out"
cargo build --release --locked --quiet
bash kernels-under-test/build.sh "$out/demo" >/dev/null
cc -O1 -std=c11 -fPIC -shared -fvisibility=hidden -Ikernels-under-test/src \
  -o "$out/liblumen_hostile.so" tests/hostile/lumen_hostile.c -lm
bin=target/release/ulpgauge
uptime
echo
echo "| kernel | options | wall time | peak RSS | exit | verdict |"
echo "|---|---|---:|---:|---:|---|"
case_() { # case_ LIBRARY SYMBOL [CHECK OPTIONS...]
  local library="$1" symbol="$2" status=0
  shift 2
  [ -n "${ONLY:-}" ] && [[ "$symbol $*" != *"$ONLY"* ]] && return 0
  rm -f "$out/$symbol.json"
  /usr/bin/time -f "%e %M" -o "$out/$symbol.time" "$bin" check --lib "$library" \
    --symbol "$symbol" --function sigmoid --format f32 --quiet --no-progress \
    --json "$out/$symbol.json" "$@" > /dev/null 2> "$out/$symbol.err" || status=$?
  read -r seconds kb < <(tail -n 1 "$out/$symbol.time")
  python3 - "$out/$symbol.json" "$symbol" "$status" "$seconds" "$kb" "$out/$symbol.err" "$*" <<'PY'
import json, os, sys
path, symbol, status, seconds, kb, err, options = sys.argv[1:]
if os.path.exists(path):
    r = json.load(open(path))
    crash = r.get("crash")
    verdict = "no crash" if crash is None else f"{crash['signal'][:110]} at {crash['input']['bits']} ({crash['count']} records)"
    failed = [h["check"] for h in r["hygiene"] if not h["passed"]]
    if failed and crash is None:
        verdict += "; hygiene failed: " + ", ".join(failed)
else:
    verdict = "no report: " + open(err).read().strip()[:110]
print(f"| `{symbol}` | {options or 'defaults'} | {float(seconds):.2f} s | {int(kb)/1024:.0f} MB | {status} | {verdict} |")
PY
}
h="$out/liblumen_hostile.so"
case_ "$h" lumen_sigmoid_f32_lut
case_ "$h" lumen_sigmoid_f32_uncalibrated
case_ "$h" lumen_sigmoid_f32_dma_wait
case_ "$h" lumen_sigmoid_f32_negative_crash --sweep random --points 4000
case_ "$h" lumen_sigmoid_f32_forger
case_ "$h" lumen_sigmoid_f32_forger_at_two
case_ "$h" lumen_sigmoid_f32_console_hook
case_ "$h" lumen_sigmoid_f32_telemetry
case_ "$h" lumen_sigmoid_f32_daemon
case_ "$h" lumen_sigmoid_f32_model_cache
case_ "$h" lumen_sigmoid_f32_model_slab
case_ "$h" lumen_sigmoid_f32_paced --sweep random --points 2000
case_ "$h" lumen_sigmoid_f32_stall_at_one
case_ "$h" lumen_sigmoid_f32_third_call
case_ "$h" lumen_sigmoid_f32_self_signal
case_ "$h" lumen_sigmoid_f32_wild_pointer
case_ "$h" lumen_sigmoid_f32_wild_pointer --stop-on-crash
case_ "$h" lumen_sigmoid_f32_chatty
case_ "$out/demo/liblumen_faulty.so" lumen_sigmoid_f32_hang
