"""Independent checks of the invented demo data in demo-data/, with shapely and pyproj.

Writes tests/reference/demo_data_check.json, which tests/demo_files.rs compares with
its own (Rust, hand-written) point-in-polygon, area and distance computations.

    python3 tests/reference/demo_data_check.py

Oracles:
* shapely (GEOS) for containment, polygon validity, planar area and boundary distance;
* pyproj.Geod(ellps="WGS84") (Karney 2013, "Algorithms for geodesics", J. Geodesy 87:43-55)
  for geodesic distances and the geodesic area of the study area.
"""

import csv
import json
import math
import os

import numpy as np
import pyproj
import shapely
from shapely.geometry import Point, Polygon, shape

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))
DATA = os.path.join(ROOT, "demo-data")

# The invented local grid, as documented in demo-data/README.md.
LON0, LAT0, R = -32.0, -41.5, 6371008.8
FE, FN = 20000.0, 20000.0


def local(lon, lat):
    k = math.pi / 180.0 * R
    return ((lon - LON0) * k * math.cos(math.radians(LAT0)), (lat - LAT0) * k)


def read_csv(name):
    with open(os.path.join(DATA, name), newline="", encoding="utf-8") as f:
        return list(csv.reader(f))


def main():
    with open(os.path.join(DATA, "town-boundary.geojson"), encoding="utf-8") as f:
        gj = json.load(f)
    poly_ll = shape(gj["features"][0]["geometry"])
    outer_ll = Polygon(poly_ll.exterior)
    lake_ll = Polygon(poly_ll.interiors[0])
    poly_m = shapely.transform(
        poly_ll, lambda c: np.column_stack(local(c[:, 0], c[:, 1]))
    )

    cases = read_csv("cases.csv")[1:]
    pop = read_csv("population.csv")[1:]

    def classify(rows, lon_i, lat_i):
        inside = in_lake = outside = 0
        min_edge = math.inf
        for r in rows:
            lon, lat = float(r[lon_i]), float(r[lat_i])
            p = Point(lon, lat)
            if poly_ll.contains(p):
                inside += 1
                q = Point(*local(lon, lat))
                min_edge = min(min_edge, poly_m.boundary.distance(q))
            elif lake_ll.contains(p):
                in_lake += 1
            else:
                outside += 1
        return {
            "inside": inside,
            "in_lake": in_lake,
            "outside_town": outside,
            "min_distance_to_any_edge_m": round(min_edge, 3),
        }

    # Problems file: which rows have readable coordinates that fall outside the study area.
    problems = read_csv("cases-with-problems.csv")
    area_rejects = []
    for row_no, r in enumerate(problems[1:], start=2):
        try:
            lon, lat = float(r[1]), float(r[2])
        except (ValueError, IndexError):
            continue
        if not (math.isfinite(lon) and math.isfinite(lat)):
            continue
        if abs(lon) > 180 or abs(lat) > 90:
            continue
        p = Point(lon, lat)
        if not poly_ll.contains(p):
            area_rejects.append(
                {"row": row_no, "where": "lake" if lake_ll.contains(p) else "outside town"}
            )

    # Geodesic vs local-grid distances for the planted pairs and between cluster centres.
    geod = pyproj.Geod(ellps="WGS84")
    with open(os.path.join(DATA, "planted-truth.json"), encoding="utf-8") as f:
        truth = json.load(f)
    by_id = {r[0]: (float(r[1]), float(r[2])) for r in cases}
    pair_checks = []
    for kind in ("near_repeats", "coincident"):
        for pr in truth[kind]["pairs"]:
            (lo1, la1), (lo2, la2) = by_id[pr["source"]], by_id[pr["added"]]
            _, _, d_geo = geod.inv(lo1, la1, lo2, la2)
            (x1, y1), (x2, y2) = local(lo1, la1), local(lo2, la2)
            pair_checks.append(
                {
                    "kind": kind,
                    "source": pr["source"],
                    "added": pr["added"],
                    "geodesic_m": round(d_geo, 3),
                    "grid_m": round(math.hypot(x2 - x1, y2 - y1), 3),
                }
            )
    centres = [
        (c["label"], c["centre_lonlat"]["longitude"], c["centre_lonlat"]["latitude"])
        for c in truth["clusters"]
    ]
    centre_checks = []
    for i in range(len(centres)):
        for j in range(i + 1, len(centres)):
            a, b = centres[i], centres[j]
            _, _, d_geo = geod.inv(a[1], a[2], b[1], b[2])
            (x1, y1), (x2, y2) = local(a[1], a[2]), local(b[1], b[2])
            d_grid = math.hypot(x2 - x1, y2 - y1)
            centre_checks.append(
                {
                    "pair": a[0] + b[0],
                    "geodesic_m": round(d_geo, 3),
                    "grid_m": round(d_grid, 3),
                    "relative_difference": round((d_grid - d_geo) / d_geo, 6),
                }
            )

    geo_area, _ = geod.geometry_area_perimeter(poly_ll)

    # Distance from the town centre to land, with land coordinates given from memory
    # (approximate; only to support the README's "open ocean" statement).
    land_from_memory = {
        "Gough Island (approx. 9.9 W, 40.3 S)": (-9.9, -40.3),
        "Tristan da Cunha (approx. 12.3 W, 37.1 S)": (-12.3, -37.1),
        "Atlantic coast of South America at 41.5 S (approx. 65.0 W)": (-65.0, -41.5),
    }
    land = {
        k: round(geod.inv(LON0, LAT0, lo, la)[2] / 1000.0, 1)
        for k, (lo, la) in land_from_memory.items()
    }

    out = {
        "source": "tests/reference/demo_data_check.py",
        "versions": {"shapely": shapely.__version__, "pyproj": pyproj.__version__},
        "polygon_is_valid": bool(poly_ll.is_valid),
        "outer_vertices_without_closing": len(poly_ll.exterior.coords) - 1,
        "lake_vertices_without_closing": len(poly_ll.interiors[0].coords) - 1,
        "outer_is_ccw": bool(poly_ll.exterior.is_ccw),
        "lake_is_ccw": bool(poly_ll.interiors[0].is_ccw),
        "lake_within_outer": bool(outer_ll.contains(lake_ll)),
        "grid_area_km2": {
            "outer": round(Polygon(poly_m.exterior).area / 1e6, 6),
            "lake": round(Polygon(poly_m.interiors[0]).area / 1e6, 6),
            "net": round(poly_m.area / 1e6, 6),
        },
        "geodesic_net_area_km2": round(abs(geo_area) / 1e6, 6),
        "cases": classify(cases, 1, 2),
        "population": classify(pop, 0, 1),
        "problems_outside_study_area": area_rejects,
        "planted_pair_distances": pair_checks,
        "cluster_centre_distances": centre_checks,
        "distance_to_land_km_from_memory_coordinates": land,
    }
    path = os.path.join(HERE, "demo_data_check.json")
    with open(path, "w", encoding="utf-8") as f:
        json.dump(out, f, indent=2, sort_keys=True)
        f.write("\n")
    print("wrote", path)


if __name__ == "__main__":
    main()
