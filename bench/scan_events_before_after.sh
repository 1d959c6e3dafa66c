#!/usr/bin/env bash
# The scan centred on every event (cases against controls), an older commit
# and this tree side by side in one run: examples/bench_scan.rs is copied
# into a temporary clone checked out at BASE, both are built (release) and
# run one after the other on the same invented data (10,000 events at
# distinct places, half of them cases, 999 chance runs, circles up to half
# the people). The chance runs on one thread are capped at ONE (default 48;
# the time per run is printed) and then all of them are spread over
# THREADS threads. Both lines carry the statistic, the p-value and a
# checksum of every chance run's maximum: they must agree.
# Usage: bash bench/scan_events_before_after.sh BASE [events] [n_sim] [threads]
#   e.g. bash bench/scan_events_before_after.sh 25c6f36 10000 999 2
set -euo pipefail
cd "$(dirname "$0")/.."
BASE="${1:?give the older commit to compare with, e.g. 25c6f36}"
N="${2:-10000}"; SIMS="${3:-999}"; THREADS="${4:-2}"; ONE="${ONE:-48}"
TMP="$(mktemp -d)"
trap 'rm -rf "$TMP"' EXIT
git clone -q . "$TMP/base"
git -C "$TMP/base" checkout -q "$BASE"
cp examples/bench_scan.rs "$TMP/base/examples/"
(cd "$TMP/base" && cargo build --quiet --release --example bench_scan)
cargo build --quiet --release --example bench_scan
echo "load: $(uptime)"
echo -n "before ($BASE): "
BENCH_SCAN_RUNS_ONE="$ONE" /usr/bin/time -f '  peak memory %M kB' "$TMP/base/target/release/examples/bench_scan" "$N" "$SIMS" "$THREADS"
echo -n "after (this tree): "
BENCH_SCAN_RUNS_ONE="$ONE" /usr/bin/time -f '  peak memory %M kB' target/release/examples/bench_scan "$N" "$SIMS" "$THREADS"
echo "load: $(uptime)"
