"""Intake of one large lon/lat CSV: ours natively against pandas + pyproj, side by side.

Run from the repository root:
    python3 bench/intake_vs_pandas.py [ROWS] [OTHER_BENCH_INTAKE]   (default 1,000,000 rows)

OTHER_BENCH_INTAKE: optionally, the bench_intake example built from another
commit (with this commit's examples/bench_intake.rs), timed in the same run
for a before/after comparison.

It builds the release example, writes the benchmark's CSV once (the same
seeded rows as `examples/bench_intake.rs`: id, longitude, latitude, date,
category; target/bench-data/intake-<ROWS>.csv), then in this one run times,
best of 3 each, wall clock:
* ours: `bench_intake file FILE`, i.e. reading the file from disk, parsing
  and checking every row, choosing the projection, projecting to metres,
  the study area drawn around the events, the summary (centre, ellipse,
  nearest-neighbour distances, dates, categories);
* pandas + pyproj: `pandas.read_csv(FILE)`, the centre of the data (middle
  of the longitude and latitude ranges, as ours) and a
  `pyproj.Transformer` from WGS 84 longitude/latitude to the transverse
  Mercator centred there (k0 = 1, no false easting/northing, as ours),
  applied to all rows. This does less than ours (no checks, no area, no
  summary); the ratio is ours / theirs.
It then checks that the two projections agree: the largest distance, in
metres, between our projected events (written by the example) and pyproj's.
The machine's load (from /proc/loadavg) is printed with the figures.
"""
import json
import os
import subprocess
import sys
import time

import numpy as np
import pandas as pd
import pyproj

rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
path = f"target/bench-data/intake-{rows}.csv"
os.makedirs("target/bench-data", exist_ok=True)
subprocess.run(["cargo", "build", "--quiet", "--release", "--example", "bench_intake"], check=True)
example = "target/release/examples/bench_intake"
if not os.path.exists(path):
    subprocess.run([example, "write", path, str(rows)], check=True)


def load():
    with open("/proc/loadavg") as f:
        return f.read().split()[0]


print(f"file {path}: {os.path.getsize(path) / 1e6:.1f} MB, {rows} rows; load average {load()}")

# Ours: the example times three runs in its own process and reports the best.
ours = json.loads(
    subprocess.run([example, "file", path], check=True, capture_output=True, text=True).stdout
)


# Our projected events, read before another build writes its own.
xy = np.fromfile(path + ".xy", dtype="<f8")
other = None
if len(sys.argv) > 2:
    other = json.loads(
        subprocess.run([sys.argv[2], "file", path], check=True, capture_output=True,
                       text=True).stdout
    )


def pandas_pyproj():
    t0 = time.perf_counter()
    df = pd.read_csv(path)
    lon = df["longitude"].to_numpy()
    lat = df["latitude"].to_numpy()
    lon0 = float((lon.min() + lon.max()) / 2.0)
    lat0 = float((lat.min() + lat.max()) / 2.0)
    tm = pyproj.CRS.from_proj4(
        f"+proj=tmerc +lat_0={lat0!r} +lon_0={lon0!r} +k=1 +x_0=0 +y_0=0 +ellps=WGS84 +units=m"
    )
    tr = pyproj.Transformer.from_crs("EPSG:4326", tm, always_xy=True)
    x, y = tr.transform(lon, lat)
    return time.perf_counter() - t0, (lon0, lat0), x, y


best = None
for _ in range(3):
    t, centre, x, y = pandas_pyproj()
    if best is None or t < best[0]:
        best = (t, centre, x, y)
theirs_s, (lon0, lat0), px, py = best

proj = ours["projection"]
n = ours["n"]
ox, oy = xy[:n], xy[n:]
print(f"centre: ours lon {proj['lon0']!r} lat {proj['lat0']!r}; pandas lon {lon0!r} lat {lat0!r}")
if len(px) != n:
    sys.exit(f"ours kept {n} events, pandas read {len(px)} rows")
diff = np.hypot(ox - px, oy - py).max()
print(f"largest distance between our projected events and pyproj's: {diff:.3e} m")

print(f"load average {load()}")
print(f"ours (read file, parse, validate, project, area, summary): {ours['total_s']:.3f} s "
      f"(disk {ours['disk_s']:.3f}, parse {ours['read_s']:.3f}, "
      f"project + validate {ours['project_validate_s']:.3f}, summary {ours['summary_s']:.3f})")
if other is not None:
    print(f"other build ({sys.argv[2]}): {other['total_s']:.3f} s "
          f"(disk {other['disk_s']:.3f}, parse {other['read_s']:.3f}, "
          f"project + validate {other['project_validate_s']:.3f}, summary {other['summary_s']:.3f}); "
          f"ratio other / pandas+pyproj: {other['total_s'] / theirs_s:.2f}")
print(f"pandas.read_csv + pyproj transverse Mercator: {theirs_s:.3f} s")
print(f"ratio ours / pandas+pyproj: {ours['total_s'] / theirs_s:.2f}")
print(json.dumps({"where": "native vs pandas+pyproj", "n": n, "ours_s": ours["total_s"],
                  "pandas_pyproj_s": round(theirs_s, 4),
                  "ratio": round(ours["total_s"] / theirs_s, 3), "max_diff_m": diff}))
