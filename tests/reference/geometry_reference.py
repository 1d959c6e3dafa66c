"""Reference values for src/window.rs, computed with shapely (GEOS).

Writes tests/reference/geometry_reference.json. Run from the repository root:
    python3 tests/reference/geometry_reference.py

For four invented polygons (a polygon with a hole, a two-part MultiPolygon
with a hole in one part, a concave polygon, and a 1000-vertex star that
exercises the banded edge index), it records
* area (`geom.area`) and perimeter (`geom.length`, which includes holes),
* for ~500 seeded random points in and around each one: containment with the
  boundary counted as inside (`geom.covers(point)`), and the distance to the
  boundary (`geom.boundary.distance(point)`),
* the vertices themselves as extra points (boundary distance exactly 0),
* for the two small polygons, every point of the half-unit lattice over
  [-1, 11]^2 (rounded coordinates on edges and level with vertices).
"""
import json
import math
import os

import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Point, Polygon

SEED = 424242
rng = np.random.default_rng(SEED)

hole_poly = Polygon(
    [(0, 0), (10, 0), (10, 10), (0, 10)],
    [[(4, 4), (6, 4), (6, 6), (4, 6)]],
)
multi = MultiPolygon(
    [
        Polygon([(100.5, 20.25), (180.0, 22.0), (175.0, 90.0), (110.0, 85.5)],
                [[(130.0, 40.0), (150.0, 45.0), (140.0, 60.0)]]),
        Polygon([(200.0, 0.0), (260.0, 10.0), (230.0, 50.0)]),
    ]
)
concave = Polygon(
    [(0, 0), (8, 0), (8, 8), (5, 8), (5, 3), (3, 3), (3, 8), (0, 8), (1.5, 4)]
)
# 1000-vertex star: radius alternating between 1000 and 600 m.
star_pts = []
for k in range(1000):
    t = 2 * math.pi * k / 1000
    r = 1000.0 if k % 2 == 0 else 600.0 + 150.0 * math.sin(7 * t)
    star_pts.append((5000.0 + r * math.cos(t), -3000.0 + r * math.sin(t)))
star = Polygon(star_pts)


def rings_of(poly):
    return [[list(c) for c in poly.exterior.coords]] + [
        [list(c) for c in h.coords] for h in poly.interiors
    ]


def polygons_of(geom):
    if isinstance(geom, MultiPolygon):
        return [rings_of(p) for p in geom.geoms]
    return [rings_of(geom)]


cases = []
for name, geom in [("hole", hole_poly), ("multipolygon", multi), ("concave", concave), ("star1000", star)]:
    assert geom.is_valid, name
    minx, miny, maxx, maxy = geom.bounds
    w, h = maxx - minx, maxy - miny
    xs = rng.uniform(minx - 0.1 * w, maxx + 0.1 * w, 500)
    ys = rng.uniform(miny - 0.1 * h, maxy + 0.1 * h, 500)
    pts = [(float(x), float(y)) for x, y in zip(xs, ys)]
    # Vertices (exactly on the boundary).
    for poly in polygons_of(geom):
        for ring in poly:
            pts.extend((c[0], c[1]) for c in ring[:-1][:20])
    # Rounded coordinates: a half-unit lattice over the small polygons puts
    # points on edges and on horizontal lines through vertices (the hard
    # cases for ray casting).
    if name in ("hole", "concave"):
        pts.extend((i * 0.5, j * 0.5) for i in range(-2, 23) for j in range(-2, 23))
    boundary = geom.boundary
    points = []
    for x, y in pts:
        p = Point(x, y)
        points.append(
            {"x": x, "y": y, "covers": bool(geom.covers(p)), "boundary_distance": boundary.distance(p)}
        )
    cases.append(
        {
            "name": name,
            "polygons": polygons_of(geom),
            "area": geom.area,
            "perimeter": geom.length,
            "points": points,
        }
    )
    print(name, geom.area, geom.length, sum(q["covers"] for q in points), "of", len(points), "inside")

out = {"source": "shapely " + shapely.__version__ + ", GEOS " + shapely.geos_version_string, "seed": SEED, "cases": cases}
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "geometry_reference.json"), "w") as fh:
    json.dump(out, fh)
