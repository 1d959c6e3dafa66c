#!/usr/bin/env bash
# Coverage-guided fuzzing of the readers and the study-area builder.
#
#   tools/fuzz.sh [SECONDS] [TARGET...]
#
# Runs each target (default: all four) for SECONDS (default 60) with
# libFuzzer through cargo-fuzz on the nightly toolchain, starting from the
# committed seeds in fuzz/seeds/<target>/; new inputs go to
# fuzz/corpus/<target>/ (not committed), a crash or hang to
# fuzz/artifacts/<target>/. Exits 1 on the first finding (or when a target
# does not build), 2 when fuzzing cannot run on this machine (no nightly
# toolchain, cargo-fuzz not installable).
# Targets: read_points (CSV/TSV/GeoJSON events), read_area (GeoJSON study
# areas), parse_time (dates and date-times), study_area (Window from
# arbitrary rings).
set -euo pipefail
cd "$(dirname "$0")/.."
secs="${1:-60}"
shift || true
targets=("$@")
[ ${#targets[@]} -gt 0 ] || targets=(read_points read_area parse_time study_area)

if ! rustup toolchain list | grep -q '^nightly'; then
  echo "fuzz: the nightly toolchain is needed (rustup toolchain install nightly)" >&2
  exit 2
fi
if ! cargo +nightly fuzz --version >/dev/null 2>&1; then
  echo "fuzz: installing cargo-fuzz (once)"
  if ! { cargo install --locked cargo-fuzz || cargo install cargo-fuzz; }; then
    echo "fuzz: cargo-fuzz could not be installed here" >&2
    exit 2
  fi
fi
for t in "${targets[@]}"; do
  mkdir -p "fuzz/corpus/$t"
  echo "== fuzz $t for ${secs}s"
  log="fuzz/corpus/$t.log"
  status=0
  cargo +nightly fuzz run "$t" "fuzz/corpus/$t" "fuzz/seeds/$t" -- \
    -max_total_time="$secs" -timeout=10 -rss_limit_mb=4096 -print_final_stats=1 >"$log" 2>&1 || status=$?
  grep -E "^(#[0-9]+ +DONE|stat::number_of_executed_units|stat::peak_rss_mb|SUMMARY|Done )|panicked at" "$log" || true
  if [ "$status" -ne 0 ] || [ -n "$(ls -A "fuzz/artifacts/$t" 2>/dev/null)" ]; then
    tail -40 "$log" >&2
    echo "fuzz: $t failed (exit $status); inputs that fail are in fuzz/artifacts/$t/" >&2
    exit 1
  fi
done
echo "fuzz: no crash, panic or hang in ${#targets[@]} target(s) at ${secs}s each"
