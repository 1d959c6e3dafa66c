"""Our K function against scipy.spatial.cKDTree.count_neighbors, side by side.

Run from the repository root (the Rust example writes the points first):
    cargo run --release --example bench_clustering -- export
    python3 bench/clustering_vs_scipy.py

Same 10,000 points (seeded CSR in a 1000 m square, target/bench-data/points.csv) and
the same 51 radii (0 to 250 m). scipy's count_neighbors gives cumulative
ordered-pair counts (self pairs included) with no edge correction, so
* the values are checked against our K with no correction:
  K_none(r) = |W| / (n(n-1)) * (count(r) - n);
* the times compare scipy's plain pair count with our K with Ripley's
  isotropic correction (the default, which does more work per pair) and
  with our K without correction (the like-for-like count).
Timings are CPU seconds on both sides (time.process_time for scipy; the Rust
example reads /proc/self/stat), one thread each, because the machine is shared.
"""
import json
import time

import numpy as np
from scipy.spatial import cKDTree

pts = np.loadtxt("target/bench-data/points.csv", delimiter=",", skiprows=1)
rust = json.load(open("target/bench-data/rust_k.json"))
r = np.array(rust["r"])
n = len(pts)
area = rust["area"]

tree_t0 = time.process_time()
tree = cKDTree(pts)
build = time.process_time() - tree_t0
reps = 3
t0 = time.process_time()
for _ in range(reps):
    counts = tree.count_neighbors(tree, r)
scipy_s = (time.process_time() - t0) / reps + build

k_scipy = area / (n * (n - 1)) * (counts - n)
k_none = np.array(rust["k_none"])
worst = np.max(np.abs(k_scipy - k_none) / np.maximum(k_none, 1e-300)) if n > 1 else 0.0
print(f"n = {n}, {len(r)} distances up to {r[-1]:.0f} m")
print(f"max relative difference K_none (ours) vs scipy count: {worst:.2e}")
print(f"scipy cKDTree build + count_neighbors : {scipy_s:.4f} s")
print(f"ours, K no correction                : {rust['seconds_k_none']:.4f} s  "
      f"(ratio scipy/ours {scipy_s / rust['seconds_k_none']:.2f})")
print(f"ours, K isotropic correction         : {rust['seconds_k_isotropic']:.4f} s  "
      f"(ratio scipy/ours {scipy_s / rust['seconds_k_isotropic']:.2f})")
