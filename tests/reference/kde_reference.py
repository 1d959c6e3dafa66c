"""Reference kernel intensities for tests/intensity.rs.

Writes kde_reference.json next to this script. Invented data: 150 events drawn
with numpy's default_rng(20240611) in a 2000 m x 1200 m rectangle, one third of
them in a blob near the lower-left corner so edge effects matter.

Grid: the one Cloister lays over that rectangle with 100 cells on the long
side: cell 20 m, nx = 100, ny = 60, cell centres at (10 + 20 i, 10 + 20 j),
row-major with row 0 at the bottom.

Values (events per m^2) at every cell centre, isotropic Gaussian kernel with
SD h = 60 m:
  * sklearn_raw: sklearn.neighbors.KernelDensity(kernel='gaussian',
    bandwidth=h).score_samples -> exp(.) * n (sklearn's density is the mean of
    N(x_i, h^2 I) densities, so times n is the raw intensity sum_i k_h(u - x_i));
  * scipy_raw: the same sum with scipy.stats.multivariate_normal(x_i, h^2 I).pdf;
  * scipy_gaussian_kde: scipy.stats.gaussian_kde(bw_method=h) * n with its data
    covariance replaced by the identity, so its kernel covariance is
    factor^2 * I = h^2 I (isotropic, as ours). This sets gaussian_kde's cached
    _data_covariance/_data_cho_cov (private names in scipy 1.17.1, pinned);
  * uniform: sklearn_raw / e(u), Diggle (1985) edge correction, with the exact
    rectangle edge factor e(u) = prod over axes of
    [Phi((b - u)/h) - Phi((a - u)/h)] (scipy.stats.norm.cdf);
  * jones_diggle: sum_i k_h(u - x_i) / e(x_i) (Jones 1993), same exact e.
Also the integrals over the rectangle of each (midpoint rule on the grid).
"""
import json
import os

import numpy as np
from scipy.stats import gaussian_kde, multivariate_normal, norm
from sklearn.neighbors import KernelDensity

rng = np.random.default_rng(20240611)
W = (0.0, 0.0, 2000.0, 1200.0)
n_blob, n_bg = 50, 100
blob = np.column_stack([rng.normal(150, 80, 3 * n_blob), rng.normal(120, 60, 3 * n_blob)])
inside = (blob[:, 0] > W[0]) & (blob[:, 0] < W[2]) & (blob[:, 1] > W[1]) & (blob[:, 1] < W[3])
blob = blob[inside][:n_blob]
bg = np.column_stack([rng.uniform(W[0], W[2], n_bg), rng.uniform(W[1], W[3], n_bg)])
X = np.vstack([blob, bg])
n = len(X)
h = 60.0
cell, nx, ny = 20.0, 100, 60
gx = W[0] + (np.arange(nx) + 0.5) * cell
gy = W[1] + (np.arange(ny) + 0.5) * cell
U = np.array([(x, y) for y in gy for x in gx])  # row-major, row 0 at the bottom

kd = KernelDensity(kernel="gaussian", bandwidth=h).fit(X)
sk_raw = np.exp(kd.score_samples(U)) * n
sp_raw = np.zeros(len(U))
for p in X:
    sp_raw += multivariate_normal(mean=p, cov=h * h * np.eye(2)).pdf(U)


class IsotropicKDE(gaussian_kde):
    """gaussian_kde with kernel covariance bw_method^2 * I."""

    def _compute_covariance(self):
        self._data_covariance = np.eye(self.d)
        self._data_cho_cov = np.eye(self.d)
        super()._compute_covariance()


gk = IsotropicKDE(X.T, bw_method=h)
assert np.allclose(gk.covariance, h * h * np.eye(2))
sp_kde = gk(U.T) * n


def e_rect(P):
    ex = norm.cdf((W[2] - P[:, 0]) / h) - norm.cdf((W[0] - P[:, 0]) / h)
    ey = norm.cdf((W[3] - P[:, 1]) / h) - norm.cdf((W[1] - P[:, 1]) / h)
    return ex * ey


uniform = sk_raw / e_rect(U)
ex = e_rect(X)
jd = np.zeros(len(U))
for p, e in zip(X, ex):
    d2 = ((U - p) ** 2).sum(axis=1)
    jd += np.exp(-d2 / (2 * h * h)) / (2 * np.pi * h * h) / e

A = cell * cell
out = {
    "source": "kde_reference.py (scikit-learn 1.9.1, scipy 1.17.1, numpy 2.4.6)",
    "window": list(W),
    "h": h,
    "cells_long_side": nx,
    "cell": cell,
    "nx": nx,
    "ny": ny,
    "x": X[:, 0].tolist(),
    "y": X[:, 1].tolist(),
    "sklearn_raw": sk_raw.tolist(),
    "scipy_raw": sp_raw.tolist(),
    "scipy_gaussian_kde": sp_kde.tolist(),
    "uniform": uniform.tolist(),
    "jones_diggle": jd.tolist(),
    "integral_raw": float(sk_raw.sum() * A),
    "integral_uniform": float(uniform.sum() * A),
    "integral_jones_diggle": float(jd.sum() * A),
}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "kde_reference.json"), "w") as f:
    json.dump(out, f)
print("n =", n, "integrals raw/uniform/JD:", out["integral_raw"], out["integral_uniform"], out["integral_jones_diggle"])
