#!/usr/bin/env bash
# The demo's HTML and JUnit reports, checked from outside: each page opened in headless
# Chromium (Debian's `chromium`, installed here when missing) and compared with the JSON
# report it was rendered from; each JUnit file read by two XML readers and counted against
# its report. Screenshots of every page go to $REPORTS_TEST_OUT (default target/report-pages).
set -euo pipefail
cd "$(dirname "$0")/../.."
out="${REPORTS_TEST_OUT:-target/report-pages}"
rm -rf "$out"
mkdir -p "$out"
if [ "$(id -u)" -eq 0 ]; then SUDO=""; else SUDO="sudo"; fi
if ! command -v chromium >/dev/null 2>&1; then
  $SUDO apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq chromium >/dev/null
fi
if ! python3 -c 'import websocket, junitparser' >/dev/null 2>&1; then
  python3 -m pip install --quiet --disable-pip-version-check -r tests/requirements.txt
fi
bin=target/release/ulpgauge
[ -x "$bin" ] || cargo build --release --locked
bash kernels-under-test/build.sh >/dev/null
source kernels-under-test/compilers.sh

run() { # ulpgauge with the statuses of findings (1) and crashes (3) allowed
  local status=0
  "$bin" "$@" || status=$?
  if [ "$status" -ne 0 ] && [ "$status" -ne 1 ] && [ "$status" -ne 3 ]; then
    echo "tests/reports: ulpgauge $* exited with $status" >&2
    exit 1
  fi
}
quiet=(--quiet --no-progress)
m=kernels-under-test/lumen-edge.toml
run check --manifest "$m" "${quiet[@]}" \
  --json "$out/lumen-edge.json" --html "$out/lumen-edge.html" --junit "$out/lumen-edge.xml"
run check --manifest kernels-under-test/lumen-edge-faulty.toml --timeout 1 "${quiet[@]}" \
  --json "$out/lumen-edge-faulty.json" --html "$out/lumen-edge-faulty.html" --junit "$out/lumen-edge-faulty.xml"
run check --lib kernels-under-test/build/liblumen_edge.so --symbol lumen_elu_f16 --function elu --format f16 \
  "${quiet[@]}" --json "$out/elu-f16.json" --html "$out/elu-f16.html" --junit "$out/elu-f16.xml"
run check --manifest kernels-under-test/lumen-edge-mixed.toml "${quiet[@]}" \
  --json "$out/lumen-edge-mixed.json" --html "$out/lumen-edge-mixed.html" --junit "$out/lumen-edge-mixed.xml"
run check --manifest kernels-under-test/lumen-edge-strided.toml "${quiet[@]}" \
  --json "$out/lumen-edge-strided.json" --html "$out/lumen-edge-strided.html" --junit "$out/lumen-edge-strided.xml"
run certify --spec kernels-under-test/specs/sigmoid-f16.toml --quiet --no-progress \
  --json "$out/certificate.json" --html "$out/certificate.html" --junit "$out/certificate.xml"
run check --manifest "$m" --sweep dense,edge --per-binade 8 "${quiet[@]}" --json "$out/candidate.json"
run compare reports/baseline-lumen-edge.json "$out/candidate.json" --changed-only \
  --json "$out/compare.json" --html "$out/compare.html" --junit "$out/compare.xml" >/dev/null
run matrix --manifest "$m" "${MATRIX_BUILDS[@]}" --sweep dense,edge --per-binade 8 --quiet \
  --work-dir "$out/matrix-builds" --json "$out/matrix.json" --html "$out/matrix.html" --junit "$out/matrix.xml"
for i in 1 2; do
  run check --manifest "$m" --sweep dense,edge --per-binade 8 --shard "$i/2" "${quiet[@]}" --json "$out/shard-$i.json"
done
run merge "$out/shard-1.json" "$out/shard-2.json" --quiet --json "$out/merged.json" --html "$out/merged.html"
run check --manifest kernels-under-test/lumen-edge-gated.toml "${quiet[@]}" \
  --json "$out/lumen-edge-gated.json" --html "$out/lumen-edge-gated.html" --junit "$out/lumen-edge-gated.xml"
for i in 1 2; do
  run check --lib kernels-under-test/build/liblumen_gated.so --symbol lumen_swiglu_f16 --function swiglu \
    --format f16 --range=-20,-19.5 --shard "$i/2" "${quiet[@]}" --json "$out/swiglu-shard-$i.json"
done
run merge "$out/swiglu-shard-1.json" "$out/swiglu-shard-2.json" --quiet \
  --json "$out/swiglu-merged.json" --html "$out/swiglu-merged.html"

python3 tests/reports/check_pages.py "$out/screenshots" \
  "check:$out/lumen-edge.html:$out/lumen-edge.json" \
  "check:$out/lumen-edge-faulty.html:$out/lumen-edge-faulty.json" \
  "check:$out/elu-f16.html:$out/elu-f16.json" \
  "check:$out/lumen-edge-mixed.html:$out/lumen-edge-mixed.json" \
  "check:$out/lumen-edge-strided.html:$out/lumen-edge-strided.json" \
  "certify:$out/certificate.html:$out/certificate.json" \
  "compare:$out/compare.html:$out/compare.json" \
  "matrix:$out/matrix.html:$out/matrix.json" \
  "check:$out/merged.html:$out/merged.json" \
  "check:$out/lumen-edge-gated.html:$out/lumen-edge-gated.json" \
  "check:$out/swiglu-merged.html:$out/swiglu-merged.json"
python3 tests/reports/check_junit.py \
  "check:$out/lumen-edge.xml:$out/lumen-edge.json" \
  "check:$out/lumen-edge-faulty.xml:$out/lumen-edge-faulty.json" \
  "check:$out/elu-f16.xml:$out/elu-f16.json" \
  "check:$out/lumen-edge-mixed.xml:$out/lumen-edge-mixed.json" \
  "check:$out/lumen-edge-strided.xml:$out/lumen-edge-strided.json" \
  "check:$out/lumen-edge-gated.xml:$out/lumen-edge-gated.json" \
  "certify:$out/certificate.xml:$out/certificate.json" \
  "compare:$out/compare.xml:$out/compare.json" \
  "matrix:$out/matrix.xml:$out/matrix.json"
python3 - "$out" <<'PY'
# The matrix compares at least two versions of gcc and two of clang.
import json, sys
m = json.load(open(sys.argv[1] + "/matrix.json"))
built = [b["cc"] for b in m["builds"] if b["status"] == "built"]
gcc = {c for c in built if c.startswith("gcc")}
clang = {c for c in built if c.startswith("clang")}
print(f"tests/reports: matrix built with {sorted(gcc | clang)}")
if len(gcc) < 2 or len(clang) < 2:
    sys.exit("tests/reports: the matrix needs two gcc and two clang versions")
PY
ls -l "$out"/*.html | awk '{print "tests/reports: " $5 " bytes  " $9}'
echo "tests/reports: every page and JUnit file passed"
