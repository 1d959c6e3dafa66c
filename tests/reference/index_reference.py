"""Reference values for src/index.rs, computed with scipy.spatial.cKDTree.

Writes tests/reference/index_reference.json. Run from the repository root:
    python3 tests/reference/index_reference.py

A seeded point set in metres (uniform background, two tight clusters and some
exactly repeated points) and, for each point, the distances to its 1st, 2nd
and 3rd nearest other point (`cKDTree.query(X, k=4)`, dropping the first
column, which is the point itself or a copy of it at distance 0: the sorted
list with one zero removed is the list of distances to the other points), and
the number of unordered pairs within r (`cKDTree.query_pairs(r)`, which counts
distances <= r) for a few r.
"""
import json
import os

import numpy as np
import scipy
from scipy.spatial import cKDTree

SEED = 7031
rng = np.random.default_rng(SEED)

background = rng.uniform([0, 0], [20_000, 12_000], size=(1500, 2))
c1 = rng.normal([5_000, 4_000], 150, size=(300, 2))
c2 = rng.normal([15_000, 9_000], 60, size=(150, 2))
X = np.vstack([background, c1, c2])
# 50 exact repeats of earlier points (e.g. several cases at one address).
rep = rng.choice(len(X), size=50, replace=False)
X = np.vstack([X, X[rep]])

tree = cKDTree(X)
d, _ = tree.query(X, k=4)
pairs = {str(r): len(tree.query_pairs(r)) for r in (0.0, 25.0, 100.0, 500.0)}

out = {
    "source": "scipy " + scipy.__version__,
    "seed": SEED,
    "x": X[:, 0].tolist(),
    "y": X[:, 1].tolist(),
    "nn1": d[:, 1].tolist(),
    "nn2": d[:, 2].tolist(),
    "nn3": d[:, 3].tolist(),
    "pairs_within": pairs,
}
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "index_reference.json"), "w") as fh:
    json.dump(out, fh)
print(len(X), "points; pairs within:", pairs)
