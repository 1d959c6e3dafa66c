"""Reference values for src/spacetime/pairs.rs (near-repeat table, Knox test,
Benjamini-Hochberg q-values), computed by brute force over all pairs with
numpy, with scipy.stats.poisson and statsmodels.stats.multitest.

Writes tests/reference/near_repeat_reference.json. Run from the repository root:
    python3 tests/reference/near_repeat_reference.py

A seeded, invented event set in metres and days: a uniform background over a
4 km square and one year, a few tight space-time groups, 20 exact repeats of
earlier locations (same address, another day) and times rounded to whole days
(so many gaps fall exactly on band edges, which tests the half-open bands).
For every unordered pair: d = sqrt(dx*dx + dy*dy) (the engine's formula) and
the gap |t_i - t_j|. Bands as the engine's: "same location" (d == 0), then
(0, 100], (100, 200], ... up to 500 m; [0, 7], (7, 14], ... up to 42 days.
"""
import json
import os

import numpy as np
import scipy
import statsmodels
from scipy.stats import poisson
from statsmodels.stats.multitest import multipletests

SEED = 20261203
rng = np.random.default_rng(SEED)

bg = rng.uniform([0, 0], [4000, 4000], size=(400, 2))
tb = rng.uniform(0, 365, size=400)
groups = []
times = []
for c in range(4):
    centre = rng.uniform(500, 3500, size=2)
    day = rng.uniform(30, 330)
    k = 15
    groups.append(rng.normal(centre, 80, size=(k, 2)))
    times.append(day + rng.uniform(0, 20, size=k))
X = np.vstack([bg] + groups)
T = np.concatenate([tb] + times)
rep = rng.choice(len(X), size=20, replace=False)
X = np.vstack([X, X[rep]])
T = np.concatenate([T, rng.uniform(0, 365, size=20)])
X = np.round(X, 1)
T = np.round(T)
n = len(T)

i, j = np.triu_indices(n, 1)
dx = X[j, 0] - X[i, 0]
dy = X[j, 1] - X[i, 1]
d = np.sqrt(dx * dx + dy * dy)
g = np.abs(T[i] - T[j])
N = n * (n - 1) // 2

space_edges = [100.0, 200.0, 300.0, 400.0, 500.0]
time_edges = [7.0, 14.0, 21.0, 28.0, 35.0, 42.0]


def band(v, edges):
    """Index of the half-open band (e_{k-1}, e_k] holding v (the first is
    [0, e_1]); -1 past the last edge."""
    out = np.searchsorted(np.asarray(edges), v, side="left")
    out[v > edges[-1]] = -1
    return out


sb = band(d, space_edges)
sb = np.where(sb >= 0, sb + 1, -1)
sb[d == 0] = 0
tband = band(g, time_edges)
table = np.zeros((len(space_edges) + 1, len(time_edges)), dtype=int)
inside = (sb >= 0) & (tband >= 0)
np.add.at(table, (sb[inside], tband[inside]), 1)
n_s = np.bincount(sb[sb >= 0], minlength=len(space_edges) + 1)
n_t = np.bincount(tband[tband >= 0], minlength=len(time_edges))
expected = np.outer(n_s, n_t) / N

# Knox at 200 m and 14 days ("close" = <=).
delta, tau = 200.0, 14.0
cs = d <= delta
ct = g <= tau
x = int(np.sum(cs & ct))
ns, nt = int(cs.sum()), int(ct.sum())
e = ns * nt / N
knox = {
    "distance_m": delta,
    "days": tau,
    "x": x,
    "n_s": ns,
    "n_t": nt,
    "n_pairs": int(N),
    "expected": e,
    "ratio": x / e,
    "p_poisson": float(poisson.sf(x - 1, e)),
}

# Knox arithmetic of the n = 50 check (n_s = 100, n_t = 150, X = 25).
e50 = 100 * 150 / (50 * 49 / 2)
knox50 = {"expected": e50, "ratio": 25 / e50, "p_poisson": float(poisson.sf(24, e50))}

# Benjamini-Hochberg on p-values of the kind a permutation table gives:
# multiples of 1/(m+1) with ties, m = 999, 60 cells.
pv = (1 + rng.integers(0, 1000, size=60) ** 2 // 1000) / 1000.0
pv[:8] = [0.001, 0.001, 0.002, 0.004, 0.004, 0.01, 0.03, 0.05]
_, q, _, _ = multipletests(pv, method="fdr_bh")

out = {
    "seed": SEED,
    "numpy": np.__version__,
    "scipy": scipy.__version__,
    "statsmodels": statsmodels.__version__,
    "x": X[:, 0].tolist(),
    "y": X[:, 1].tolist(),
    "t": T.tolist(),
    "space_edges": space_edges,
    "time_edges": time_edges,
    "table": table.tolist(),
    "space_margin": n_s.tolist(),
    "time_margin": n_t.tolist(),
    "n_pairs": int(N),
    "expected": expected.tolist(),
    "knox": knox,
    "knox50": knox50,
    "bh_p": pv.tolist(),
    "bh_q": q.tolist(),
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "near_repeat_reference.json")
with open(path, "w") as f:
    json.dump(out, f)
print("wrote", path, "n =", n, "Knox x =", x, "table sum =", int(table.sum()))
