//! Fast pair enumeration and nearest-neighbour distances on a uniform grid.
//!
//! Specialised for the distance functions: points are sorted by grid cell
//! (counting sort) and stored contiguously, so the inner loop of the pair
//! enumeration walks plain slices. Distances are compared as `d² ≤ r²` and
//! the distance handed on is `sqrt(d²)`; every caller then compares that
//! `d` with `r` values (`d ≤ r` convention, METHODS §0).
//!
//! Complexity: building is O(n); enumerating pairs within `r` is
//! O(n + pairs examined). Each row of neighbouring cells is clipped to the
//! columns that can reach the disc of radius `r`, so with cells of side
//! `r/4` about 1.5 times the number of pairs within `r` are examined.

/// Points sorted into square cells.
#[derive(Debug, Clone)]
pub(crate) struct PointGrid {
    pub x0: f64,
    pub y0: f64,
    pub cell: f64,
    pub nx: usize,
    pub ny: usize,
    /// `start[c]..start[c+1]` are the sorted positions of the points in cell c.
    pub start: Vec<u32>,
    /// Coordinates in sorted order.
    pub xs: Vec<f64>,
    pub ys: Vec<f64>,
    /// Original index of each sorted point.
    pub id: Vec<u32>,
}

impl PointGrid {
    /// Builds a grid with cells of side `cell` over the points' extent.
    /// The grid has at most about max(4n, 4096) cells (the side grows if
    /// needed).
    pub fn new(x: &[f64], y: &[f64], cell: f64) -> PointGrid {
        let n = x.len();
        let (mut x0, mut y0, mut x1, mut y1) = (
            f64::INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NEG_INFINITY,
        );
        for i in 0..n {
            x0 = x0.min(x[i]);
            x1 = x1.max(x[i]);
            y0 = y0.min(y[i]);
            y1 = y1.max(y[i]);
        }
        if n == 0 {
            (x0, y0, x1, y1) = (0.0, 0.0, 0.0, 0.0);
        }
        let mut cell = if cell.is_finite() && cell > 0.0 {
            cell
        } else {
            1.0
        };
        // Keep the cell table small (memory stays flat per simulation): at
        // most about max(4n, 4096) cells; larger cells only mean more
        // candidate pairs, never missed ones.
        let max_cells = (4 * n).max(4096) as f64;
        let (w, h) = (x1 - x0, y1 - y0);
        if (w / cell + 1.0) * (h / cell + 1.0) > max_cells {
            // Positive root of (w/c + 1)(h/c + 1) = max_cells.
            let a = max_cells - 1.0;
            let b = w + h;
            let c = (b + (b * b + 4.0 * a * w * h).sqrt()) / (2.0 * a);
            cell = cell.max(c);
        }
        let nx = (((x1 - x0) / cell).floor() as usize + 1).max(1);
        let ny = (((y1 - y0) / cell).floor() as usize + 1).max(1);
        let mut cell_of = Vec::with_capacity(n);
        let mut start = vec![0u32; nx * ny + 1];
        for i in 0..n {
            let cx = (((x[i] - x0) / cell) as usize).min(nx - 1);
            let cy = (((y[i] - y0) / cell) as usize).min(ny - 1);
            let c = cy * nx + cx;
            cell_of.push(c as u32);
            start[c + 1] += 1;
        }
        for c in 0..nx * ny {
            start[c + 1] += start[c];
        }
        let mut fill: Vec<u32> = start[..nx * ny].to_vec();
        let mut xs = vec![0.0; n];
        let mut ys = vec![0.0; n];
        let mut id = vec![0u32; n];
        for i in 0..n {
            let c = cell_of[i] as usize;
            let p = fill[c] as usize;
            fill[c] += 1;
            xs[p] = x[i];
            ys[p] = y[i];
            id[p] = i as u32;
        }
        PointGrid {
            x0,
            y0,
            cell,
            nx,
            ny,
            start,
            xs,
            ys,
            id,
        }
    }

    /// Calls `block(a, b0, b1)` so that every unordered pair of sorted
    /// positions that can be within `r` appears exactly once as
    /// (a, b) with b in b0..b1 (candidates, not yet filtered by distance):
    /// the rest of a's own cell, then runs of cells in the forward half of
    /// its neighbourhood (same row to the right, rows above).
    #[inline]
    pub fn for_each_block<F: FnMut(usize, usize, usize)>(&self, r: f64, mut block: F) {
        let reach = self.reach(r);
        let (nx, ny) = (self.nx as isize, self.ny as isize);
        for cy in 0..ny {
            for cx in 0..nx {
                let c = (cy * nx + cx) as usize;
                let (a0, a1) = (self.start[c] as usize, self.start[c + 1] as usize);
                if a0 == a1 {
                    continue;
                }
                for a in a0..a1 {
                    if a + 1 < a1 {
                        block(a, a + 1, a1);
                    }
                }
                for oy in 0..=reach {
                    let ny_ = cy + oy;
                    if ny_ >= ny {
                        break;
                    }
                    let span = self.row_span(r, reach, oy);
                    let (ox0, ox1) = if oy == 0 { (1, span) } else { (-span, span) };
                    let lo = (cx + ox0).max(0);
                    let hi = (cx + ox1).min(nx - 1);
                    if lo > hi {
                        continue;
                    }
                    // Cells lo..=hi of row ny_ are contiguous in sorted order.
                    let row = ny_ * nx;
                    let b0 = self.start[(row + lo) as usize] as usize;
                    let b1 = self.start[(row + hi) as usize + 1] as usize;
                    if b0 == b1 {
                        continue;
                    }
                    for a in a0..a1 {
                        block(a, b0, b1);
                    }
                }
            }
        }
    }

    /// Rows of cells to search for distances up to `r`.
    #[inline]
    fn reach(&self, r: f64) -> isize {
        (r / self.cell).ceil().max(1.0) as isize
    }

    /// Largest column offset that can hold a point within `r` of a point
    /// in a cell `oy` rows away: the gap between the rows is at least
    /// (|oy| − 1)·cell, and between columns |ox| apart at least
    /// (|ox| − 1)·cell, so |ox| ≤ ⌈√(r² − gap²)/cell⌉ (with a relative
    /// margin so that rounding in the cell assignment never loses a pair).
    #[inline]
    fn row_span(&self, r: f64, reach: isize, oy: isize) -> isize {
        let gap = ((oy.abs() - 1).max(0)) as f64 * self.cell;
        let w2 = (r * r - gap * gap).max(0.0);
        ((w2.sqrt() * (1.0 + 1e-9) / self.cell).ceil() as isize)
            .max(1)
            .min(reach)
    }

    /// For each sorted position `a` with `inner(a) = Some(ρ)`, calls
    /// `visit(a, runs)` with row-runs of sorted positions that hold every
    /// point b ≠ a with ρ < d(a, b) ≤ r (candidates, not yet filtered by
    /// distance; a itself may be among them). Cells that lie wholly inside
    /// the disc of radius ρ about a are cut out of the runs, so a point
    /// close to nothing but its inner disc costs little. (The cut keeps a
    /// margin of 1e-9 of ρ and of the cell side, so a point whose computed
    /// distance could exceed ρ is never cut.)
    pub fn for_each_point_runs_beyond<I, F>(&self, r: f64, inner: I, mut visit: F)
    where
        I: Fn(usize) -> Option<f64>,
        F: FnMut(usize, &[(usize, usize)]),
    {
        let reach = self.reach(r);
        let (nx, ny) = (self.nx as isize, self.ny as isize);
        let cell = self.cell;
        let spans: Vec<isize> = (-reach..=reach)
            .map(|oy| self.row_span(r, reach, oy))
            .collect();
        let mut runs: Vec<(usize, usize)> = Vec::with_capacity(4 * reach as usize + 2);
        let s = |row: isize, col: isize| self.start[(row * nx + col) as usize] as usize;
        for cy in 0..ny {
            for cx in 0..nx {
                let c = (cy * nx + cx) as usize;
                for a in self.start[c] as usize..self.start[c + 1] as usize {
                    let Some(rho) = inner(a) else { continue };
                    let (xa, ya) = (self.xs[a], self.ys[a]);
                    let rho = rho * (1.0 - 1e-9) - 1e-9 * cell;
                    runs.clear();
                    for (k, oy) in (-reach..=reach).enumerate() {
                        let row = cy + oy;
                        if row < 0 || row >= ny {
                            continue;
                        }
                        let span = spans[k];
                        let lo = (cx - span).max(0);
                        let hi = (cx + span).min(nx - 1);
                        // Columns wholly inside the disc of radius rho.
                        let (mut cut_lo, mut cut_hi) = (1isize, 0isize);
                        if rho > 0.0 {
                            let y_lo = self.y0 + row as f64 * cell;
                            let dy = (ya - y_lo).abs().max((ya - y_lo - cell).abs());
                            if dy < rho {
                                let w = (rho * rho - dy * dy).sqrt();
                                cut_lo = ((xa - w - self.x0) / cell).ceil() as isize;
                                cut_hi = ((xa + w - self.x0) / cell).floor() as isize - 1;
                                cut_lo = cut_lo.max(lo);
                                cut_hi = cut_hi.min(hi);
                            }
                        }
                        if cut_lo <= cut_hi {
                            if lo < cut_lo {
                                runs.push((s(row, lo), s(row, cut_lo)));
                            }
                            if cut_hi < hi {
                                runs.push((s(row, cut_hi + 1), s(row, hi + 1)));
                            }
                        } else {
                            runs.push((s(row, lo), s(row, hi + 1)));
                        }
                    }
                    runs.retain(|(b0, b1)| b0 < b1);
                    visit(a, &runs);
                }
            }
        }
    }

    /// Calls `visit(a, b, d)` once for every unordered pair of sorted
    /// positions a ≠ b with distance `d ≤ r`.
    #[inline]
    pub fn for_each_pair<F: FnMut(usize, usize, f64)>(&self, r: f64, mut visit: F) {
        let r2 = r * r;
        self.for_each_block(r, |a, b0, b1| {
            let (xa, ya) = (self.xs[a], self.ys[a]);
            let bx = &self.xs[b0..b1];
            let by = &self.ys[b0..b1];
            for k in 0..bx.len() {
                let dx = bx[k] - xa;
                let dy = by[k] - ya;
                let d2 = dx * dx + dy * dy;
                if d2 <= r2 {
                    visit(a, b0 + k, d2.sqrt());
                }
            }
        });
    }

    /// Distance from (x, y) to the nearest point, skipping sorted position
    /// `skip` (use `usize::MAX` to skip none). Infinite if there is none.
    pub fn nearest(&self, x: f64, y: f64, skip: usize) -> f64 {
        let hx = (((x - self.x0) / self.cell).floor() as isize).clamp(0, self.nx as isize - 1);
        let hy = (((y - self.y0) / self.cell).floor() as isize).clamp(0, self.ny as isize - 1);
        let mut best = f64::INFINITY;
        let max_k = self.nx.max(self.ny) as isize;
        for k in 0..=max_k {
            for cy in (hy - k)..=(hy + k) {
                if cy < 0 || cy >= self.ny as isize {
                    continue;
                }
                let edge_row = cy == hy - k || cy == hy + k;
                let step = if edge_row { 1 } else { (2 * k).max(1) };
                let mut cx = hx - k;
                while cx <= hx + k {
                    if cx >= 0 && cx < self.nx as isize {
                        let c = (cy * self.nx as isize + cx) as usize;
                        for p in self.start[c] as usize..self.start[c + 1] as usize {
                            if p == skip {
                                continue;
                            }
                            let dx = self.xs[p] - x;
                            let dy = self.ys[p] - y;
                            let d2 = dx * dx + dy * dy;
                            if d2 < best {
                                best = d2;
                            }
                        }
                    }
                    cx += step;
                }
            }
            let bx0 = self.x0 + (hx - k) as f64 * self.cell;
            let bx1 = self.x0 + (hx + k + 1) as f64 * self.cell;
            let by0 = self.y0 + (hy - k) as f64 * self.cell;
            let by1 = self.y0 + (hy + k + 1) as f64 * self.cell;
            let margin = (x - bx0).min(bx1 - x).min(y - by0).min(by1 - y);
            if best.is_finite() && margin >= 0.0 && best <= margin * margin {
                break;
            }
        }
        best.sqrt()
    }

    /// Nearest-neighbour distance of every point, in the original order.
    pub fn nn_distances(&self) -> Vec<f64> {
        let mut out = vec![f64::INFINITY; self.xs.len()];
        for p in 0..self.xs.len() {
            out[self.id[p] as usize] = self.nearest(self.xs[p], self.ys[p], p);
        }
        out
    }
}

/// Cell side for nearest-neighbour grids: about two points per cell.
pub(crate) fn nn_cell(n: usize, area: f64) -> f64 {
    (2.0 * area / n.max(1) as f64).sqrt()
}

/// Nearest-neighbour distance of every point (infinite when n < 2).
pub(crate) fn nn_distances(x: &[f64], y: &[f64], area: f64) -> Vec<f64> {
    PointGrid::new(x, y, nn_cell(x.len(), area)).nn_distances()
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::RngExt;

    fn random_points(n: usize, seed: u64) -> (Vec<f64>, Vec<f64>) {
        let mut rng = crate::rng::rng_from_seed(seed);
        let x = (0..n).map(|_| rng.random::<f64>()).collect();
        let y = (0..n).map(|_| rng.random::<f64>() * 0.6).collect();
        (x, y)
    }

    /// Oracle test against an O(n²) loop on 500 seeded points (STYLE.md §3.9).
    #[test]
    fn test_pairs_match_brute_force() {
        let (x, y) = random_points(500, 17);
        for (r, cell) in [(0.05, 0.025), (0.1, 0.1), (0.2, 0.05), (0.05, 0.001)] {
            let g = PointGrid::new(&x, &y, cell);
            let mut got = Vec::new();
            g.for_each_pair(r, |a, b, d| {
                let (i, j) = (g.id[a] as usize, g.id[b] as usize);
                got.push((i.min(j), i.max(j), d));
            });
            got.sort_by_key(|a| (a.0, a.1));
            let mut want = Vec::new();
            for i in 0..x.len() {
                for j in i + 1..x.len() {
                    let d2 = (x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2);
                    if d2 <= r * r {
                        want.push((i, j, d2.sqrt()));
                    }
                }
            }
            assert_eq!(got.len(), want.len());
            for (a, b) in got.iter().zip(&want) {
                assert_eq!((a.0, a.1), (b.0, b.1));
                assert_eq!(a.2, b.2);
            }
        }
    }

    /// The runs beyond an inner disc (used for the isotropic weights' excess)
    /// hold every point b with ρ < d ≤ r, each once, for inner radii drawn
    /// at random, set to 0, and set just below a neighbour's distance (that
    /// neighbour must then be kept).
    #[test]
    fn test_runs_beyond_cover_the_annulus() {
        let (x, y) = random_points(400, 31);
        let mut rng = crate::rng::rng_from_seed(8);
        for (r, cell) in [(0.05, 0.0125), (0.1, 0.1), (0.2, 0.05), (0.07, 0.02)] {
            let g = PointGrid::new(&x, &y, cell);
            let n = g.xs.len();
            let d = |a: usize, b: usize| {
                let (dx, dy) = (g.xs[b] - g.xs[a], g.ys[b] - g.ys[a]);
                (dx * dx + dy * dy).sqrt()
            };
            let rho: Vec<Option<f64>> = (0..n)
                .map(|a| match a % 4 {
                    0 => None,
                    1 => Some(0.0),
                    2 => Some(rng.random::<f64>() * r),
                    // Just below the distance to a neighbour within r.
                    _ => (0..n)
                        .map(|b| d(a, b))
                        .filter(|&v| v > 0.0 && v <= r)
                        .fold(None, |m: Option<f64>, v| Some(m.map_or(v, |m| m.max(v))))
                        .map(|v| v * (1.0 - 1e-15)),
                })
                .collect();
            let mut got = Vec::new();
            g.for_each_point_runs_beyond(
                r,
                |a| rho[a],
                |a, runs| {
                    for &(b0, b1) in runs {
                        for b in b0..b1 {
                            let dd = d(a, b);
                            if dd > rho[a].unwrap_or(f64::NAN) && dd <= r {
                                got.push((a, b));
                            }
                        }
                    }
                },
            );
            let before = got.len();
            got.sort_unstable();
            got.dedup();
            assert_eq!(got.len(), before, "a pair was visited twice");
            let mut want = Vec::new();
            for (a, ra) in rho.iter().enumerate() {
                let Some(ra) = *ra else { continue };
                for b in 0..n {
                    let dd = d(a, b);
                    if dd > ra && dd <= r {
                        want.push((a, b));
                    }
                }
            }
            assert!(want.len() > 500, "too few pairs to test: {}", want.len());
            assert_eq!(got, want, "r = {r}, cell = {cell}");
        }
    }

    #[test]
    fn test_nn_match_brute_force() {
        let (x, y) = random_points(500, 3);
        let nn = nn_distances(&x, &y, 0.6);
        for i in 0..x.len() {
            let mut best = f64::INFINITY;
            for j in 0..x.len() {
                if i != j {
                    best = best.min(((x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2)).sqrt());
                }
            }
            assert_eq!(nn[i], best);
        }
    }

    #[test]
    fn test_nn_edge_cases() {
        assert!(nn_distances(&[], &[], 1.0).is_empty());
        assert_eq!(nn_distances(&[0.5], &[0.5], 1.0)[0], f64::INFINITY);
        // Coincident points: distance 0.
        assert_eq!(nn_distances(&[0.5, 0.5], &[0.5, 0.5], 1.0), vec![0.0, 0.0]);
    }
}
