#!/usr/bin/env bash
# Cloister build script. One readable path, no hidden steps.
#
#   ./build.sh          build dist/cloister.html (+ dist/node/) and open it
#   ./build.sh test     install what is missing, then run every test
#   ./build.sh serve    build, then serve dist/ on http://127.0.0.1:8765/
#   ./build.sh bench    build, then run the benchmarks (figures go to README)
#
# Everything it needs is installed here on first use: the wasm32 target
# (rustup), wasm-bindgen-cli pinned to the crate's exact wasm-bindgen version,
# the npm packages from package-lock.json (esbuild bundles the page's scripts;
# playwright-core drives the browser tests; typescript checks the Node API's
# declarations), and for tests Debian chromium and
# the Python reference libraries from tests/reference/requirements.txt.
set -euo pipefail
cd "$(dirname "$0")"

WASM_BINDGEN_VERSION="$(sed -n 's/^wasm-bindgen = "=\(.*\)"/\1/p' Cargo.toml)"

step() { printf '\n== %s\n' "$*"; }

need_wasm_toolchain() {
  if ! rustup target list --installed | grep -qx wasm32-unknown-unknown; then
    step "adding the wasm32-unknown-unknown target"
    rustup target add wasm32-unknown-unknown
  fi
  if ! wasm-bindgen --version 2>/dev/null | grep -q " ${WASM_BINDGEN_VERSION}\$"; then
    step "installing wasm-bindgen-cli ${WASM_BINDGEN_VERSION} (a few minutes, once)"
    # --locked first; fall back to a fresh resolve when a locked dependency
    # is no longer available from the registry.
    cargo install --locked wasm-bindgen-cli --version "${WASM_BINDGEN_VERSION}" \
      || cargo install wasm-bindgen-cli --version "${WASM_BINDGEN_VERSION}"
  fi
}

# esbuild (bundles the page's modules), playwright-core (browser tests) and
# typescript (checks dist/node/cloister.d.ts in the Node tests), all pinned
# in package-lock.json.
need_npm_packages() {
  if [ ! -d node_modules/esbuild ] || [ ! -d node_modules/playwright-core ] \
    || [ ! -d node_modules/typescript ]; then
    step "installing npm packages from package-lock.json"
    npm ci --no-audit --no-fund
  fi
}

need_test_tools() {
  if ! cargo clippy --version >/dev/null 2>&1; then
    step "adding the clippy component"
    rustup component add clippy
  fi
  if [ ! -x /usr/bin/chromium ]; then
    step "installing Debian chromium for the browser tests"
    apt-get update -qq && apt-get install -y -qq chromium
  fi
  need_npm_packages
  if ! python3 -c 'import numpy, scipy, sklearn, shapely, pyproj, statsmodels' 2>/dev/null; then
    step "installing Python reference libraries"
    python3 -m pip install -q -r tests/reference/requirements.txt
  fi
}

build() {
  need_wasm_toolchain
  need_npm_packages
  step "building the wasm core (release)"
  cargo build --release --target wasm32-unknown-unknown --lib
  local wasm=target/wasm32-unknown-unknown/release/cloister.wasm
  rm -rf www/pkg dist/node
  mkdir -p dist
  wasm-bindgen --target no-modules --no-typescript --remove-name-section \
    --remove-producers-section --out-dir www/pkg "$wasm"
  wasm-bindgen --target nodejs --out-dir dist/node "$wasm"
  node tools/gen-dts.mjs
  step "assembling dist/cloister.html"
  node tools/build-page.mjs
  ls -l dist/cloister.html
}

run_tests() {
  need_wasm_toolchain
  need_test_tools
  step "format check"
  cargo fmt --check
  step "lints (clippy, host and wasm32; warnings are errors)"
  cargo clippy --release --all-targets -- -D warnings
  cargo clippy --release --target wasm32-unknown-unknown --lib -- -D warnings
  step "regenerating reference values (tests/reference/*.py)"
  for s in tests/reference/*.py; do
    echo "  $s"
    python3 "$s"
  done
  step "cargo test"
  cargo test --release
  step "wasm build + page"
  build
  step "Node API tests"
  node --test tests/node/
  step "browser end-to-end tests (headless chromium, file://)"
  node --test --test-concurrency=1 tests/e2e/
  step "fuzzing smoke (readers and study-area builder, ${FUZZ_SECONDS:-20} s each)"
  fuzz_status=0
  tools/fuzz.sh "${FUZZ_SECONDS:-20}" || fuzz_status=$?
  if [ "$fuzz_status" -eq 2 ]; then
    echo "  skipped: fuzzing cannot run on this machine (nightly toolchain or cargo-fuzz missing)"
  elif [ "$fuzz_status" -ne 0 ]; then
    exit "$fuzz_status"
  fi
  step "all tests passed"
}

case "${1:-open}" in
  open)
    build
    page="$(pwd)/dist/cloister.html"
    echo "Open file://${page} in a browser (the 'Load the demo' button is on the left)."
    if [ -z "${CI:-}" ] && command -v xdg-open >/dev/null 2>&1; then xdg-open "$page" >/dev/null 2>&1 || true; fi
    ;;
  build) build ;;
  test) run_tests ;;
  serve)
    build
    echo "Serving dist/ on http://127.0.0.1:8765/cloister.html (Ctrl-C stops)"
    python3 -m http.server 8765 --bind 127.0.0.1 --directory dist
    ;;
  bench)
    build
    bash bench/run.sh
    ;;
  *) echo "usage: ./build.sh [open|build|test|serve|bench]" >&2; exit 2 ;;
esac
