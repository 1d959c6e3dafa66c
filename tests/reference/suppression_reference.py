"""Reference ranges for the suppression audit (tests/privacy.rs).

Writes suppression_reference.json next to this script.
Run: python3 suppression_reference.py

Each case is what an attacker sees: shown counts (null = suppressed), and
lines (sets of cells) with their published totals (null = withheld). Hidden
counts are whole numbers >= `lower`. For every hidden cell the script finds
the smallest and largest value consistent with the published totals by
linear programming (scipy.optimize.linprog, HiGHS). Row/column/grand-total
systems have totally unimodular constraint matrices, so the LP extremes are
whole numbers (Hoffman & Kruskal 1956 [M]); every case is also enumerated by
brute force (itertools) and the script asserts both agree, so the JSON holds
exact whole-number ranges. A range with lo == hi is a recovered count.
"""

import itertools
import json
import os

import numpy as np
from scipy.optimize import linprog


def grid_lines(rows, cols, totals_from, withheld=()):
    """Row, column and grand-total lines of a rows x cols grid."""
    lines = []
    for r in range(rows):
        lines.append([r * cols + c for c in range(cols)])
    for c in range(cols):
        lines.append([r * cols + c for r in range(rows)])
    lines.append(list(range(rows * cols)))
    out = []
    for i, l in enumerate(lines):
        t = None if i in withheld else int(sum(totals_from[k] for k in l))
        out.append({"cells": l, "total": t})
    return out


def case_grid(name, values, hidden, lower=1, withheld=()):
    rows, cols = len(values), len(values[0])
    flat = [v for row in values for v in row]
    shown = [None if i in hidden else flat[i] for i in range(len(flat))]
    return {"name": name, "shown": shown, "lines": grid_lines(rows, cols, flat, withheld),
            "lower": lower, "truth": flat}


cases = [
    case_grid("rectangle of four", [[3, 10, 2], [8, 20, 9], [7, 6, 30]], {0, 2, 3, 5}),
    case_grid("one hidden in a row", [[3, 10, 12], [8, 20, 9], [7, 6, 30]], {0}),
    case_grid("two ones pinned by the lower bound", [[1, 1, 20], [1, 1, 9], [5, 6, 7]], {0, 1, 3, 4}),
    case_grid("zeros may be hidden (lower 0)", [[1, 0, 20], [0, 2, 9], [5, 6, 7]], {0, 1, 3, 4}, lower=0),
    case_grid("withheld row total", [[3, 10, 12], [8, 20, 9], [7, 6, 30]], {0, 1}, withheld={0}),
    case_grid("grand total combines lines",
              [[2, 9, 9, 9], [9, 3, 9, 9], [9, 9, 9, 9]], {0, 5, 2, 6},
              withheld=()),
    case_grid("4x5 scattered", [[4, 12, 0, 7, 9], [15, 3, 8, 6, 11], [0, 9, 2, 14, 5], [6, 7, 13, 1, 10]],
              {0, 3, 6, 8, 12, 13, 18, 16}),
    {"name": "zones with groups", "shown": [None, 12, None, 8, None, 30],
     "lines": [{"cells": [0, 1, 2], "total": 3 + 12 + 4}, {"cells": [3, 4, 5], "total": 8 + 2 + 30},
               {"cells": [0, 1, 2, 3, 4, 5], "total": 3 + 12 + 4 + 8 + 2 + 30}],
     "lower": 1, "truth": [3, 12, 4, 8, 2, 30]},
]


def lp_ranges(case):
    shown, lines, lower = case["shown"], case["lines"], case["lower"]
    hidden = [i for i, v in enumerate(shown) if v is None]
    pos = {c: k for k, c in enumerate(hidden)}
    A, b = [], []
    for l in lines:
        if l["total"] is None:
            continue
        h = [c for c in l["cells"] if shown[c] is None]
        if not h:
            continue
        row = np.zeros(len(hidden))
        for c in h:
            row[pos[c]] = 1
        A.append(row)
        b.append(l["total"] - sum(shown[c] for c in l["cells"] if shown[c] is not None))
    A = np.array(A) if A else np.zeros((0, len(hidden)))
    in_eq = A.any(axis=0) if len(A) else np.zeros(len(hidden), dtype=bool)
    out = []
    for k, c in enumerate(hidden):
        res = []
        for sign in (1, -1):
            obj = np.zeros(len(hidden))
            obj[k] = sign
            r = linprog(obj, A_eq=A if len(A) else None, b_eq=b if len(b) else None,
                        bounds=[(lower, None)] * len(hidden), method="highs")
            if r.status == 3:  # unbounded
                res.append(None)
            else:
                assert r.status == 0, r.message
                res.append(round(sign * r.fun))
        lo, hi = res
        if not in_eq[k]:
            hi = None
        out.append({"cell": c, "lo": lo, "hi": hi})
    return out, A, b, hidden


def brute(case, A, b, hidden, ranges):
    """Enumerates every whole-number assignment inside the LP box."""
    lower = case["lower"]
    boxes = [range(lower, (r["hi"] if r["hi"] is not None else lower) + 1) for r in ranges]
    seen = [set() for _ in hidden]
    for v in itertools.product(*boxes):
        if len(A) == 0 or np.all(A @ np.array(v) == b):
            for k, x in enumerate(v):
                seen[k].add(x)
    return [(min(s), max(s)) for s in seen]


for case in cases:
    ranges, A, b, hidden = lp_ranges(case)
    bf = brute(case, A, b, hidden, ranges)
    for r, (lo, hi) in zip(ranges, bf):
        assert r["lo"] == lo, (case["name"], r, lo)
        if r["hi"] is not None:
            assert r["hi"] == hi, (case["name"], r, hi)
    # the true values are feasible
    for r in ranges:
        t = case["truth"][r["cell"]]
        assert r["lo"] <= t and (r["hi"] is None or t <= r["hi"]), (case["name"], r, t)
    case["ranges"] = ranges
    case["recovered"] = [r["cell"] for r in ranges if r["hi"] is not None and r["lo"] == r["hi"]]
    print(case["name"], "recovered:", case["recovered"])

here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "suppression_reference.json"), "w") as f:
    json.dump({"cases": cases}, f, indent=1)
