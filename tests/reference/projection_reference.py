"""Reference values for src/projection.rs, computed with pyproj (PROJ).

Writes tests/reference/projection_reference.json. Run from the repository root:
    python3 tests/reference/projection_reference.py

* Forward projection of seeded random points around four invented centres
  (northern, southern, equatorial, and one next to the ±180° meridian), with
  PROJ's transverse Mercator `+proj=tmerc +lat_0=.. +lon_0=.. +k=1 +x_0=0
  +y_0=0 +ellps=WGS84 +units=m` (default algorithm: Poder/Engsager, a Krüger
  series as in Karney 2011, J. Geodesy 85:475-485).
* Point scale factors k from pyproj `Proj.get_factors` (meridional scale).
* Planar vs geodesic distance: for pairs of points at about 10, 100 and 300 km
  from each other around each centre, the geodesic distance from
  `pyproj.Geod(ellps='WGS84').inv` (Karney 2013, J. Geodesy 87:43-55) and the
  planar distance after the projection above. The largest absolute and
  relative error per scale is written out so the README can quote it.
"""
import json
import math
import os

import numpy as np
import pyproj

SEED = 20260311
rng = np.random.default_rng(SEED)
geod = pyproj.Geod(ellps="WGS84")

# Invented centres (no real places intended).
CENTRES = [
    (9.0, 45.0),
    (-63.25, -38.5),
    (101.7, 1.2),
    (179.6, -17.3),
]


def tm(lon0, lat0):
    return pyproj.Proj(
        f"+proj=tmerc +lat_0={lat0!r} +lon_0={lon0!r} +k=1 +x_0=0 +y_0=0 +ellps=WGS84 +units=m"
    )


def wrap(lon):
    return (lon + 180.0) % 360.0 - 180.0


points = []
for lon0, lat0 in CENTRES:
    p = tm(lon0, lat0)
    for _ in range(25):
        # Random azimuth and distance up to 300 km from the centre, on the ellipsoid.
        az = rng.uniform(0, 360)
        dist = rng.uniform(0, 300_000)
        lon, lat, _ = geod.fwd(lon0, lat0, az, dist)
        lon = wrap(lon)
        e, n = p(lon, lat)
        f = p.get_factors(lon, lat)
        points.append(
            {
                "lon0": lon0,
                "lat0": lat0,
                "lon": lon,
                "lat": lat,
                "e": e,
                "n": n,
                "k": f.meridional_scale,
            }
        )

scales = []
for scale_m in (10_000.0, 100_000.0, 300_000.0):
    pairs = []
    for lon0, lat0 in CENTRES:
        p = tm(lon0, lat0)
        for _ in range(10):
            # First point within scale/2 of the centre, second at 'scale' from the first,
            # so both lie within 1.5*scale of the centre.
            az0 = rng.uniform(0, 360)
            d0 = rng.uniform(0, scale_m / 2)
            lon1, lat1, _ = geod.fwd(lon0, lat0, az0, d0)
            az = rng.uniform(0, 360)
            lon2, lat2, _ = geod.fwd(lon1, lat1, az, scale_m)
            lon1, lon2 = wrap(lon1), wrap(lon2)
            _, _, dg = geod.inv(lon1, lat1, lon2, lat2)
            e1, n1 = p(lon1, lat1)
            e2, n2 = p(lon2, lat2)
            dp = math.hypot(e2 - e1, n2 - n1)
            pairs.append(
                {
                    "lon0": lon0,
                    "lat0": lat0,
                    "lon1": lon1,
                    "lat1": lat1,
                    "lon2": lon2,
                    "lat2": lat2,
                    "geodesic_m": dg,
                    "planar_m": dp,
                }
            )
    abs_err = [abs(q["planar_m"] - q["geodesic_m"]) for q in pairs]
    rel_err = [abs(q["planar_m"] - q["geodesic_m"]) / q["geodesic_m"] for q in pairs]
    scales.append(
        {
            "description": (
                f"40 pairs {scale_m/1000:.0f} km apart (geodesic), first point within "
                f"{scale_m/2000:.0f} km of one of the 4 centres; planar = distance after the "
                "centred transverse Mercator (k0 = 1)"
            ),
            "scale_m": scale_m,
            "max_abs_error_m": max(abs_err),
            "max_rel_error": max(rel_err),
            "pairs": pairs,
        }
    )

out = {
    "source": "pyproj " + pyproj.__version__ + ", PROJ " + pyproj.proj_version_str,
    "seed": SEED,
    "points": points,
    "distance_scales": scales,
}
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "projection_reference.json"), "w") as fh:
    json.dump(out, fh, indent=1)
for s in scales:
    print(
        f"scale {s['scale_m']/1000:.0f} km: max |planar - geodesic| = {s['max_abs_error_m']:.3f} m"
        f" ({100*s['max_rel_error']:.4f} %)"
    )
