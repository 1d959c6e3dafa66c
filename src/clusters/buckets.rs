//! A uniform bucket grid over points for fixed-radius searches (crate-internal;
//! the shared neighbour index lives in `crate::index`).

/// Points sorted into square buckets of side `cell`.
#[derive(Debug, Clone)]
pub(crate) struct Buckets {
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
    start: Vec<u32>,
    pub(crate) order: Vec<u32>,
}

/// Keeps the bucket count bounded whatever the radius.
const MAX_BUCKETS: usize = 1 << 22;

impl Buckets {
    /// Buckets of side at least `cell` (enlarged if there would be too many).
    pub(crate) fn new(x: &[f64], y: &[f64], cell: f64) -> Buckets {
        let n = x.len();
        let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
        for i in 0..n {
            x0 = x0.min(x[i]);
            y0 = y0.min(y[i]);
            x1 = x1.max(x[i]);
            y1 = y1.max(y[i]);
        }
        if n == 0 {
            (x0, y0, x1, y1) = (0.0, 0.0, 0.0, 0.0);
        }
        let mut cell = if cell > 0.0 && cell.is_finite() {
            cell
        } else {
            1.0
        };
        let span = (x1 - x0).max(y1 - y0).max(0.0);
        let cap = (MAX_BUCKETS.min(4 * n.max(1)) as f64).sqrt();
        if span / cell > cap {
            cell = span / cap;
        }
        let nx = ((x1 - x0) / cell).floor() as usize + 1;
        let ny = ((y1 - y0) / cell).floor() as usize + 1;
        let mut b = Buckets {
            x0,
            y0,
            cell,
            nx,
            ny,
            start: vec![0; nx * ny + 1],
            order: vec![0; n],
        };
        let ids: Vec<usize> = (0..n).map(|i| b.bucket(x[i], y[i])).collect();
        for &c in &ids {
            b.start[c + 1] += 1;
        }
        for c in 0..nx * ny {
            b.start[c + 1] += b.start[c];
        }
        let mut fill = b.start.clone();
        for (i, &c) in ids.iter().enumerate() {
            b.order[fill[c] as usize] = i as u32;
            fill[c] += 1;
        }
        b
    }

    fn cell_of(&self, v: f64, v0: f64, n: usize) -> usize {
        let f = ((v - v0) / self.cell).floor();
        if f <= 0.0 {
            0
        } else {
            (f as usize).min(n - 1)
        }
    }

    fn bucket(&self, x: f64, y: f64) -> usize {
        self.cell_of(y, self.y0, self.ny) * self.nx + self.cell_of(x, self.x0, self.nx)
    }

    /// Calls `f(j)` for every point j in buckets that may hold points
    /// within `r` of `(x, y)` (the caller checks the distance).
    #[inline]
    pub(crate) fn for_candidates(&self, x: f64, y: f64, r: f64, mut f: impl FnMut(usize)) {
        let i0 = self.cell_of(x - r, self.x0, self.nx);
        let i1 = self.cell_of(x + r, self.x0, self.nx);
        let j0 = self.cell_of(y - r, self.y0, self.ny);
        let j1 = self.cell_of(y + r, self.y0, self.ny);
        for j in j0..=j1 {
            let row = j * self.nx;
            let s = self.start[row + i0] as usize;
            let e = self.start[row + i1 + 1] as usize;
            for &k in &self.order[s..e] {
                f(k as usize);
            }
        }
    }

    /// Bucket side actually used.
    pub(crate) fn cell(&self) -> f64 {
        self.cell
    }

    /// Calls `f(j, d²)` for points in buckets at Chebyshev ring `ring`
    /// around the bucket of `(x, y)` (ring 0 = its own bucket).
    pub(crate) fn for_ring(&self, x: f64, y: f64, ring: usize, mut f: impl FnMut(usize)) -> bool {
        let ci = self.cell_of(x, self.x0, self.nx) as isize;
        let cj = self.cell_of(y, self.y0, self.ny) as isize;
        let r = ring as isize;
        let mut any_inside = false;
        for j in cj - r..=cj + r {
            if j < 0 || j >= self.ny as isize {
                continue;
            }
            let edge_row = j == cj - r || j == cj + r;
            let mut visit = |i: isize| {
                if i >= 0 && i < self.nx as isize {
                    any_inside = true;
                    let c = j as usize * self.nx + i as usize;
                    for &k in &self.order[self.start[c] as usize..self.start[c + 1] as usize] {
                        f(k as usize);
                    }
                }
            };
            if edge_row {
                for i in ci - r..=ci + r {
                    visit(i);
                }
            } else {
                visit(ci - r);
                if r > 0 {
                    visit(ci + r);
                }
            }
        }
        any_inside
    }
}
