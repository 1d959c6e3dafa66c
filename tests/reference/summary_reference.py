"""Reference values for src/summary.rs, computed with numpy and scipy.

Writes tests/reference/summary_reference.json. Run from the repository root:
    python3 tests/reference/summary_reference.py

For a seeded, elongated point set in metres (a rotated Gaussian cloud plus a
uniform background and three exact repeats):
* mean centre: `X.mean(axis=0)`;
* standard distance with denominator n: sqrt(sum of squared distances to the
  mean centre / n);
* ellipse: `numpy.linalg.eigh(numpy.cov(X.T, bias=True))` (bias=True gives the
  denominator n); semi-axes are the square roots of the eigenvalues (one
  standard deviation along each principal axis) and the angle is that of the
  eigenvector of the largest eigenvalue, counter-clockwise from the x axis,
  folded into [0, 180) degrees;
* nearest-neighbour distances: `scipy.spatial.cKDTree(X).query(X, k=2)[0][:, 1]`,
  then min, median (numpy: mean of the two middle values for even n), mean, max.
"""
import json
import math
import os

import numpy as np
import scipy
from scipy.spatial import cKDTree

SEED = 99017
rng = np.random.default_rng(SEED)

theta = math.radians(32.0)
R = np.array([[math.cos(theta), -math.sin(theta)], [math.sin(theta), math.cos(theta)]])
cloud = rng.normal(0, 1, size=(400, 2)) * [900.0, 250.0] @ R.T + [52_000.0, -18_000.0]
background = rng.uniform([48_000, -22_000], [56_000, -14_000], size=(100, 2))
X = np.vstack([cloud, background, cloud[:3]])
n = len(X)

mean = X.mean(axis=0)
sd = math.sqrt(((X - mean) ** 2).sum() / n)
C = np.cov(X.T, bias=True)
w, v = np.linalg.eigh(C)  # ascending
major = v[:, 1]
angle = math.degrees(math.atan2(major[1], major[0])) % 180.0
d = cKDTree(X).query(X, k=2)[0][:, 1]

out = {
    "source": "numpy " + np.__version__ + ", scipy " + scipy.__version__,
    "seed": SEED,
    "x": X[:, 0].tolist(),
    "y": X[:, 1].tolist(),
    "mean_x": mean[0],
    "mean_y": mean[1],
    "standard_distance": sd,
    "semi_major": math.sqrt(w[1]),
    "semi_minor": math.sqrt(w[0]),
    "angle_deg": angle,
    "nn_min": float(d.min()),
    "nn_median": float(np.median(d)),
    "nn_mean": float(d.mean()),
    "nn_max": float(d.max()),
}
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "summary_reference.json"), "w") as fh:
    json.dump(out, fh)
print({k: v for k, v in out.items() if k not in ("x", "y")})
