#!/usr/bin/env bash
# The floor benchmark (issue #18): in one run, a bare 2-thread C loop calling a binary32 kernel
# on every input, then the exhaustive `ulpgauge check` of the same kernel (release build), and
# their ratio.
#
#   benches/floor.sh --lib FILE --symbol NAME --function FUNC [--role forward|derivative]
#                    [--range LO,HI] [--param NAME=VALUE]... [--param-passing baked|trailing]
#                    [--threads N] [--reference auto|mpfr]
#   benches/floor.sh --libm FUNC [ROLE]     # the plain libm kernels of benches/floor/libm_kernels.c
#                                           # (all twenty one-input functions, both roles)
#   benches/floor.sh --demo FUNC            # the Lumen demo kernels (kernels-under-test)
#
# --range LO,HI (LO included, HI excluded) restricts both to one range, e.g. --range 1,2 for a
# quick run; without it all 2^32 patterns (a few minutes of the whole machine).  With
# --param-passing trailing the parameter values are passed as trailing floats, as ulpgauge does.
# Prints one line: function, role, symbol, range, inputs, floor s, check s, the check's CPU
# seconds (user + system, worker included), ratio, peak RSS of the check.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
work="${FLOOR_DIR:-$root/target/floor}"
mkdir -p "$work"
lib="" symbol="" function="" role="forward" range="" threads=2 passing="baked" reference="auto"
params=() extra=()
die() { echo "floor.sh: $*" >&2; exit 2; }
while [ $# -gt 0 ]; do
  case "$1" in
    --lib) lib="$2"; shift 2 ;;
    --symbol) symbol="$2"; shift 2 ;;
    --function) function="$2"; shift 2 ;;
    --role) role="$2"; shift 2 ;;
    --range) range="$2"; shift 2 ;;
    --param) params+=("$2"); shift 2 ;;
    --param-passing) passing="$2"; shift 2 ;;
    --threads) threads="$2"; shift 2 ;;
    --reference) reference="$2"; shift 2 ;;
    --libm)
      function="$2"; shift 2
      if [ $# -gt 0 ] && [[ "$1" != --* ]]; then role="$1"; shift; fi
      lib="$work/libfloor_libm.so"
      suffix=""; [ "$role" = derivative ] && suffix="_deriv"
      symbol="floor_${function//-/_}${suffix}_f32"
      # The libm SELU holds the binary32 roundings of lambda and alpha.
      [ "$function" = selu ] && extra+=(--param-rounding f32) ;;
    --demo)
      function="$2"; shift 2
      lib="$work/demo/liblumen_edge.so"
      symbol="lumen_${function}_f32"
      if [ "$function" = elu ]; then params+=("alpha=0.5"); passing="trailing"; fi ;;
    *) die "unknown argument '$1'" ;;
  esac
done
[ -n "$lib" ] && [ -n "$symbol" ] && [ -n "$function" ] || die "need --lib, --symbol and --function (or --libm/--demo FUNC)"
[[ "$role" =~ ^(forward|derivative)$ ]] || die "role must be forward or derivative, got '$role'"
[[ "$threads" =~ ^[1-9][0-9]*$ ]] || die "threads must be a positive integer, got '$threads'"

CC="${CC:-cc}"
# Build: the loop, the libm kernels, the demo kernels and ulpgauge itself (release).
"$CC" -O2 -o "$work/loop" "$root/benches/floor/loop.c" -ldl -lm -lpthread
"$CC" -O2 -fPIC -shared -fvisibility=hidden -o "$work/libfloor_libm.so" "$root/benches/floor/libm_kernels.c" -lm
if [[ "$lib" == "$work/demo/"* ]] && [ ! -f "$lib" ]; then
  "$root/kernels-under-test/build.sh" "$work/demo" >/dev/null
fi
[ -f "$lib" ] || die "no library $lib"
(cd "$root" && cargo build --release --quiet)
ulpgauge="$root/target/release/ulpgauge"

loop_args=("$lib" "$symbol" "$threads")
check_args=(check --lib "$lib" --symbol "$symbol" --function "$function" --format f32
            --role "$role" --sweep exhaustive --reference "$reference" --json "$work/check.json"
            ${extra[@]+"${extra[@]}"})
if [ -n "$range" ]; then
  lo="${range%,*}"; hi="${range#*,}"
  loop_args+=("$lo" "$hi")
  check_args+=(--range "$range")
fi
trailing=()
for p in ${params[@]+"${params[@]}"}; do
  check_args+=(--param "$p")
  trailing+=("${p#*=}")
done
if [ "$passing" = trailing ]; then
  check_args+=(--param-passing trailing)
  [ ${#trailing[@]} -gt 0 ] && loop_args+=(-- "${trailing[@]}")
fi

read -r floor_s inputs checksum < <("$work/loop" "${loop_args[@]}")
start=$(date +%s.%N)
set +e
/usr/bin/time -f "%M %U %S" -o "$work/rss" "$ulpgauge" "${check_args[@]}" >"$work/check.out" 2>&1
status=$?
set -e
end=$(date +%s.%N)
[ $status -le 1 ] || { cat "$work/check.out" >&2; die "check exited with $status"; }
read -r rss_kb user_s sys_s < <(tail -1 "$work/rss")
cpu_s=$(echo "$user_s + $sys_s" | bc -l)
check_s=$(echo "$end - $start" | bc -l)
printf '%-13s %-10s %-28s range=%-8s inputs=%-10s floor=%8.3fs check=%8.3fs cpu=%.1fs ratio=%6.2f rss=%dMB checksum=%s load=%s\n' \
  "$function" "$role" "$symbol" "${range:-all}" "$inputs" "$floor_s" "$check_s" "$cpu_s" \
  "$(echo "$check_s / $floor_s" | bc -l)" "$((rss_kb / 1024))" "$checksum" "$(cut -d' ' -f1 /proc/loadavg)"
