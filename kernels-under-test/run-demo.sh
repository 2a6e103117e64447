#!/usr/bin/env bash
# The README's main command: installs what the build needs, builds ulpgauge, and runs the main
# job on the bundled demo material, writing into reports/.
set -euo pipefail
cd "$(dirname "$0")/.."
source tests/setup.sh
cargo build --release --locked
bin=target/release/ulpgauge
mkdir -p reports
# Demo table: the correctly rounded values a Lumen Edge kernel author looks up first.
{
  printf '%-12s %-6s %-11s %-12s %-12s %s\n' function format role input rounded value
  while read -r fn fmt role x; do
    flag=""; [ "$role" = derivative ] && flag="--derivative"
    out=$("$bin" eval "$fn" "$x" --format "$fmt" $flag --json)
    bits=$(printf '%s' "$out" | python3 -c 'import json,sys; d=json.load(sys.stdin); print(d["rounded"]["bits"], d["rounded"]["value"])')
    printf '%-12s %-6s %-11s %-12s %s\n' "$fn" "$fmt" "$role" "$x" "$bits"
  done <<'TABLE'
sigmoid f32 forward 1
sigmoid f16 derivative 0
tanh bf16 forward 0.5
elu f16 forward -11.09
elu f16 forward 11.09
gelu f32 forward -10
gelu bf16 derivative -0.75
gelu-tanh f16 forward 1
swish f32 derivative -1.2785
hard-swish f16 forward 0x1a00
selu f16 forward 62368
softplus f32 forward -100
TABLE
} | tee reports/demo-eval.txt
