//! A small uniform grid over points in metres, for counting candidate
//! addresses within a radius and finding nearest neighbours.
//!
//! Distances compare squared values, `dx² + dy² ≤ r²`, everywhere (METHODS §0
//! rules 3 and 4: `d ≤ r`, one squared-distance convention).

use std::collections::HashMap;

/// Points bucketed into square cells of side `cell_m`.
#[derive(Debug, Clone)]
pub struct PointGrid {
    x: Vec<f64>,
    y: Vec<f64>,
    cell_m: f64,
    cells: HashMap<(i64, i64), Vec<u32>>,
}

impl PointGrid {
    /// Builds the grid; a non-finite or non-positive `cell_m` falls back to 1 m.
    /// Non-finite points are skipped.
    pub fn new(x: &[f64], y: &[f64], cell_m: f64) -> PointGrid {
        let cell_m = if cell_m.is_finite() && cell_m > 0.0 {
            cell_m
        } else {
            1.0
        };
        let mut cells: HashMap<(i64, i64), Vec<u32>> = HashMap::new();
        for (i, (&a, &b)) in x.iter().zip(y).enumerate() {
            if a.is_finite() && b.is_finite() {
                cells
                    .entry(((a / cell_m).floor() as i64, (b / cell_m).floor() as i64))
                    .or_default()
                    .push(i as u32);
            }
        }
        PointGrid {
            x: x.to_vec(),
            y: y.to_vec(),
            cell_m,
            cells,
        }
    }

    pub fn len(&self) -> usize {
        self.x.len()
    }
    pub fn is_empty(&self) -> bool {
        self.x.is_empty()
    }

    fn cell_range(&self, cx: f64, cy: f64, r: f64) -> (i64, i64, i64, i64) {
        let c = self.cell_m;
        (
            ((cx - r) / c).floor() as i64,
            ((cx + r) / c).floor() as i64,
            ((cy - r) / c).floor() as i64,
            ((cy + r) / c).floor() as i64,
        )
    }

    /// Calls `f(index, squared distance)` for every point with `d ≤ r`.
    pub fn for_each_within(&self, cx: f64, cy: f64, r: f64, mut f: impl FnMut(usize, f64)) {
        if !(r >= 0.0) || !cx.is_finite() || !cy.is_finite() {
            return;
        }
        let r2 = r * r;
        let (i0, i1, j0, j1) = self.cell_range(cx, cy, r);
        // Very large radii: scan everything rather than many empty cells.
        let span = (i1 - i0 + 1).saturating_mul(j1 - j0 + 1);
        if span as usize > 4 * self.cells.len() + 16 {
            for (i, (&a, &b)) in self.x.iter().zip(&self.y).enumerate() {
                let d2 = (a - cx).powi(2) + (b - cy).powi(2);
                if d2 <= r2 {
                    f(i, d2);
                }
            }
            return;
        }
        for i in i0..=i1 {
            for j in j0..=j1 {
                if let Some(v) = self.cells.get(&(i, j)) {
                    for &k in v {
                        let k = k as usize;
                        let d2 = (self.x[k] - cx).powi(2) + (self.y[k] - cy).powi(2);
                        if d2 <= r2 {
                            f(k, d2);
                        }
                    }
                }
            }
        }
    }

    /// Number of points with `d ≤ r` from `(cx, cy)`.
    pub fn count_within(&self, cx: f64, cy: f64, r: f64) -> usize {
        let mut n = 0;
        self.for_each_within(cx, cy, r, |_, _| n += 1);
        n
    }

    /// Distance to the `k`-th nearest point (k ≥ 1) if it lies within `r_max`.
    pub fn kth_distance_within(&self, cx: f64, cy: f64, k: usize, r_max: f64) -> Option<f64> {
        if k == 0 {
            return Some(0.0);
        }
        let mut d2s = Vec::new();
        self.for_each_within(cx, cy, r_max, |_, d2| d2s.push(d2));
        if d2s.len() < k {
            return None;
        }
        d2s.sort_by(|a, b| a.total_cmp(b));
        Some(d2s[k - 1].sqrt())
    }

    /// Distance from point `i` to its nearest other point (`None` if alone).
    pub fn nearest_other(&self, i: usize) -> Option<f64> {
        if self.x.len() < 2 || i >= self.x.len() {
            return None;
        }
        let (cx, cy) = (self.x[i], self.y[i]);
        let mut r = self.cell_m;
        loop {
            let mut best = f64::INFINITY;
            self.for_each_within(cx, cy, r, |k, d2| {
                if k != i && d2 < best {
                    best = d2;
                }
            });
            if best.is_finite() {
                return Some(best.sqrt());
            }
            r *= 2.0;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rng::rng_from_seed;
    use rand::RngExt;

    #[test]
    fn grid_counts_match_brute_force() {
        // Oracle check: the grid against an O(n²) loop (STYLE habit 9).
        let mut rng = rng_from_seed(7);
        let n = 500;
        let x: Vec<f64> = (0..n).map(|_| rng.random::<f64>() * 1000.0).collect();
        let y: Vec<f64> = (0..n).map(|_| rng.random::<f64>() * 1000.0).collect();
        let g = PointGrid::new(&x, &y, 37.0);
        for q in 0..50 {
            let (cx, cy) = (x[q] + 3.0, y[q] - 2.0);
            for r in [0.0, 10.0, 55.5, 200.0, 5000.0] {
                let brute = (0..n)
                    .filter(|&k| (x[k] - cx).powi(2) + (y[k] - cy).powi(2) <= r * r)
                    .count();
                assert_eq!(g.count_within(cx, cy, r), brute);
            }
            let nn = (0..n)
                .filter(|&k| k != q)
                .map(|k| ((x[k] - x[q]).powi(2) + (y[k] - y[q]).powi(2)).sqrt())
                .fold(f64::INFINITY, f64::min);
            assert_eq!(g.nearest_other(q), Some(nn));
        }
    }

    #[test]
    fn grid_edge_cases() {
        let g = PointGrid::new(&[], &[], 10.0);
        assert_eq!(g.count_within(0.0, 0.0, 5.0), 0);
        let g = PointGrid::new(&[1.0], &[1.0], 0.0);
        assert_eq!(g.nearest_other(0), None);
        assert_eq!(g.count_within(1.0, 1.0, 0.0), 1);
        assert_eq!(g.kth_distance_within(0.0, 0.0, 2, 100.0), None);
    }
}
