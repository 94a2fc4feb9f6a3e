#!/usr/bin/env bash
# Turnover's build and test entry point.
#
#   ./build.sh          install what is missing, build dist/turnover.html, print its path
#   ./build.sh test     build, then run every test: cargo tests (unit, reference
#                       checks against NIST StRD and published data), the SciPy
#                       cross-check and the browser tests in headless Chromium
#
# Everything it installs comes from the package registries by name: the
# wasm32 target (rustup), wasm-bindgen-cli at the version in Cargo.lock
# (cargo), Debian's chromium (apt), Python and npm packages from the
# committed requirement and lock files. Nothing downloads a browser.
set -euo pipefail
cd "$(dirname "$0")"
ROOT="$(pwd)"
OUT="$ROOT/dist/turnover.html"
# The page's size budget. It was 1,000,000 bytes until the page gained the
# many-curves section, the further questions (set comparison, two
# substrates, pH, temperature) and time-dependent inhibition: their core
# code took the gzip-compressed WebAssembly from about 450 kB to 550 kB.
# 1,200,000 bytes keeps the file small enough to e-mail and to open at
# once (start-up is measured by `./build.sh bench`); growth past it needs
# a decision, not a silent bump.
SIZE_BUDGET=1200000

say() { printf '\n== %s\n' "$*"; }

ensure_wasm_target() {
  if ! rustup target list --installed | grep -qx wasm32-unknown-unknown; then
    say "installing the wasm32-unknown-unknown target"
    rustup target add wasm32-unknown-unknown
  fi
}

locked_version() {
  # The version of package $1 in Cargo.lock.
  awk -v name="$1" '$0 == "name = \"" name "\"" { getline; gsub(/version = |"/, ""); print; exit }' Cargo.lock
}

ensure_wasm_bindgen() {
  local want have
  want="$(locked_version wasm-bindgen)"
  if [ -z "$want" ]; then
    cargo generate-lockfile
    want="$(locked_version wasm-bindgen)"
  fi
  have="$(wasm-bindgen --version 2>/dev/null | awk '{print $2}' || true)"
  if [ "$have" != "$want" ]; then
    say "installing wasm-bindgen-cli $want (found '${have:-none}')"
    # --locked pins the tool's own dependencies; when a pinned one is no
    # longer served by the registry, fall back to a fresh resolution.
    cargo install wasm-bindgen-cli --version "$want" --locked \
      || cargo install wasm-bindgen-cli --version "$want"
  fi
}

build_page() {
  ensure_wasm_target
  ensure_wasm_bindgen
  say "building the WebAssembly core"
  cargo build --profile page --target wasm32-unknown-unknown -p turnover-wasm
  rm -rf target/pkg
  # The name and producers sections only help debuggers and stack traces;
  # without them the gzip-compressed binary is about 76 kB smaller.
  wasm-bindgen --target no-modules --no-typescript --remove-name-section --remove-producers-section --out-dir target/pkg \
    target/wasm32-unknown-unknown/page/turnover_wasm.wasm
  say "assembling the single-file page"
  node www/assemble.mjs target/pkg "$OUT"
  local size
  size=$(wc -c < "$OUT")
  if [ "$size" -gt "$SIZE_BUDGET" ]; then
    echo "dist/turnover.html is $size bytes, over the budget of $SIZE_BUDGET" >&2
    exit 1
  fi
}

# The page again with the test-only export `panicForTest` (feature
# test-hooks), for the browser test of recovery from an internal error.
# Written to target/, never to dist/.
build_test_hooks_page() {
  say "building the page with its test hooks (target/turnover-test-hooks.html)"
  cargo build --profile page --target wasm32-unknown-unknown -p turnover-wasm --features test-hooks
  rm -rf target/pkg-test
  wasm-bindgen --target no-modules --no-typescript --remove-name-section --remove-producers-section --out-dir target/pkg-test \
    target/wasm32-unknown-unknown/page/turnover_wasm.wasm
  node www/assemble.mjs target/pkg-test target/turnover-test-hooks.html
}

ensure_chromium() {
  if [ ! -x /usr/bin/chromium ]; then
    say "installing Debian's chromium"
    apt-get update
    DEBIAN_FRONTEND=noninteractive apt-get install -y chromium
  fi
}

ensure_python_packages() {
  if ! python3 -c 'import numpy, scipy, statsmodels' 2>/dev/null; then
    say "installing the SciPy cross-check's packages"
    python3 -m pip install --quiet -r tests/scipy/requirements.txt
  fi
}

ensure_node_packages() {
  if [ ! -d tests/browser/node_modules/playwright-core ]; then
    say "installing the browser tests' npm packages from the lock file"
    (cd tests/browser && npm ci --no-audit --no-fund)
  fi
}

# A short bounded fuzz run of the three readers (20 s each) where the
# nightly toolchain and cargo-fuzz are installed; elsewhere it says why it
# is skipped (the corpus and every kept regression are replayed on stable
# by the cargo tests either way). Longer runs: DEVELOPERS.md, fuzz/.
fuzz_briefly() {
  if ! cargo +nightly --version >/dev/null 2>&1 || ! command -v cargo-fuzz >/dev/null 2>&1; then
    say "fuzzing skipped: it needs the nightly toolchain and cargo-fuzz (rustup toolchain install nightly; cargo install cargo-fuzz); the corpus replay ran with the cargo tests"
    return 0
  fi
  say "fuzzing the readers briefly (20 s per target; a crash fails the build)"
  local target
  for target in table traces layout; do
    cargo +nightly fuzz run "$target" -- -max_total_time=20 -rss_limit_mb=4096 2>&1 | tail -n 3
    [ "${PIPESTATUS[0]}" -eq 0 ] || { echo "fuzz target $target found a crash: see fuzz/artifacts/$target" >&2; return 1; }
  done
}

run_tests() {
  build_test_hooks_page
  build_page
  say "cargo tests: unit, reference checks (NIST StRD, Puromycin), gradients"
  cargo test --workspace --release
  fuzz_briefly
  say "SciPy cross-check (scipy.optimize.curve_fit)"
  cargo build --release -p turnover-cli
  ensure_python_packages
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/progress_crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/rates_crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/models_crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/sets_crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/shared_slope_crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/inactivation_crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/profiles_crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/bisubstrate_crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/design_crosscheck.py
  TURNOVER_BIN="$ROOT/target/release/turnover" python3 tests/scipy/bias_study.py --sets 1000
  say "browser tests (headless Debian chromium, page opened from file://)"
  ensure_chromium
  ensure_node_packages
  (cd tests/browser && TURNOVER_HTML="$OUT" TURNOVER_TEST_HOOKS_HTML="$ROOT/target/turnover-test-hooks.html" node --test)
  say "all tests passed"
}

case "${1:-build}" in
  build)
    build_page
    echo
    echo "Open this file in any browser (double-click works; no server needed):"
    echo "  $OUT"
    ;;
  test)
    run_tests
    ;;
  bench)
    "$ROOT/tests/bench/run.sh"
    ;;
  *)
    echo "usage: ./build.sh [test]" >&2
    exit 2
    ;;
esac
