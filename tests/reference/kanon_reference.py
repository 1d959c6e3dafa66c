"""Reference set for the k-anonymity masking test (tests/privacy.rs).

Writes kanon_reference.json next to this script. Run: python3 kanon_reference.py

An invented study area (a 8 km x 6 km rectangle with a rectangular lake as a
hole), an invented population layer (three towns drawn as Gaussian clusters
plus scattered rural addresses, none in the lake and none in the empty
north-east corner), and invented events: 60 near addresses plus 3 in the
empty corner. Seeded numpy generator, so the file is reproducible.

For each event it records, with scipy.spatial.cKDTree (distances d <= r, as
docs/methods.md#conventions rule 3):
* n_within_2rmax: population points within 2 * r_max. With the event's own
  address counted once (the layer holds no event addresses), an event with
  n_within_2rmax + 1 < target_k cannot reach the target at any masked location
  within r_max: every address h with |h - x'| <= |x - x'| = d lies within 2d
  of x (triangle inequality). These are `provably_unreachable`.
* best_k_on_grid: the largest spatial k (docs/methods.md#privacy operational definition,
  k = 1 + #{h : |h - x'| <= |x - x'|}) over a polar grid of candidate masked
  locations (72 directions x 30 distances in (0, r_max), inside the area and
  out of the lake). best_k_on_grid >= target_k proves the event reachable
  (a witness location exists).
"""

import json
import os

import numpy as np
from scipy.spatial import cKDTree

rng = np.random.default_rng(7_2010)  # invented seed
W = (0.0, 0.0, 8000.0, 6000.0)
LAKE = (5000.0, 1000.0, 6500.0, 2500.0)
EMPTY = (6500.0, 4500.0, 8000.0, 6000.0)  # no addresses here
TARGET_K = 25
R_MAX = 600.0


def inside(x, y):
    in_w = (W[0] <= x) & (x <= W[2]) & (W[1] <= y) & (y <= W[3])
    in_lake = (LAKE[0] < x) & (x < LAKE[2]) & (LAKE[1] < y) & (y < LAKE[3])
    return in_w & ~in_lake


def in_empty(x, y):
    return (EMPTY[0] <= x) & (y >= EMPTY[1])


def draw(n, sampler):
    xs, ys = [], []
    while len(xs) < n:
        x, y = sampler()
        if inside(x, y) and not in_empty(x, y):
            xs.append(x)
            ys.append(y)
    return xs, ys


pop_x, pop_y = [], []
for cx, cy, sd, n in ((2000.0, 2000.0, 400.0, 1500), (4000.0, 4500.0, 300.0, 800), (6500.0, 500.0, 250.0, 400)):
    a, b = draw(n, lambda: (rng.normal(cx, sd), rng.normal(cy, sd)))
    pop_x += a
    pop_y += b
a, b = draw(300, lambda: (rng.uniform(W[0], W[2]), rng.uniform(W[1], W[3])))
pop_x += a
pop_y += b
pop = np.column_stack([pop_x, pop_y])

# Events: 60 near random addresses (within 30 m), 3 in the empty corner.
ev_x, ev_y = [], []
while len(ev_x) < 60:
    i = rng.integers(len(pop))
    x, y = pop[i, 0] + rng.uniform(-30, 30), pop[i, 1] + rng.uniform(-30, 30)
    if inside(x, y):
        ev_x.append(float(x))
        ev_y.append(float(y))
for x, y in ((7600.0, 5600.0), (7900.0, 5900.0), (7200.0, 5300.0)):
    ev_x.append(x)
    ev_y.append(y)
ev = np.column_stack([ev_x, ev_y])

tree = cKDTree(pop)
n2 = tree.query_ball_point(ev, 2 * R_MAX, return_length=True)
provable = [int(i) for i in range(len(ev)) if n2[i] + 1 < TARGET_K]

angles = np.linspace(0, 2 * np.pi, 72, endpoint=False)
dists = np.linspace(R_MAX / 30, R_MAX * (1 - 1e-9), 30)
best = []
for x, y in ev:
    cand = np.array([(x + d * np.cos(t), y + d * np.sin(t), d) for t in angles for d in dists])
    ok = inside(cand[:, 0], cand[:, 1])
    cand = cand[ok]
    if len(cand) == 0:
        best.append(0)
        continue
    # d <= r with a hair of slack for the floating-point distance itself
    k = 1 + tree.query_ball_point(cand[:, :2], cand[:, 2] * (1 + 1e-12), return_length=True)
    best.append(int(k.max()))

out = {
    "window": [[[W[0], W[1]], [W[2], W[1]], [W[2], W[3]], [W[0], W[3]]],
               [[LAKE[0], LAKE[1]], [LAKE[2], LAKE[1]], [LAKE[2], LAKE[3]], [LAKE[0], LAKE[3]]]],
    "target_k": TARGET_K,
    "r_max_m": R_MAX,
    "population_x": [float(v) for v in pop[:, 0]],
    "population_y": [float(v) for v in pop[:, 1]],
    "events_x": ev_x,
    "events_y": ev_y,
    "n_within_2rmax": [int(v) for v in n2],
    "provably_unreachable": provable,
    "best_k_on_grid": best,
}
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "kanon_reference.json"), "w") as f:
    json.dump(out, f)
reach = sum(1 for b in best if b >= TARGET_K)
print(f"{len(ev)} events, {len(pop)} addresses; provably unreachable {provable}; "
      f"witnessed reachable {reach}; undecided {len(ev) - reach - len(provable)}")
