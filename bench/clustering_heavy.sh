#!/bin/sh
# Heavier calibration and power checks of the clustering tests (ignored in CI).
#   level:  1000 CSR datasets, n = 300, 99 simulations, rejections in the
#           binomial 99 % interval [33, 69] (scipy.stats.binom.interval(0.99, 1000, 0.05))
#   power:  500 Thomas and 500 Matérn II datasets, 199 simulations, >= 95 % rejected
# Run from the repository root.
set -e
cargo test --release --test distance -- --ignored --nocapture
