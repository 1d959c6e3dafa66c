"""Reference values for src/distance/ (clustering tests), from shapely and scipy.

Writes tests/reference/clustering_reference.json. Run from the repository root:
    python3 tests/reference/clustering_reference.py

Contents (all inputs invented; seed below):
* `isotropic`: for ~200 seeded (point, r) pairs on an invented polygon with a
  hole, the length of the circle of radius r about the point that lies inside
  the polygon: `Point(x).buffer(r, quad_segs=1024).exterior.intersection(W).length`
  (docs/methods.md#distance-functions; the 4096-gon approximation is ~1e-7 relative below the circle).
* `translation`: for ~60 seeded shifts v, the set covariance
  `W.intersection(shapely.affinity.translate(W, dx, dy)).area` and the
  translation weight |W| / that area (Ohser & Stoyan 1981).
* `chi2`: scipy.stats.chi2.sf / .cdf at several (x, df); the quadrat check
  values of docs/methods.md#quadrat via scipy.stats.chisquare (Q9, equal cells) and via the
  direct formula with expected counts proportional to area (unequal cells).
* `normal`: scipy.stats.norm.cdf / .sf at several z (Clark–Evans p-values).
* `calibration`: scipy.stats.binom.interval(0.99, 200, 0.05): the central 99 %
  range of the number of rejections among 200 independent level-0.05 tests.
"""
import json
import math
import os

import numpy as np
import shapely
from scipy import stats
from shapely import affinity
from shapely.geometry import Point, Polygon

SEED = 20261202
rng = np.random.default_rng(SEED)

outer = [(0, 0), (100, 0), (100, 70), (60, 100), (0, 100)]
hole = [(40, 40), (55, 40), (50, 60)]
W = Polygon(outer, [hole])

iso = []
while len(iso) < 200:
    x, y = rng.uniform(0, 100, 2)
    if not shapely.contains_xy(W, x, y):
        continue
    r = float(rng.uniform(0.5, 45.0))
    arc = Point(x, y).buffer(r, quad_segs=1024).exterior.intersection(W).length
    if arc <= 0:
        continue
    iso.append({"x": float(x), "y": float(y), "r": r, "arc_inside": float(arc)})

trans = []
reach = 30.0
while len(trans) < 60:
    dx, dy = rng.uniform(-reach, reach, 2)
    if dx * dx + dy * dy > reach * reach:
        continue
    g = W.intersection(affinity.translate(W, dx, dy)).area
    trans.append({"dx": float(dx), "dy": float(dy), "gamma": float(g), "weight": float(W.area / g)})

chi2 = [
    {"x": x, "df": df, "sf": float(stats.chi2.sf(x, df)), "cdf": float(stats.chi2.cdf(x, df))}
    for x, df in [(13.6, 8), (2.8611, 3), (0.5, 1), (30.0, 15), (101.3, 80), (3.2, 9)]
]
q9 = [3, 5, 2, 8, 7, 5, 1, 4, 10]
cs = stats.chisquare(q9)
counts = np.array([4, 6, 5, 15.0])
areas = np.array([1, 2, 3, 4.0])
expected = counts.sum() * areas / areas.sum()
x2 = float(((counts - expected) ** 2 / expected).sum())
quadrat = {
    "q9": {"counts": q9, "statistic": float(cs.statistic), "p_upper": float(cs.pvalue),
           "p_lower": float(stats.chi2.cdf(cs.statistic, 8))},
    "unequal": {"counts": counts.astype(int).tolist(), "areas": areas.tolist(), "statistic": x2,
                "p_upper": float(stats.chi2.sf(x2, 3))},
}
normal = [{"z": z, "cdf": float(stats.norm.cdf(z)), "sf": float(stats.norm.sf(z))}
          for z in (-4.1890, -3.8261, -1.0, 0.0, 0.7, 2.5)]
lo, hi = stats.binom.interval(0.99, 200, 0.05)
out = {
    "seed": SEED,
    "polygon": [[list(map(float, p)) for p in outer], [list(map(float, p)) for p in hole]],
    "area": W.area,
    "isotropic": iso,
    "translation": trans,
    "chi2": chi2,
    "quadrat": quadrat,
    "normal": normal,
    "calibration": {"trials": 200, "alpha": 0.05, "level": 0.99,
                    "rejections_low": int(lo), "rejections_high": int(hi)},
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "clustering_reference.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
print("wrote", path, "| binomial 99% interval of rejections:", lo, hi)
