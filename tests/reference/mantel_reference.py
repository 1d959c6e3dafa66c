"""Reference values for src/spacetime/mantel.rs (the Mantel test), with numpy and scipy.

Writes tests/reference/mantel_reference.json. Run from the repository root:
    python3 tests/reference/mantel_reference.py

1. A seeded set of 300 events (metres, days; a background, a burst close in
   space and time, and repeated addresses and days, so that the constants of
   the reciprocal transforms matter). For each pair of transforms ("raw":
   the distance or |days|; "reciprocal": 1/(d + c1), 1/(u + c2)) over all
   n(n-1)/2 pairs (scipy.spatial.distance.pdist): Z = sum of products, the
   Pearson correlation of the two transformed separations
   (scipy.stats.pearsonr), and the exact permutation mean and variance of Z
   from the moment sums of Mantel (1967) as written in src/spacetime/mantel.rs
   (an independent numpy implementation of the same formula).
2. A set of 8 events: the mean and variance of Z over all 40320 permutations
   of the times (itertools.permutations), an outside check of that formula,
   plus the exact upper-tail share (#{Z* >= Z}/8!).
"""
import itertools
import json
import os

import numpy as np
import scipy
from scipy.spatial.distance import pdist
from scipy.stats import pearsonr

SEED = 1967
rng = np.random.default_rng(SEED)

n_bg = 260
bg = rng.uniform([0, 0], [5000, 3000], size=(n_bg, 2))
bg_t = rng.uniform(0, 365, size=n_bg)
burst = rng.normal([1500, 1200], 120, size=(30, 2))
burst_t = rng.uniform(100, 115, size=30)
# Ten repeats of earlier events' places and whole days.
rep = rng.choice(n_bg, size=10, replace=False)
X = np.vstack([bg, burst, bg[rep]])
T = np.concatenate([bg_t, burst_t, np.floor(bg_t[rep])])
X = np.round(X, 3)
T = np.round(T, 4)
C1, C2 = 25.0, 2.0


def transform(v, kind, c):
    return v if kind == "raw" else 1.0 / (v + c)


def moments(n, a_pairs, b_pairs):
    """Exact permutation mean and variance of Z = sum a_ij b_ij (i < j)."""
    A = np.zeros((n, n))
    B = np.zeros((n, n))
    iu = np.triu_indices(n, 1)
    A[iu] = a_pairs
    B[iu] = b_pairs
    A = A + A.T
    B = B + B.T
    s0, s1, s2 = A.sum(), (A ** 2).sum(), (A.sum(1) ** 2).sum()
    t0, t1, t2 = B.sum(), (B ** 2).sum(), (B.sum(1) ** 2).sum()
    n2 = n * (n - 1.0)
    n3 = n2 * (n - 2)
    n4 = n3 * (n - 3)
    m = s0 * t0 / n2
    sq = (2 * s1 * t1 / n2 + 4 * (s2 - s1) * (t2 - t1) / n3
          + (s0 ** 2 + 2 * s1 - 4 * s2) * (t0 ** 2 + 2 * t1 - 4 * t2) / n4)
    return m / 2, (sq - m * m) / 4


cases = []
d = pdist(X)
u = pdist(T[:, None])
for sk in ("raw", "reciprocal"):
    for tk in ("raw", "reciprocal"):
        a = transform(d, sk, C1)
        b = transform(u, tk, C2)
        mean, var = moments(len(T), a, b)
        cases.append({
            "space_transform": sk,
            "time_transform": tk,
            "z": float(np.sum(a * b)),
            "mean": float(mean),
            "variance": float(var),
            "correlation": float(pearsonr(a, b)[0]),
        })

# 2. Small set: enumeration of all permutations.
n8 = 8
X8 = np.round(rng.uniform(0, 100, size=(n8, 2)), 3)
T8 = np.floor(rng.uniform(0, 30, size=n8))
d8 = pdist(X8)
iu8 = np.triu_indices(n8, 1)
small = []
for sk, tk in (("raw", "raw"), ("reciprocal", "reciprocal"), ("raw", "reciprocal")):
    a8 = transform(d8, sk, C1)
    zs = []
    for p in itertools.permutations(range(n8)):
        tp = T8[list(p)]
        zs.append(np.sum(a8 * transform(np.abs(tp[iu8[0]] - tp[iu8[1]]), tk, C2)))
    zs = np.array(zs)
    z0 = np.sum(a8 * transform(pdist(T8[:, None]), tk, C2))
    small.append({
        "space_transform": sk,
        "time_transform": tk,
        "z": float(z0),
        "mean": float(zs.mean()),
        "variance": float(zs.var()),
        "share_at_least": float(np.mean(zs >= z0 - 1e-9 * abs(z0))),
        "permutations": int(len(zs)),
    })

out = {
    "source": "tests/reference/mantel_reference.py (numpy %s, scipy %s)" % (np.__version__, scipy.__version__),
    "seed": SEED,
    "space_constant_m": C1,
    "time_constant_days": C2,
    "x": X[:, 0].tolist(),
    "y": X[:, 1].tolist(),
    "t": T.tolist(),
    "cases": cases,
    "small": {"x": X8[:, 0].tolist(), "y": X8[:, 1].tolist(), "t": T8.tolist(), "cases": small},
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "mantel_reference.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
print("wrote", path)
