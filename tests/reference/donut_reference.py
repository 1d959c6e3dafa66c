"""Reference values for the donut-masking tests (tests/privacy.rs).

Writes donut_reference.json next to this script. Run: python3 donut_reference.py

Contents
* ks_critical: the two-sided one-sample Kolmogorov–Smirnov critical value for
  n = 2000 at alpha = 0.001, from scipy.stats.kstwo (the exact distribution of
  the KS statistic D_n; Simard & L'Ecuyer 2011 method inside scipy).
* ks_samples: fixed samples (numpy, seeded) and the KS statistic D that
  scipy.stats.kstest computes for them against the exact CDF of each donut
  design, so the Rust KS implementation is checked on the same numbers.
* design: mean and median of the displacement distance for (100, 500) m
  by numerical integration / root finding with scipy (docs/methods.md#privacy check
  values: 300.000 vs 344.444 and 300 vs 360.555; Hampton et al. 2010 design).
* r_min: sqrt(k / (pi D)) for D = 1000 per km^2, k = 50 (126.16 m,
  docs/methods.md#privacy) and with the Allshouse et al. (2010) tripled area (218.51 m).
"""

import json
import math
import os

import numpy as np
from scipy import integrate, optimize, stats

A, B = 100.0, 500.0


def cdf_area(d):
    d = np.clip(d, A, B)
    return (d * d - A * A) / (B * B - A * A)


def cdf_dist(d):
    d = np.clip(d, A, B)
    return (d - A) / (B - A)


def pdf_area(d):
    return 2 * d / (B * B - A * A)


def pdf_dist(d):
    return 1.0 / (B - A)


out = {"r_min_m": A, "r_max_m": B, "n": 2000, "alpha": 0.001}
out["ks_critical"] = float(stats.kstwo.isf(0.001, 2000))

rng = np.random.default_rng(20240611)
samples = []
for law, cdf in (("area_uniform", cdf_area), ("distance_uniform", cdf_dist)):
    # one sample from the design itself, one from the other law (should differ)
    u = rng.random(200)
    own = np.sqrt(A * A + u * (B * B - A * A)) if law == "area_uniform" else A + u * (B - A)
    other = A + u * (B - A) if law == "area_uniform" else np.sqrt(A * A + u * (B * B - A * A))
    for name, s in (("own", own), ("other", other)):
        r = stats.kstest(s, cdf)
        samples.append(
            {"law": law, "kind": name, "sample": [float(v) for v in s],
             "d": float(r.statistic), "p": float(r.pvalue)}
        )
out["ks_samples"] = samples

design = {}
for law, pdf, cdf in (("area_uniform", pdf_area, cdf_area), ("distance_uniform", pdf_dist, cdf_dist)):
    mean = integrate.quad(lambda d: d * pdf(d), A, B)[0]
    median = optimize.brentq(lambda d: cdf(d) - 0.5, A, B, xtol=1e-12)
    design[law] = {"mean": mean, "median": median}
out["design"] = design

out["r_min"] = {
    "density_per_km2": 1000.0,
    "k": 50,
    "r_min_m": math.sqrt(50 / (math.pi * 1000 / 1e6)),
    "r_min_tripled_area_m": math.sqrt(3 * 50 / (math.pi * 1000 / 1e6)),
}

here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "donut_reference.json"), "w") as f:
    json.dump(out, f, indent=1)
print("ks_critical", out["ks_critical"], "design", design, "r_min", out["r_min"])
