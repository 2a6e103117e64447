#!/usr/bin/env bash
# The exhaustive binary32 table of issue #18: for every one-input function of the catalog and
# both roles, the bare 2-thread C loop over all 2^32 inputs and the exhaustive `check` of the
# same plain libm kernel (benches/floor/libm_kernels.c), one after the other through
# benches/floor.sh; prints a Markdown table (seconds, the check's CPU seconds, ratio, peak RSS).  About 2-4 minutes of
# the whole machine per row, so an hour or two in all: run it on an otherwise idle machine.
#
#   benches/exhaustive_table.sh [--range LO,HI] [FUNCTION...]
#
# Benchmark only (never a timed test); record `uptime` beside any figure quoted.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
range=()
if [ "${1:-}" = --range ]; then range=(--range "$2"); shift 2; fi
functions=${*:-step sigmoid tanh relu leaky-relu elu swish silu gelu gelu-tanh softplus mish selu hard-sigmoid hard-swish relu6 celu log-sigmoid softsign}
echo "| function | role | C loop s | check s | check CPU s | ratio | check peak RSS | load after |"
echo "|---|---|---:|---:|---:|---:|---:|---|"
for f in $functions; do
  for role in forward derivative; do
    line=$("$root/benches/floor.sh" --libm "$f" "$role" ${range[@]+"${range[@]}"})
    floor=$(sed -n 's/.*floor= *\([0-9.]*\)s.*/\1/p' <<<"$line")
    check=$(sed -n 's/.*check= *\([0-9.]*\)s.*/\1/p' <<<"$line")
    cpu=$(sed -n 's/.* cpu=\([0-9.]*\)s.*/\1/p' <<<"$line")
    ratio=$(sed -n 's/.*ratio= *\([0-9.]*\).*/\1/p' <<<"$line")
    rss=$(sed -n 's/.*rss=\([0-9]*MB\).*/\1/p' <<<"$line")
    load=$(sed -n 's/.*load=\([0-9.]*\).*/\1/p' <<<"$line")
    echo "| $f | $role | $floor | $check | $cpu | $ratio | $rss | $load |"
  done
done
