#!/usr/bin/env bash
# Benchmarks: what users wait for, measured natively, in Node and in headless
# Chromium. Run through `./build.sh bench` (which builds dist/ first).
# Figures print as JSON lines; copy them into README.md's performance section.
# Never run from the tests: timings are not assertions.
set -euo pipefail
cd "$(dirname "$0")/.."
SIZES="${BENCH_SIZES:-1000 10000 100000 1000000}"

echo "== intake: native (release)"
cargo run --quiet --release --example bench_intake -- $SIZES
echo "== intake: native against pandas.read_csv + pyproj transverse Mercator (same 1,000,000-row file, best of 3 each)"
python3 bench/intake_vs_pandas.py 1000000
echo "== intake: Node.js (dist/node)"
node --max-old-space-size=4096 bench/intake-node.mjs $SIZES
echo "== intake: headless Chromium page (worker)"
node bench/intake-browser.mjs $SIZES
echo "== hotspots: headless Chromium page (worker)"; node bench/hotspots-browser.mjs
echo "== clustering envelopes: native, portable x86-64 build (release)"
cargo run --quiet --release --example bench_clustering
echo "== clustering envelopes: native, built for this machine's CPU (target-cpu=native)"
RUSTFLAGS="-C target-cpu=native" CARGO_TARGET_DIR=target/native-cpu \
  cargo run --quiet --release --example bench_clustering
echo "== clustering: nanoseconds per pair, our K against a plain count-and-histogram loop (portable build)"
cargo run --quiet --release --example bench_k_pairs
echo "== clustering: our K against scipy's cKDTree.count_neighbors (same points, same radii)"
cargo run --quiet --release --example bench_clustering -- export
python3 bench/clustering_vs_scipy.py
echo "== clustering envelopes: headless Chromium page (worker)"; node bench/clustering-browser.mjs 10000 199 k l demo
echo "== clustering, large patterns: pairs on a fine grid, native (release): error against every pair, and time"
cargo run --quiet --release --example bench_clustering -- binned-error
cargo run --quiet --release --example bench_clustering -- binned 199
echo "== clustering, large patterns: 100,000 events on a fine grid in the page, and every pair against the grid at 10,000"
node bench/clustering-browser.mjs large 100000 199
echo "== a 200,000-event file in the page, step by step (headless Chromium)"
node bench/walk-200k.mjs 200000
echo "== memory when the same 1,000,000-row file is chosen six times (headless Chromium)"
node bench/reload-memory.mjs 1000000 6
echo "== random labelling test: native (release), one visit of the pairs against relabellings"
cargo run --quiet --release --example bench_labelling -- export
echo "== random labelling test: the same D(r) with scipy + numpy (stored pairs, numpy re-sums)"
python3 bench/labelling_vs_numpy.py
echo "== random labelling test: headless Chromium page, spread over helper workers and on one"
node bench/labelling-browser.mjs 199
echo "== random labelling test: level and power over 1,000 seeded data sets each (D and cross-type L)"
cargo run --quiet --release --example calibration_labelling -- 1000
echo "== relative-risk surface: Node.js, 5,000 cases + 20,000 controls, 256 x 256, 99 labellings"
node bench/relrisk.mjs
echo "== relative-risk surface: headless Chromium page, spread over helper workers and on one"
node bench/relrisk-browser.mjs
echo "== scan against population counts: Node.js (demo blocks, 2,000 and 20,000 invented points)"
node bench/scan-population-node.mjs
echo "== scan: headless Chromium page, spread over helper workers and on one"
node bench/scan-browser.mjs 999
echo "== scan centred on every event, cases against controls: native (release), 10,000 events, one thread and two"
cargo run --quiet --release --example bench_scan -- 10000 999 2
echo "== the same in the page: 10,000 and 5,000 events, every place and grid cells, spread over helper workers and on one"
node bench/scan-browser.mjs 999 1 large 10000
node bench/scan-browser.mjs 999 1 large 5000
echo "== Mantel test and space-time K: native (release), 5,000 events, one thread and spread"
cargo run --quiet --release --example bench_mantel_stk -- export
echo "== Mantel test and space-time K: headless Chromium page, spread over helper workers and on one"
node bench/mantel-stk-browser.mjs
echo "== Mantel test and space-time K: level over 1,000 seeded data sets without interaction"
cargo run --quiet --release --example bench_mantel_stk -- calibrate 1000
echo "== near-repeat table and Knox test: native (release), one thread and every core"
cargo run --quiet --release --example bench_near_repeat -- export
echo "== near-repeat table: the same counts and permutations with scipy + numpy"
python3 bench/near_repeat_numpy.py
echo "== near-repeat table and Knox test: headless Chromium page, spread over helper workers and on one"
node bench/near-repeat-browser.mjs 999
echo "== time line: Node.js, invented events with from/to dates (read, timeline by day/week/month, eventTimes)"
node --max-old-space-size=4096 bench/timeline-node.mjs 10000 100000 1000000
echo "== space-time permutation scan: native (release), 10,000 events at 1,000 places over a year, prospective 999 and retrospective 3 permutations"
cargo run --quiet --release --example bench_st_scan -- 10000 1000 999 3
echo "== space-time permutation scan: level over 1,000 seeded data sets without space-time interaction (99 permutations each)"
cargo run --quiet --release --example bench_st_scan -- calibration 1000
echo "== space-time permutation scan: headless Chromium page, spread over helper workers and on one"
node bench/st-scan-browser.mjs 10000 1000 999 3
