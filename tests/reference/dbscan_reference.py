"""Reference DBSCAN labels for tests/clusters.rs.

Writes dbscan_reference.json next to this script: for each case, the points,
eps, min_samples, optional sample weights, and sklearn.cluster.DBSCAN's
labels_ and core_sample_indices_ (scikit-learn 1.9.1, default algorithm).

Coordinates are multiples of 1/4 or 1/64 (dyadic), so squared distances are
exact in binary floating point and distances of exactly eps (ties at the
boundary) mean the same thing to both implementations. All data invented,
numpy default_rng seeds given per case.
"""
import json
import os

import numpy as np
from sklearn.cluster import DBSCAN

cases = []


def add(name, X, eps, min_samples, weights=None):
    X = np.asarray(X, float)
    db = DBSCAN(eps=eps, min_samples=min_samples).fit(X, sample_weight=weights)
    cases.append({
        "name": name,
        "x": X[:, 0].tolist(),
        "y": X[:, 1].tolist(),
        "eps": eps,
        "min_samples": min_samples,
        "weights": None if weights is None else [float(w) for w in weights],
        "labels": db.labels_.tolist(),
        "core": db.core_sample_indices_.tolist(),
    })


# DB10 (docs/methods.md#dbscan) in its three orders.
A = [(-0.5, 0), (-0.5, 0.5), (0, 0.5), (0, 0)]
B = [(1.8, 0), (1.8, 0.5), (2.3, 0), (2.3, 0.5)]
p = [(0.9, 0)]
noise = [(5, 5)]
add("DB10 A,p,B,noise", A + p + B + noise, 1.0, 4)
add("DB10 B,p,A,noise", B + p + A + noise, 1.0, 4)
add("DB10 p,A,B,noise", p + A + B + noise, 1.0, 4)

# Quarter-unit lattice points: many pairs at exactly eps = 0.75.
rng = np.random.default_rng(101)
X = np.floor(rng.uniform(0, 64, (500, 2))) / 4
add("lattice ties eps=0.75 ms=4", X, 0.75, 4)
add("lattice ties eps=0.5 ms=3", X, 0.5, 3)
add("lattice ties eps=0.75 ms=1", X[:120], 0.75, 1)

# Three blobs and noise, coordinates rounded to 1/64.
rng = np.random.default_rng(202)
blobs = [rng.normal(c, s, (k, 2)) for c, s, k in (((2, 2), 0.3, 300), ((6, 3), 0.5, 400), ((4, 7), 0.2, 200))]
Y = np.vstack(blobs + [rng.uniform(0, 9, (300, 2))])
Y = np.round(Y * 64) / 64
perm = rng.permutation(len(Y))
Y = Y[perm]
add("blobs eps=0.25 ms=5", Y, 0.25, 5)
add("blobs eps=0.5 ms=10", Y, 0.5, 10)

# Sample weights (integers, so sums are exact).
w = rng.integers(1, 4, len(X))
add("lattice weighted eps=0.5 ms=6", X, 0.5, 6, w)

# Stacked events (many geocoded to one address): 40 events at each of 6
# lattice addresses among 300 lattice points, interleaved; and one address
# holding 200 events beside 5 others.
rng = np.random.default_rng(303)
addr = np.floor(rng.uniform(0, 64, (6, 2))) / 4
S = np.vstack([np.repeat(addr, 40, axis=0), np.floor(rng.uniform(0, 64, (300, 2))) / 4])
S = S[rng.permutation(len(S))]
add("stacked eps=0.75 ms=5", S, 0.75, 5)
add("stacked eps=0.75 ms=42", S, 0.75, 42)
add("stacked weighted eps=0.5 ms=20", S, 0.5, 20, rng.integers(0, 3, len(S)))
T = np.vstack([np.repeat([[3.25, 1.5]], 200, axis=0), [[3.5, 1.5], [3.25, 2.0], [4.0, 1.5], [3.0, 1.25], [9.0, 9.0]]])
T = T[rng.permutation(len(T))]
add("one address eps=0.5 ms=10", T, 0.5, 10)
add("one address eps=0.25 ms=201", T, 0.25, 201)

with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "dbscan_reference.json"), "w") as f:
    json.dump({"source": "dbscan_reference.py (scikit-learn 1.9.1)", "cases": cases}, f)
for c in cases:
    print(c["name"], "clusters:", max(c["labels"]) + 1, "noise:", c["labels"].count(-1))
