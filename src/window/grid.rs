//! The window's one spatial index: its edges bucketed in a grid of square
//! cells, with the inside/outside state of one corner per cell.
//!
//! # Size
//! An edge is listed in every cell its segment passes through (not every
//! cell of its bounding box), so the lists hold about Σ (|dx| + |dy|) / cell
//! + edges entries. The cell side is the largest of
//! * √(box area / edges) (about one edge per cell for an even outline),
//! * Σ (|dx| + |dy|) / (4 · edges) (at most about five entries per edge, so
//!   memory is O(edges) even for long, thin teeth), and
//! * the box's longer side / (2 · edges + 64) (a bounded number of cells).
//!
//! Building costs O(edges + entries + cells) plus one sort of the crossings
//! of each row line: O(V log V) for V vertices.
//!
//! # Containment
//! For the lower right corner of every cell, the even-odd state is computed
//! once by sorting the crossings of each horizontal grid line. A point's
//! state is that corner's state flipped by every edge of its own cell that
//! crosses the path from the point right to the cell's right side, then
//! down that side to the corner. Ties (a path through a vertex) are broken
//! as if the point and the corner were moved by an infinitesimal ε to the
//! right and ε² up, the rule the plain ray test uses, so the two agree.
//! The grid is offset from the box by an irrational fraction of a cell, so
//! that corners rarely fall on the integer or round coordinates that
//! boundaries tend to have.

use super::{seg_dist2, Edge};

#[derive(Debug, Clone, PartialEq)]
pub(super) struct EdgeGrid {
    pub x0: f64,
    pub y0: f64,
    pub cell: f64,
    pub nx: usize,
    pub ny: usize,
    /// Edges of cell c: `idx[start[c]..start[c + 1]]`, increasing.
    pub start: Vec<u32>,
    pub idx: Vec<u32>,
    /// Even-odd state of the lower right corner of each cell.
    corner_in: Vec<bool>,
}

impl EdgeGrid {
    /// Builds the grid; `pad` widens each edge when it is listed (the
    /// boundary tolerance), so that a point within `pad` of an edge finds
    /// it in its own cell.
    pub fn build(edges: &[Edge], bbox: [f64; 4], pad: f64) -> EdgeGrid {
        let n = edges.len().max(1) as f64;
        let (w, h) = (bbox[2] - bbox[0], bbox[3] - bbox[1]);
        let l1: f64 = edges
            .iter()
            .map(|e| (e.b[0] - e.a[0]).abs() + (e.b[1] - e.a[1]).abs())
            .sum();
        let side = w.max(h);
        let mut cell = (w * h / n)
            .sqrt()
            .max(l1 / (4.0 * n))
            .max(side / (2.0 * n + 64.0));
        if edges.len() <= 64 {
            cell = side;
        }
        // Slightly larger than the box (plus an irrational shift) so the
        // box fits whatever the rounding.
        cell *= 1.0 + 0.001 * std::f64::consts::FRAC_1_SQRT_2;
        let pad = pad + 1e-9 * cell;
        let x0 = bbox[0] - pad - cell * 0.381_966_011_250_105_1;
        let y0 = bbox[1] - pad - cell * 0.236_067_977_499_789_7;
        let nx = ((bbox[2] + pad - x0) / cell).floor() as usize + 1;
        let ny = ((bbox[3] + pad - y0) / cell).floor() as usize + 1;
        let mut g = EdgeGrid {
            x0,
            y0,
            cell,
            nx,
            ny,
            start: Vec::new(),
            idx: Vec::new(),
            corner_in: vec![false; nx * ny],
        };
        let mut start = vec![0u32; nx * ny + 1];
        for e in edges {
            g.cells_of(e, pad, |c| start[c + 1] += 1);
        }
        for c in 0..nx * ny {
            start[c + 1] += start[c];
        }
        let mut fill: Vec<u32> = start[..nx * ny].to_vec();
        let mut idx = vec![0u32; start[nx * ny] as usize];
        for (i, e) in edges.iter().enumerate() {
            g.cells_of(e, pad, |c| {
                idx[fill[c] as usize] = i as u32;
                fill[c] += 1;
            });
        }
        g.start = start;
        g.idx = idx;
        g.corner_states(edges);
        g
    }

    pub fn heap_bytes(&self) -> usize {
        4 * (self.start.capacity() + self.idx.capacity()) + self.corner_in.capacity()
    }

    pub fn col(&self, x: f64) -> usize {
        crate::index::cell_coord(x, self.x0, self.cell, self.nx)
    }
    pub fn row(&self, y: f64) -> usize {
        crate::index::cell_coord(y, self.y0, self.cell, self.ny)
    }
    pub fn cell_edges(&self, c: usize) -> &[u32] {
        &self.idx[self.start[c] as usize..self.start[c + 1] as usize]
    }

    /// Calls `f` with every cell the segment (widened by `pad`) passes through.
    fn cells_of(&self, e: &Edge, pad: f64, mut f: impl FnMut(usize)) {
        let (a, b) = (e.a, e.b);
        let (ylo, yhi) = (a[1].min(b[1]) - pad, a[1].max(b[1]) + pad);
        let (r0, r1) = (self.row(ylo), self.row(yhi));
        let dy = b[1] - a[1];
        for r in r0..=r1 {
            let (lo, hi) = if r0 == r1 || dy == 0.0 {
                (a[0].min(b[0]), a[0].max(b[0]))
            } else {
                let rb = self.y0 + r as f64 * self.cell;
                let (s, t) = (
                    ((rb - pad - a[1]) / dy).clamp(0.0, 1.0),
                    ((rb + self.cell + pad - a[1]) / dy).clamp(0.0, 1.0),
                );
                let (xs, xt) = (a[0] + s * (b[0] - a[0]), a[0] + t * (b[0] - a[0]));
                (xs.min(xt), xs.max(xt))
            };
            let (c0, c1) = (self.col(lo - pad), self.col(hi + pad));
            for c in c0..=c1 {
                f(r * self.nx + c);
            }
        }
    }

    /// Even-odd state of each cell's lower right corner, row by row: the
    /// crossings of the row's bottom line, sorted, counted from the right.
    fn corner_states(&mut self, edges: &[Edge]) {
        let mut xs: Vec<f64> = Vec::new();
        for r in 0..self.ny {
            let y = self.y0 + r as f64 * self.cell;
            xs.clear();
            for c in 0..self.nx {
                for &k in self.cell_edges(r * self.nx + c) {
                    let e = &edges[k as usize];
                    let (a, b) = (e.a, e.b);
                    if (a[1] > y) != (b[1] > y) {
                        let xi = a[0] + (y - a[1]) * (b[0] - a[0]) / (b[1] - a[1]);
                        // Count each crossing once: in the cell that holds it.
                        if self.col(xi) == c {
                            xs.push(xi);
                        }
                    }
                }
            }
            xs.sort_unstable_by(|p, q| p.total_cmp(q));
            // Corner of cell c is x = x0 + (c + 1)·cell; state = parity of
            // crossings with xi > corner.
            let mut j = xs.len();
            for c in (0..self.nx).rev() {
                let xc = self.x0 + (c + 1) as f64 * self.cell;
                while j > 0 && xs[j - 1] > xc {
                    j -= 1;
                }
                self.corner_in[r * self.nx + c] = (xs.len() - j) % 2 == 1;
            }
        }
    }

    /// Inside (even-odd over all rings) or within `tol` of an edge; the
    /// caller has checked that (x, y) is finite and in the padded box.
    pub fn contains(&self, edges: &[Edge], x: f64, y: f64, tol: f64) -> bool {
        let (cx, cy) = (self.col(x), self.row(y));
        let c = cy * self.nx + cx;
        let xr = self.x0 + (cx + 1) as f64 * self.cell;
        let yb = self.y0 + cy as f64 * self.cell;
        let t2 = tol * tol;
        let mut odd = self.corner_in[c];
        for &k in self.cell_edges(c) {
            let e = &edges[k as usize];
            let (a, b) = (e.a, e.b);
            if x >= a[0].min(b[0]) - tol
                && x <= a[0].max(b[0]) + tol
                && y >= a[1].min(b[1]) - tol
                && y <= a[1].max(b[1]) + tol
                && seg_dist2(x, y, a, b) <= t2
            {
                return true;
            }
            // Rightward leg at height y, from x to the cell's right side.
            if (a[1] > y) != (b[1] > y) {
                let xi = a[0] + (y - a[1]) * (b[0] - a[0]) / (b[1] - a[1]);
                if x < xi && xi <= xr {
                    odd = !odd;
                }
            }
            // Downward leg on the right side, from y to the corner.
            if (a[0] > xr) != (b[0] > xr) {
                let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
                let yi = a[1] + (xr - a[0]) * dy / dx;
                let rising = dx * dy > 0.0;
                let above = |v: f64| yi > v || (yi == v && rising);
                if above(yb) != above(y) {
                    odd = !odd;
                }
            }
        }
        odd
    }

    /// Smallest squared distance from (x, y) to any edge: rings of cells
    /// around the point's cell until no unvisited cell can hold a closer edge.
    pub fn min_dist2(&self, edges: &[Edge], x: f64, y: f64) -> f64 {
        let mut best = f64::INFINITY;
        let (cx, cy) = (self.col(x) as isize, self.row(y) as isize);
        let (nx, ny) = (self.nx as isize, self.ny as isize);
        let visit = |ix: isize, iy: isize, best: &mut f64| {
            for &i in self.cell_edges(iy as usize * self.nx + ix as usize) {
                let e = &edges[i as usize];
                let d2 = seg_dist2(x, y, e.a, e.b);
                if d2 < *best {
                    *best = d2;
                }
            }
        };
        let mut rho: isize = 0;
        loop {
            let (ylo, yhi) = ((cy - rho).max(0), (cy + rho).min(ny - 1));
            let (xlo, xhi) = ((cx - rho).max(0), (cx + rho).min(nx - 1));
            for iy in ylo..=yhi {
                if iy == cy - rho || iy == cy + rho {
                    for ix in xlo..=xhi {
                        visit(ix, iy, &mut best);
                    }
                } else {
                    if cx - rho >= 0 {
                        visit(cx - rho, iy, &mut best);
                    }
                    if rho > 0 && cx + rho < nx {
                        visit(cx + rho, iy, &mut best);
                    }
                }
            }
            let mut bound = f64::INFINITY;
            if cx - rho > 0 {
                bound = bound.min(x - (self.x0 + (cx - rho) as f64 * self.cell));
            }
            if cx + rho < nx - 1 {
                bound = bound.min(self.x0 + (cx + rho + 1) as f64 * self.cell - x);
            }
            if cy - rho > 0 {
                bound = bound.min(y - (self.y0 + (cy - rho) as f64 * self.cell));
            }
            if cy + rho < ny - 1 {
                bound = bound.min(self.y0 + (cy + rho + 1) as f64 * self.cell - y);
            }
            if bound == f64::INFINITY {
                return best;
            }
            let bound = bound.max(0.0);
            if best <= bound * bound {
                return best;
            }
            rho += 1;
        }
    }

    /// Indices (sorted, distinct) of the edges within `r` of (x, y).
    pub fn edges_near(&self, edges: &[Edge], x: f64, y: f64, r: f64) -> Vec<u32> {
        let r2 = r * r;
        let mut out = Vec::new();
        let (cx0, cx1) = (self.col(x - r), self.col(x + r));
        let (cy0, cy1) = (self.row(y - r), self.row(y + r));
        for cy in cy0..=cy1 {
            for cx in cx0..=cx1 {
                for &k in self.cell_edges(cy * self.nx + cx) {
                    if edges[k as usize].distance_sq(x, y) <= r2 {
                        out.push(k);
                    }
                }
            }
        }
        out.sort_unstable();
        out.dedup();
        out
    }
}
