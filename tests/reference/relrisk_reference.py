"""Reference log relative risk for tests/relative_risk.rs.

Writes relrisk_reference.json next to this script. Invented data, drawn with
numpy's default_rng(20261203) in a 1000 m x 1000 m square: 40 controls
spread evenly plus 20 more in a blob near the lower-left corner (so the edge
matters), and 30 cases, a third of them in a blob near the upper-right.

Grid: the one Cloister lays over that square with 50 cells on the long side:
cell 20 m, cell centres at (10 + 20 i, 10 + 20 j), row-major with row 0 at
the bottom. Common isotropic Gaussian kernel, SD h = 100 m.

Log relative risk rho(u) = ln f1(u) - ln f0(u), f = lambda / integral over
the square of lambda (Bithell 1990; Kelsall & Diggle 1995):
  * none: lambda(u) = sum_i k_h(u - x_i) with
    scipy.stats.multivariate_normal(x_i, h^2 I).pdf, and its integral over
    the square exact, sum_i prod over axes [Phi((b - x_i)/h) - Phi((a - x_i)/h)]
    (scipy.stats.norm.cdf);
  * uniform: lambda(u) / e(u) (Diggle 1985), e(u) = prod over axes
    [Phi((b - u)/h) - Phi((a - u)/h)]; its integral by the midpoint rule on the
    grid (there is no closed form).
Values at every other cell in each direction (i, j even): 625 cells.
"""
import json
import os

import numpy as np
from scipy.stats import multivariate_normal, norm

rng = np.random.default_rng(20261203)
A, B = 0.0, 1000.0
H = 100.0
CELL = 20.0
N = 50


def clip_in(p):
    keep = (p[:, 0] > A + 1) & (p[:, 0] < B - 1) & (p[:, 1] > A + 1) & (p[:, 1] < B - 1)
    return p[keep]


controls = np.vstack([
    rng.uniform(A + 5, B - 5, (40, 2)),
    clip_in(np.column_stack([rng.normal(120, 70, 60), rng.normal(150, 70, 60)]))[:20],
])
cases = np.vstack([
    rng.uniform(A + 5, B - 5, (20, 2)),
    clip_in(np.column_stack([rng.normal(820, 60, 40), rng.normal(780, 60, 40)]))[:10],
])
assert len(controls) == 60 and len(cases) == 30
# The coordinates as written to the JSON (millimetres) are the ones used.
controls, cases = controls.round(3), cases.round(3)

c = A + CELL * (np.arange(N) + 0.5)
gx, gy = np.meshgrid(c, c)  # gx[j, i] = x of column i; row j = y
U = np.column_stack([gx.ravel(), gy.ravel()])  # index j * N + i


def raw(points):
    return sum(multivariate_normal(p, H * H * np.eye(2)).pdf(U) for p in points)


def mass_inside(points):
    ex = norm.cdf((B - points[:, 0]) / H) - norm.cdf((A - points[:, 0]) / H)
    ey = norm.cdf((B - points[:, 1]) / H) - norm.cdf((A - points[:, 1]) / H)
    return float(np.sum(ex * ey))


e_u = (norm.cdf((B - U[:, 0]) / H) - norm.cdf((A - U[:, 0]) / H)) * (
    norm.cdf((B - U[:, 1]) / H) - norm.cdf((A - U[:, 1]) / H))

l1, l0 = raw(cases), raw(controls)
rho_none = np.log(l1 / mass_inside(cases)) - np.log(l0 / mass_inside(controls))
u1, u0 = l1 / e_u, l0 / e_u
rho_uniform = np.log(u1 / (u1.sum() * CELL * CELL)) - np.log(u0 / (u0.sum() * CELL * CELL))

sel = [j * N + i for j in range(0, N, 2) for i in range(0, N, 2)]
out = {
    "source": "tests/reference/relrisk_reference.py (numpy, scipy.stats.multivariate_normal, scipy.stats.norm)",
    "window": [A, A, B, B],
    "cells": N,
    "bandwidth_m": H,
    "cases": cases.tolist(),
    "controls": controls.tolist(),
    "cell_index": sel,
    "rho_none": [round(float(rho_none[k]), 10) for k in sel],
    "rho_uniform": [round(float(rho_uniform[k]), 10) for k in sel],
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "relrisk_reference.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
print("wrote", path)
