#!/usr/bin/env bash
# Benchmark, not a test: builds the release `turnover` and runs
# tests/bench/bench.py, which times Turnover and SciPy's curve_fit on the
# same invented data in the same run and prints their ratios.
set -euo pipefail
ROOT="$(cd "$(dirname "$0")/../.." && pwd)"
cd "$ROOT"
cargo build --release -p turnover-cli
cargo build --release -p turnover-core --example fit_timing
TURNOVER_BIN="$ROOT/target/release/turnover" FIT_TIMING_BIN="$ROOT/target/release/examples/fit_timing" python3 tests/bench/bench.py
# The page: start-up, a 100,000-row table, the WebAssembly against native.
"$ROOT/build.sh" >/dev/null
node tests/bench/page.mjs "$ROOT/dist/turnover.html" "$ROOT/target/release/turnover"
