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

Invalid study areas ("invalid"): for invented rings and MultiPolygons that
break the OGC Simple Features rules, shapely's `is_valid`, the place GEOS
names in `explain_validity` (for single rings with one crossing), the sum of
the parts' areas and the area of their union (`shapely.unary_union`, the
repair the window applies to overlapping parts).

Large lon/lat areas ("lonlat"): for an invented 3° x 3° lon/lat rectangle
an invented polar cap (latitude 80° to the pole, all longitudes) and an
invented 24° x 10° rectangle ("wide"), the
area on the WGS 84 ellipsoid from pyproj.Geod (Karney's geodesic polygon
area), with each straight lon/lat edge first cut into 0.001° pieces so that
the geodesic pieces follow it (RFC 7946: GeoJSON edges are straight in
lon/lat).
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

import re

import pyproj


def invalid_case(name, geom_parts):
    """geom_parts: list of Polygons (one = a Polygon, several = a MultiPolygon)."""
    geom = geom_parts[0] if len(geom_parts) == 1 else MultiPolygon(geom_parts)
    why = shapely.validation.explain_validity(geom)
    m = re.search(r"\[([-0-9.e]+) ([-0-9.e]+)\]", why)
    union = shapely.unary_union(geom_parts)
    return {
        "name": name,
        "polygons": [rings_of(p) for p in geom_parts],
        "is_valid": bool(geom.is_valid),
        "explain": why,
        "at": [float(m.group(1)), float(m.group(2))] if m else None,
        "sum_of_areas": float(sum(p.area for p in geom_parts)),
        "union_area": float(union.area),
    }


import shapely.validation  # noqa: E402

sq = Polygon([(0, 0), (10, 0), (10, 10), (0, 10)])
hexa = [(0, 0), (6, -1), (11, 2), (10, 8), (4, 10), (-1, 5)]
swapped = list(hexa)
swapped[1], swapped[2] = swapped[2], swapped[1]
invalid = [
    invalid_case("duplicate_parts", [sq, Polygon(sq.exterior.coords)]),
    invalid_case("overlapping_parts", [sq, Polygon([(6, 3), (16, 4), (15, 12), (7, 11)])]),
    invalid_case("nested_part", [sq, Polygon([(2, 2), (4, 2), (3, 5)])]),
    invalid_case("shared_edge_parts", [sq, Polygon([(10, 0), (20, 0), (20, 10), (10, 10)])]),
    invalid_case("swapped_vertices", [Polygon(swapped)]),
    invalid_case("bow_tie", [Polygon([(0, 0), (10, 10), (10, 0), (0, 6)])]),
    invalid_case("symmetric_bow_tie", [Polygon([(0, 0), (10, 10), (10, 0), (0, 10)])]),
    invalid_case("valid_hexagon", [Polygon(hexa)]),
]
for c in invalid:
    print(c["name"], c["is_valid"], c["explain"], c["sum_of_areas"], c["union_area"])

geod = pyproj.Geod(ellps="WGS84")


def lonlat_area(ring, step=0.001):
    lons, lats = [], []
    for (x0, y0), (x1, y1) in zip(ring[:-1], ring[1:]):
        n = max(1, int(math.ceil(max(abs(x1 - x0), abs(y1 - y0)) / step)))
        for k in range(n):
            t = k / n
            lons.append(x0 + t * (x1 - x0))
            lats.append(y0 + t * (y1 - y0))
    area, _ = geod.polygon_area_perimeter(lons, lats)
    return abs(area)


rect = [[20.0, 40.0], [23.0, 40.0], [23.0, 43.0], [20.0, 43.0], [20.0, 40.0]]
cap = [[-180.0, 80.0], [-90.0, 80.0], [0.0, 80.0], [90.0, 80.0], [180.0, 80.0], [180.0, 90.0], [-180.0, 90.0], [-180.0, 80.0]]
wide = [[0.0, 50.0], [24.0, 50.0], [24.0, 60.0], [0.0, 60.0], [0.0, 50.0]]
lonlat = {
    "rectangle": {"ring": rect, "ellipsoid_area": lonlat_area(rect),
                  # 0.0005° of latitude (about 55 m) inside the southern edge, at its middle.
                  "inside_south": [21.5, 40.0005]},
    "polar_cap": {"ring": cap, "ellipsoid_area": lonlat_area(cap)},
    "wide": {"ring": wide, "ellipsoid_area": lonlat_area(wide)},
}
print("lonlat", lonlat["rectangle"]["ellipsoid_area"], lonlat["polar_cap"]["ellipsoid_area"])

out = {
    "source": "shapely " + shapely.__version__ + ", GEOS " + shapely.geos_version_string
    + ", pyproj " + pyproj.__version__,
    "seed": SEED,
    "cases": cases,
    "invalid": invalid,
    "lonlat": lonlat,
}
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "geometry_reference.json"), "w") as fh:
    json.dump(out, fh)
