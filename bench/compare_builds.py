#!/usr/bin/env python3
"""Side-by-side speed of two builds of the native benchmarks, in one run.

    python3 bench/compare_builds.py OLD_REV [ROUNDS]

Builds the benchmark examples (release) at OLD_REV in a temporary git
worktree (target/compare-old/) and at the working tree, then runs each
benchmark command old, new, old, new, ... ROUNDS times (default 5) and prints,
per command, the median and minimum wall time of each build and the ratio
new / old of the medians (below 1: the new build is faster). Alternating the
two builds in one run keeps a shared machine's drift out of the ratio; the
figures are whole-process times (data generation included), so read them as
ratios, not as absolute speeds. Timings are never test assertions.
"""

import os
import statistics
import subprocess
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))

# (label, example, arguments): the intake, clustering, hotspot, geometry and
# privacy benchmarks at sizes that take seconds, not minutes.
COMMANDS = [
    ("intake 100k + 1M rows", "bench_intake", ["100000", "1000000"]),
    ("clustering envelopes (quick settings)", "bench_clustering", ["quick"]),
    ("clustering Target A (K, L; n=10,000, 199 sims)", "bench_clustering", []),
    ("hotspots (quick: 10k surface, CV, DBSCAN, scan)", "bench_hotspots", ["quick"]),
    ("geometry (window build, contains, sampling)", "bench_geometry", []),
    ("privacy (masking, aggregation)", "bench_privacy", []),
]


def run(cmd, cwd, env=None):
    subprocess.run(cmd, cwd=cwd, check=True, env=env)


def build(tree, target):
    env = dict(os.environ, CARGO_TARGET_DIR=target)
    run(["cargo", "build", "--quiet", "--release", "--examples"], tree, env)
    return os.path.join(target, "release", "examples")


def timed(binary, args, cwd):
    t = time.perf_counter()
    subprocess.run([binary] + args, cwd=cwd, check=True,
                   stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t


def main():
    if len(sys.argv) < 2:
        sys.exit(__doc__)
    old_rev = sys.argv[1]
    rounds = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    old_tree = os.path.join(ROOT, "target", "compare-old")
    if os.path.exists(old_tree):
        run(["git", "worktree", "remove", "--force", old_tree], ROOT)
    run(["git", "worktree", "add", "--quiet", "--detach", old_tree, old_rev], ROOT)
    try:
        print(f"building {old_rev} and the working tree (release examples)...", flush=True)
        old_bin = build(old_tree, os.path.join(ROOT, "target", "compare-old-target"))
        new_bin = build(ROOT, os.path.join(ROOT, "target"))
        os.makedirs(os.path.join(ROOT, "target", "bench-data"), exist_ok=True)
        print(f"{'benchmark':<50} {'old median':>11} {'new median':>11} {'old min':>8} {'new min':>8} {'new/old':>8}")
        for label, example, args in COMMANDS:
            o_path = os.path.join(old_bin, example)
            n_path = os.path.join(new_bin, example)
            if not (os.path.exists(o_path) and os.path.exists(n_path)):
                print(f"{label:<50} (missing in one build: skipped)")
                continue
            old_t, new_t = [], []
            for _ in range(rounds):
                old_t.append(timed(o_path, args, ROOT))
                new_t.append(timed(n_path, args, ROOT))
            mo, mn = statistics.median(old_t), statistics.median(new_t)
            print(f"{label:<50} {mo:>10.2f}s {mn:>10.2f}s {min(old_t):>7.2f}s {min(new_t):>7.2f}s {mn / mo:>8.3f}",
                  flush=True)
    finally:
        run(["git", "worktree", "remove", "--force", old_tree], ROOT)


if __name__ == "__main__":
    main()
