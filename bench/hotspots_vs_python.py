"""Hotspot timings beside the Python reference libraries.

Run the native benchmark first (it writes the events and its own figures):

    cargo run --release --example bench_hotspots
    python3 bench/hotspots_vs_python.py

Same events (target/bench_hotspots_events.csv: 100 000 invented events in a
20 km x 15 km rectangle with a 3 km square hole), same grid (512 x 384 cell
centres, 39.0625 m cells) and same bandwidth (Gaussian SD 150 m) as the
Rust surface run, and the same DBSCAN parameters (eps 100 m, min_samples 10).

What is compared, and the shortcuts taken (Python's direct cost is
O(events x cells), so the full problem would take minutes):
  * scipy.stats.gaussian_kde: evaluated for a SUBSET of 2 000 events on the
    full grid, then scaled linearly to 100 000 events (its cost is exactly
    linear in the number of events). Its bandwidth matrix is
    factor^2 x sample covariance; we set the factor so that the mean per-axis
    SD is 150 m. The shape differs from our isotropic kernel but the cost does
    not depend on the shape.
  * sklearn.neighbors.KernelDensity(bandwidth=150, kd-tree, rtol=0): all
    100 000 events, isotropic as ours, evaluated at 20 000 of the grid cells
    and scaled linearly to the whole grid.
  * sklearn.cluster.DBSCAN: all 100 000 events, directly.
No edge correction in either Python KDE (ours is timed both ways).
"""
import json
import os
import time

import numpy as np
from scipy.stats import gaussian_kde
from sklearn.cluster import DBSCAN
from sklearn.neighbors import KernelDensity

root = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..")
ev = np.loadtxt(os.path.join(root, "target/bench_hotspots_events.csv"), delimiter=",", skiprows=1)
rust = [json.loads(l.rstrip(",\n")) for l in open(os.path.join(root, "target/bench_hotspots.json")).read().strip()[1:-1].split("\n")]


def rust_time(task, **kw):
    for r in rust:
        if r["task"] == task and all(r.get(k) == v for k, v in kw.items()):
            return r["seconds"]
    raise KeyError(task)


n = len(ev)
h = 150.0
# Grid of the Rust run: 512 x 384 cells of 20000/512 m over [0,20000]x[0,15000].
cell = 20000.0 / 512
gx = (np.arange(512) + 0.5) * cell
gy = (np.arange(384) + 0.5) * cell
G = np.array(np.meshgrid(gx, gy)).reshape(2, -1)

rows = []

# scipy gaussian_kde on a subset, scaled.
class IsotropicKDE(gaussian_kde):
    """gaussian_kde with kernel covariance bw_method^2 * I (as in
    tests/reference/kde_reference.py)."""

    def _compute_covariance(self):
        self._data_covariance = np.eye(self.d)
        self._data_cho_cov = np.eye(self.d)
        super()._compute_covariance()


sub = ev[np.random.default_rng(1).choice(n, 2000, replace=False)]
kde = IsotropicKDE(sub.T, bw_method=h)
t = time.perf_counter()
kde(G)
t_sub = time.perf_counter() - t
t_scipy = t_sub * n / len(sub)
r_g = rust_time("surface", kernel="Gaussian", edge="None")
r_gjd = rust_time("surface", kernel="Gaussian", edge="JonesDiggle")
rows.append(("KDE 100k events, 512x384 grid: scipy gaussian_kde (2k-event subset x50)", t_scipy, r_g, r_gjd))

# sklearn KernelDensity on a subset of cells, scaled.
kd = KernelDensity(kernel="gaussian", bandwidth=h, rtol=0.0).fit(ev)
cells = G.T[np.random.default_rng(2).choice(G.shape[1], 20000, replace=False)]
t = time.perf_counter()
kd.score_samples(cells)
t_cells = time.perf_counter() - t
t_sk = t_cells * G.shape[1] / len(cells)
rows.append(("KDE 100k events, 512x384 grid: sklearn KernelDensity (20k cells x9.8)", t_sk, r_g, r_gjd))

# DBSCAN.
t = time.perf_counter()
db = DBSCAN(eps=100.0, min_samples=10).fit(ev)
t_db = time.perf_counter() - t
r_db = rust_time("dbscan")
rows.append(("DBSCAN 100k events, eps 100 m, min_samples 10: sklearn", t_db, r_db, None))
ours = next(r for r in rust if r["task"] == "dbscan")
same = (db.labels_.max() + 1 == ours["clusters"]) and (int((db.labels_ == -1).sum()) == ours["noise"])

print(f"{'task':78s} {'python s':>9s} {'ours s':>8s} {'ratio':>7s}")
for name, tp, tr, tr2 in rows:
    print(f"{name:78s} {tp:9.3f} {tr:8.3f} {tp / tr:7.1f}x")
    if tr2 is not None:
        print(f"{'   ours with Jones-Diggle edge correction':78s} {'':9s} {tr2:8.3f} {tp / tr2:7.1f}x")
        ex = next(r for r in rust if r["task"] == "surface_error" and r["kernel"] == "Gaussian")
        print(f"{'   ours, exact evaluation (cut at 8 SD, grid index)':78s} {'':9s} {ex['exact_seconds']:8.3f} {tp / ex['exact_seconds']:7.1f}x")
print("DBSCAN clusters/noise sklearn:", db.labels_.max() + 1, int((db.labels_ == -1).sum()),
      "ours:", ours["clusters"], ours["noise"], "(same)" if same else "(DIFFERENT)")
