#!/usr/bin/env bash
# The test command: installs what the build and the independent checks need, then runs every
# test (Rust unit and integration tests, the mpmath cross-check, the golden tables, the recorder).
set -euo pipefail
cd "$(dirname "$0")/.."
source tests/setup.sh
cargo build --release --locked
python3 tests/crosscheck/crosscheck.py --ulpgauge target/release/ulpgauge
python3 tests/crosscheck/crosscheck.py --ulpgauge target/release/ulpgauge --formats e4m3,e5m2,e4m3-sat,e5m2-sat
python3 tests/crosscheck/mixed.py --ulpgauge target/release/ulpgauge
python3 tests/crosscheck/gated.py --ulpgauge target/release/ulpgauge
python3 tests/recorder/test_recorder.py --ulpgauge target/release/ulpgauge
cargo test --release --locked
bash tests/reports/run.sh
