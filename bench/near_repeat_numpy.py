"""The near-repeat table with scipy + numpy, side by side with ours.

Run from the repository root (the Rust example writes the events and its
timings first):
    cargo run --release --example bench_near_repeat -- export
    python3 bench/near_repeat_numpy.py [n_perm]

A plain implementation of the same computation with general-purpose
libraries: scipy.spatial.cKDTree.query_pairs lists every pair within the
largest distance once (as an array), numpy gives each its distance band; a
permutation of the times (numpy's generator) re-bins only the time gaps of
those pairs (np.bincount over distance band × time band). Same bands as ours:
"same location" (d = 0), (0, 100], ..., (900, 1000] m; [0, 7], ..., (63, 70]
days, each band including its upper end.

Checked: the observed table equals ours. Timed (wall seconds, one thread each;
the machine may be shared): finding the pairs, and the permutations (999 by
default; fewer with the argument, then scaled to 999), against ours.
"""
import json
import sys
import time

import numpy as np
from scipy.spatial import cKDTree

m = int(sys.argv[1]) if len(sys.argv) > 1 else 999
pts = np.loadtxt("target/bench-data/near-repeat-20000.csv", delimiter=",", skiprows=1)
ours = json.load(open("target/bench-data/near-repeat-20000.json"))
xy, t = pts[:, :2], pts[:, 2]
bw, dmax, tw, tmax = ours["band_m"], ours["max_distance_m"], ours["band_days"], ours["max_days"]
space_edges = np.arange(1, int(round(dmax / bw)) + 1) * bw
time_edges = np.arange(1, int(round(tmax / tw)) + 1) * tw
ns, nt = len(space_edges) + 1, len(time_edges)

t0 = time.perf_counter()
pairs = cKDTree(xy).query_pairs(dmax, output_type="ndarray")
i, j = pairs[:, 0], pairs[:, 1]
dx = xy[j, 0] - xy[i, 0]
dy = xy[j, 1] - xy[i, 1]
d = np.sqrt(dx * dx + dy * dy)
keep = d <= dmax
i, j, d = i[keep], j[keep], d[keep]
sb = np.searchsorted(space_edges, d, side="left") + 1
sb[d == 0] = 0
setup = time.perf_counter() - t0


def table(tt):
    g = np.abs(tt[i] - tt[j])
    tb = np.searchsorted(time_edges, g, side="left")
    ok = tb < nt
    return np.bincount(sb[ok] * nt + tb[ok], minlength=ns * nt)


obs = table(t)
assert obs.tolist() == ours["observed"], "observed table differs from ours"
rng = np.random.default_rng(1)
ge = np.zeros(ns * nt, dtype=int)
t1 = time.perf_counter()
for _ in range(m):
    ge += table(rng.permutation(t)) >= obs
perm = (time.perf_counter() - t1) * 999 / m
print(json.dumps({
    "bench": "near_repeat_numpy", "events": len(t), "close_pairs": int(len(i)),
    "numpy_setup_s": round(setup, 3), "numpy_999_perm_s": round(perm, 3),
    "ours_setup_s": round(ours["setup_s"], 3), "ours_one_thread_s": round(ours["one_thread_s"], 3),
    "ours_all_threads_s": round(ours["all_threads_s"], 3), "threads": ours["threads"],
    "ratio_numpy_over_ours_one_thread": round(perm / ours["one_thread_s"], 2),
    "observed_tables_equal": True,
}))
