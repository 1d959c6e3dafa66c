//! Which points are near each other?
//!
//! A uniform grid index over points in metres: nearest neighbours and all
//! pairs within a distance, without O(n²) work. Distances use `d ≤ r`.
//!
//! # Conventions
//! * A distance is `(dx² + dy²).sqrt()` and a pair is "within r" when that
//!   value is `≤ r` (METHODS §0, rules 3–4: one method everywhere; tests use
//!   the same expression).
//! * A point is never its own neighbour, but coincident points are each
//!   other's neighbours at distance 0 (they are kept, not merged).
//! * Indices refer to the order of the slices given to [`GridIndex::new`].
//!
//! # Algorithm
//! Points are bucketed by counting sort into square cells of side
//! `s = √(2·area/n)` over their bounding box (about two points per cell; a
//! line of points or all-identical points get a one-dimensional or a single
//! cell, and the cell count never exceeds 2n + 4). A nearest-neighbour search
//! visits rings of cells around the query's cell and stops once the k-th best
//! distance is no larger than the distance to any unvisited cell. Pairs are
//! enumerated once each by pairing every cell with itself and with the
//! "forward" half of its neighbourhood of reach ⌈r/s⌉.
//!
//! # Notes
//! Building is O(n); a nearest-neighbour query is O(1) expected for points
//! spread over an area, and pair enumeration is O(n + #pairs). Clustered data
//! (many points in few cells) degrades towards O(n²) only within clusters.
//! Non-finite coordinates are not expected (a [`crate::study::Pattern`] has
//! none); if present they never count as near anything.

/// A grid index over a fixed set of points.
///
/// # Examples
/// Three points on a line and a repeated one: coincident points are each
/// other's nearest neighbours at distance 0.
/// ```
/// use cloister::index::GridIndex;
/// let g = GridIndex::new(&[0.0, 3.0, 7.0, 7.0], &[0.0, 0.0, 0.0, 0.0]);
/// assert_eq!(g.nn_distances(), Some(vec![3.0, 3.0, 0.0, 0.0]));
/// let mut pairs = Vec::new();
/// g.for_each_pair_within(4.0, |i, j, d| pairs.push((i, j, d)));
/// pairs.sort_by_key(|p| (p.0, p.1));
/// assert_eq!(pairs, vec![(0, 1, 3.0), (1, 2, 4.0), (1, 3, 4.0), (2, 3, 0.0)]);
/// ```
#[derive(Debug, Clone)]
pub struct GridIndex {
    /// Coordinates in cell order.
    px: Vec<f64>,
    py: Vec<f64>,
    /// Original index of each point in cell order.
    id: Vec<u32>,
    /// Points of cell c are `start[c]..start[c + 1]` (cells row-major).
    start: Vec<u32>,
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
}

/// The k smallest (distance², index) seen so far, sorted ascending.
struct Best {
    k: usize,
    items: Vec<(f64, u32)>,
}

/// Receives candidate neighbours during a ring search.
trait Sink {
    /// The distance² a candidate must beat (∞ until enough are known).
    fn worst(&self) -> f64;
    fn offer(&mut self, d2: f64, j: u32);
}

/// The single nearest (distance², index); ties by lower index.
struct Best1 {
    d2: f64,
    j: u32,
}

impl Sink for Best1 {
    #[inline]
    fn worst(&self) -> f64 {
        self.d2
    }
    #[inline]
    fn offer(&mut self, d2: f64, j: u32) {
        if d2 < self.d2 || (d2 == self.d2 && j < self.j) {
            self.d2 = d2;
            self.j = j;
        }
    }
}

impl Sink for Best {
    fn worst(&self) -> f64 {
        Best::worst(self)
    }
    fn offer(&mut self, d2: f64, j: u32) {
        Best::offer(self, d2, j)
    }
}

impl Best {
    fn new(k: usize) -> Best {
        Best {
            k,
            items: Vec::with_capacity(k + 1),
        }
    }
    fn clear(&mut self) {
        self.items.clear();
    }
    /// The current k-th smallest distance², or ∞ while fewer than k are known.
    fn worst(&self) -> f64 {
        if self.items.len() < self.k {
            f64::INFINITY
        } else {
            self.items[self.k - 1].0
        }
    }
    /// Keeps (d2, j) if it is among the k smallest (ties by lower index).
    fn offer(&mut self, d2: f64, j: u32) {
        if self.items.len() == self.k {
            let (wd, wj) = self.items[self.k - 1];
            if !(d2 < wd || (d2 == wd && j < wj)) {
                return;
            }
            self.items.pop();
        }
        let pos = self
            .items
            .partition_point(|&(e, i)| e < d2 || (e == d2 && i < j));
        self.items.insert(pos, (d2, j));
    }
}

impl GridIndex {
    /// Builds the index. If the slices differ in length the extra values are
    /// ignored.
    pub fn new(x: &[f64], y: &[f64]) -> GridIndex {
        let n = x.len().min(y.len());
        let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
        for i in 0..n {
            if x[i].is_finite() && y[i].is_finite() {
                x0 = x0.min(x[i]);
                y0 = y0.min(y[i]);
                x1 = x1.max(x[i]);
                y1 = y1.max(y[i]);
            }
        }
        if x0 > x1 {
            (x0, y0, x1, y1) = (0.0, 0.0, 0.0, 0.0);
        }
        let (w, h) = (x1 - x0, y1 - y0);
        let nf = n.max(1) as f64;
        let mut cell = if w > 0.0 && h > 0.0 {
            (2.0 * w * h / nf).sqrt()
        } else if w.max(h) > 0.0 {
            2.0 * w.max(h) / nf
        } else {
            1.0
        };
        let dims = |cell: f64| {
            let nx = ((w / cell).floor() + 1.0).min(1e9) as usize;
            let ny = ((h / cell).floor() + 1.0).min(1e9) as usize;
            (nx, ny)
        };
        let (mut nx, mut ny) = dims(cell);
        let cap = 2 * n + 4;
        while nx.saturating_mul(ny) > cap {
            cell *= 1.5;
            (nx, ny) = dims(cell);
        }
        let mut g = GridIndex {
            px: Vec::with_capacity(n),
            py: Vec::with_capacity(n),
            id: Vec::with_capacity(n),
            start: vec![0; nx * ny + 1],
            x0,
            y0,
            cell,
            nx,
            ny,
        };
        let cells: Vec<usize> = (0..n).map(|i| g.cell_of(x[i], y[i])).collect();
        for &c in &cells {
            g.start[c + 1] += 1;
        }
        for c in 0..nx * ny {
            g.start[c + 1] += g.start[c];
        }
        let mut fill: Vec<u32> = g.start[..nx * ny].to_vec();
        g.px = vec![0.0; n];
        g.py = vec![0.0; n];
        g.id = vec![0; n];
        for (i, &c) in cells.iter().enumerate() {
            let s = fill[c] as usize;
            fill[c] += 1;
            g.px[s] = x[i];
            g.py[s] = y[i];
            g.id[s] = i as u32;
        }
        g
    }

    /// Number of points indexed.
    pub fn len(&self) -> usize {
        self.id.len()
    }
    pub fn is_empty(&self) -> bool {
        self.id.is_empty()
    }

    fn col(&self, x: f64) -> usize {
        let c = ((x - self.x0) / self.cell).floor();
        if c.is_nan() || c < 0.0 {
            0
        } else {
            (c as usize).min(self.nx - 1)
        }
    }
    fn row(&self, y: f64) -> usize {
        let c = ((y - self.y0) / self.cell).floor();
        if c.is_nan() || c < 0.0 {
            0
        } else {
            (c as usize).min(self.ny - 1)
        }
    }
    fn cell_of(&self, x: f64, y: f64) -> usize {
        self.row(y) * self.nx + self.col(x)
    }
    fn range(&self, c: usize) -> std::ops::Range<usize> {
        self.start[c] as usize..self.start[c + 1] as usize
    }

    /// Ring search around (qx, qy) keeping the k nearest, skipping original
    /// index `skip` (use `u32::MAX` for none).
    fn search<B: Sink>(&self, qx: f64, qy: f64, skip: u32, best: &mut B) {
        let (cx, cy) = (self.col(qx) as isize, self.row(qy) as isize);
        let (nx, ny) = (self.nx as isize, self.ny as isize);
        let mut rho: isize = 0;
        loop {
            let (ylo, yhi) = ((cy - rho).max(0), (cy + rho).min(ny - 1));
            let (xlo, xhi) = ((cx - rho).max(0), (cx + rho).min(nx - 1));
            let mut visit = |ix: isize, iy: isize| {
                for s in self.range(iy as usize * self.nx + ix as usize) {
                    if self.id[s] == skip {
                        continue;
                    }
                    let dx = self.px[s] - qx;
                    let dy = self.py[s] - qy;
                    best.offer(dx * dx + dy * dy, self.id[s]);
                }
            };
            // Only the cells on the ring at Chebyshev distance rho are new.
            for iy in ylo..=yhi {
                if iy == cy - rho || iy == cy + rho {
                    for ix in xlo..=xhi {
                        visit(ix, iy);
                    }
                } else {
                    if cx - rho >= 0 {
                        visit(cx - rho, iy);
                    }
                    if rho > 0 && cx + rho < nx {
                        visit(cx + rho, iy);
                    }
                }
            }
            // Lower bound on the distance to any cell outside the visited square.
            let mut bound = f64::INFINITY;
            if cx - rho > 0 {
                bound = bound.min(qx - (self.x0 + (cx - rho) as f64 * self.cell));
            }
            if cx + rho < nx - 1 {
                bound = bound.min(self.x0 + (cx + rho + 1) as f64 * self.cell - qx);
            }
            if cy - rho > 0 {
                bound = bound.min(qy - (self.y0 + (cy - rho) as f64 * self.cell));
            }
            if cy + rho < ny - 1 {
                bound = bound.min(self.y0 + (cy + rho + 1) as f64 * self.cell - qy);
            }
            if bound == f64::INFINITY {
                return; // the whole grid was visited
            }
            let bound = bound.max(0.0);
            if best.worst() <= bound * bound {
                return;
            }
            rho += 1;
        }
    }

    /// Distance from each point to its nearest other point (0 for coincident
    /// points), in input order. `None` when there are fewer than 2 points.
    pub fn nn_distances(&self) -> Option<Vec<f64>> {
        self.kth_nn_distances(1)
    }

    /// Distance from each point to its k-th nearest other point (k = 1 is the
    /// nearest), in input order. `None` when `k == 0` or there are not more
    /// than `k` points.
    pub fn kth_nn_distances(&self, k: usize) -> Option<Vec<f64>> {
        let n = self.len();
        if k == 0 || n <= k {
            return None;
        }
        let mut out = vec![0.0; n];
        if k == 1 {
            for s in 0..n {
                let mut b = Best1 {
                    d2: f64::INFINITY,
                    j: u32::MAX,
                };
                self.search(self.px[s], self.py[s], self.id[s], &mut b);
                out[self.id[s] as usize] = b.d2.sqrt();
            }
            return Some(out);
        }
        let mut b = Best::new(k);
        for s in 0..n {
            b.clear();
            self.search(self.px[s], self.py[s], self.id[s], &mut b);
            out[self.id[s] as usize] = b.worst().sqrt();
        }
        Some(out)
    }

    /// Index of each point's nearest other point and the distance, in input
    /// order (ties go to the lower index). `None` with fewer than 2 points. A
    /// point with no finite neighbour (possible only with non-finite
    /// coordinates) gets its own index and an infinite distance.
    pub fn nearest_neighbours(&self) -> Option<Vec<(usize, f64)>> {
        let n = self.len();
        if n < 2 {
            return None;
        }
        let mut out = vec![(0, 0.0); n];
        for s in 0..n {
            let mut b = Best1 {
                d2: f64::INFINITY,
                j: u32::MAX,
            };
            self.search(self.px[s], self.py[s], self.id[s], &mut b);
            let i = self.id[s] as usize;
            out[i] = if b.j == u32::MAX {
                (i, f64::INFINITY)
            } else {
                (b.j as usize, b.d2.sqrt())
            };
        }
        Some(out)
    }

    /// The indexed point nearest to (qx, qy) and its distance (ties go to the
    /// lower index). `None` when the index is empty.
    pub fn nearest(&self, qx: f64, qy: f64) -> Option<(usize, f64)> {
        if self.is_empty() {
            return None;
        }
        let mut b = Best1 {
            d2: f64::INFINITY,
            j: u32::MAX,
        };
        self.search(qx, qy, u32::MAX, &mut b);
        (b.j != u32::MAX).then(|| (b.j as usize, b.d2.sqrt()))
    }

    /// Calls `f(j, d)` for every indexed point j with distance d ≤ r from
    /// (qx, qy), in no particular order. Nothing is called when r is negative
    /// or NaN.
    pub fn for_each_within<F: FnMut(usize, f64)>(&self, qx: f64, qy: f64, r: f64, mut f: F) {
        if r.is_nan() || r < 0.0 || self.is_empty() {
            return;
        }
        let (xlo, xhi) = (self.col(qx - r), self.col(qx + r));
        let (ylo, yhi) = (self.row(qy - r), self.row(qy + r));
        for iy in ylo..=yhi {
            for ix in xlo..=xhi {
                for s in self.range(iy * self.nx + ix) {
                    let dx = self.px[s] - qx;
                    let dy = self.py[s] - qy;
                    let d = (dx * dx + dy * dy).sqrt();
                    if d <= r {
                        f(self.id[s] as usize, d);
                    }
                }
            }
        }
    }

    /// Calls `f(i, j, d)` once for every unordered pair of points i < j with
    /// distance d ≤ r, in no particular order. Nothing is called when r is
    /// negative or NaN; r = 0 gives the coincident pairs.
    pub fn for_each_pair_within<F: FnMut(usize, usize, f64)>(&self, r: f64, mut f: F) {
        if r.is_nan() || r < 0.0 || self.len() < 2 {
            return;
        }
        let reach = (r / self.cell).ceil().min(self.nx.max(self.ny) as f64) as isize;
        let (nx, ny) = (self.nx as isize, self.ny as isize);
        let mut emit = |a: usize, b: usize| {
            let dx = self.px[a] - self.px[b];
            let dy = self.py[a] - self.py[b];
            let d = (dx * dx + dy * dy).sqrt();
            if d <= r {
                let (i, j) = (self.id[a] as usize, self.id[b] as usize);
                if i < j {
                    f(i, j, d)
                } else {
                    f(j, i, d)
                }
            }
        };
        for cy in 0..ny {
            for cx in 0..nx {
                let c = (cy * nx + cx) as usize;
                let here = self.range(c);
                if here.is_empty() {
                    continue;
                }
                for a in here.clone() {
                    for b in a + 1..here.end {
                        emit(a, b);
                    }
                }
                for dy in 0..=reach.min(ny - 1 - cy) {
                    let xfrom = if dy == 0 { 1 } else { (-reach).max(-cx) };
                    let gy = ((dy - 1).max(0) as f64) * self.cell;
                    for dx in xfrom..=reach.min(nx - 1 - cx) {
                        let gx = ((dx.abs() - 1).max(0) as f64) * self.cell;
                        if gx * gx + gy * gy > r * r {
                            continue;
                        }
                        let o = ((cy + dy) * nx + cx + dx) as usize;
                        let there = self.range(o);
                        for a in here.clone() {
                            for b in there.clone() {
                                emit(a, b);
                            }
                        }
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rng::rng_from_seed;
    use rand::RngExt;

    const SEED_1: u64 = 0x5eed_0001;
    const SEED_2: u64 = 0x5eed_0002;

    fn random_points(n: usize, seed: u64) -> (Vec<f64>, Vec<f64>) {
        let mut rng = rng_from_seed(seed);
        (0..n)
            .map(|_| (rng.random::<f64>() * 1000.0, rng.random::<f64>() * 500.0))
            .unzip()
    }

    /// Sorted distances from point i to every other point (brute force).
    fn brute_sorted(x: &[f64], y: &[f64], i: usize) -> Vec<f64> {
        let mut d: Vec<f64> = (0..x.len())
            .filter(|&j| j != i)
            .map(|j| {
                let (dx, dy) = (x[i] - x[j], y[i] - y[j]);
                (dx * dx + dy * dy).sqrt()
            })
            .collect();
        d.sort_by(f64::total_cmp);
        d
    }

    fn brute_pairs(x: &[f64], y: &[f64], r: f64) -> Vec<(usize, usize, f64)> {
        let mut out = Vec::new();
        for i in 0..x.len() {
            for j in i + 1..x.len() {
                let (dx, dy) = (x[i] - x[j], y[i] - y[j]);
                let d = (dx * dx + dy * dy).sqrt();
                if d <= r {
                    out.push((i, j, d));
                }
            }
        }
        out
    }

    fn check_against_brute(x: &[f64], y: &[f64]) {
        let g = GridIndex::new(x, y);
        for k in 1..=3 {
            let got = g.kth_nn_distances(k).unwrap();
            for (i, &gi) in got.iter().enumerate() {
                assert_eq!(gi, brute_sorted(x, y, i)[k - 1], "k={k} i={i}");
            }
        }
        let nn = g.nearest_neighbours().unwrap();
        for (i, &(j, d)) in nn.iter().enumerate() {
            assert_ne!(i, j);
            assert_eq!(d, brute_sorted(x, y, i)[0]);
        }
        for r in [0.0, 3.0, 17.5, 60.0, 5000.0] {
            let mut got = Vec::new();
            g.for_each_pair_within(r, |i, j, d| got.push((i, j, d)));
            got.sort_by_key(|p| (p.0, p.1));
            assert_eq!(got, brute_pairs(x, y, r), "r = {r}");
        }
    }

    #[test]
    fn test_nn_and_pairs_match_brute_force() {
        let (x, y) = random_points(500, SEED_1);
        check_against_brute(&x, &y);
    }

    #[test]
    fn test_nn_with_duplicates() {
        let (mut x, mut y) = random_points(400, SEED_2);
        // Each of the first 100 points repeated once, point 0 five times.
        for i in 0..100 {
            x.push(x[i]);
            y.push(y[i]);
        }
        for _ in 0..4 {
            x.push(x[0]);
            y.push(y[0]);
        }
        check_against_brute(&x, &y);
        let g = GridIndex::new(&x, &y);
        let d = g.nn_distances().unwrap();
        assert_eq!(d[0], 0.0);
        assert_eq!(d[150], brute_sorted(&x, &y, 150)[0]);
        assert!(d[150] > 0.0);
        let mut zero_pairs = 0;
        g.for_each_pair_within(0.0, |_, _, _| zero_pairs += 1);
        // 99 duplicated pairs + point 0 six times: C(6,2) = 15.
        assert_eq!(zero_pairs, 99 + 15);
    }

    #[test]
    fn test_nn_all_identical_points() {
        let x = vec![3.0; 50];
        let y = vec![-7.0; 50];
        let g = GridIndex::new(&x, &y);
        assert_eq!(g.nn_distances().unwrap(), vec![0.0; 50]);
        assert_eq!(g.kth_nn_distances(49).unwrap(), vec![0.0; 50]);
        assert!(g.kth_nn_distances(50).is_none());
        let mut count = 0;
        g.for_each_pair_within(0.0, |i, j, d| {
            assert!(i < j && d == 0.0);
            count += 1;
        });
        assert_eq!(count, 50 * 49 / 2);
    }

    #[test]
    fn test_empty_and_single_point() {
        let g = GridIndex::new(&[], &[]);
        assert!(g.is_empty());
        assert!(g.nn_distances().is_none());
        assert!(g.nearest(0.0, 0.0).is_none());
        g.for_each_pair_within(10.0, |_, _, _| panic!("no pairs"));
        let g = GridIndex::new(&[1.0], &[2.0]);
        assert!(g.nn_distances().is_none());
        assert!(g.nearest_neighbours().is_none());
        assert_eq!(g.nearest(4.0, 6.0), Some((0, 5.0)));
        g.for_each_pair_within(10.0, |_, _, _| panic!("no pairs"));
        assert!(GridIndex::new(&[1.0, 2.0], &[0.0, 0.0])
            .kth_nn_distances(0)
            .is_none());
    }

    #[test]
    fn test_collinear_points() {
        let x: Vec<f64> = (0..300).map(|i| (i * i % 97) as f64 * 1.5).collect();
        let y = vec![10.0; 300];
        check_against_brute(&x, &y);
        let (x, y) = (y.clone(), x.clone());
        check_against_brute(&x, &y);
    }

    #[test]
    fn test_clustered_points_and_far_outlier() {
        let mut rng = rng_from_seed(9);
        let (mut x, mut y): (Vec<f64>, Vec<f64>) = (0..300)
            .map(|_| (rng.random::<f64>(), rng.random::<f64>()))
            .unzip();
        x.push(1e6);
        y.push(-1e6);
        check_against_brute(&x, &y);
    }

    #[test]
    fn test_nearest_query_and_within() {
        let (x, y) = random_points(500, SEED_1);
        let g = GridIndex::new(&x, &y);
        let mut rng = rng_from_seed(11);
        for _ in 0..200 {
            // Queries inside and well outside the points' box.
            let qx = rng.random::<f64>() * 3000.0 - 1000.0;
            let qy = rng.random::<f64>() * 1500.0 - 500.0;
            let d: Vec<f64> = x
                .iter()
                .zip(&y)
                .map(|(a, b)| ((a - qx).powi(2) + (b - qy).powi(2)).sqrt())
                .collect();
            let (j, dj) = g.nearest(qx, qy).unwrap();
            let best = d.iter().cloned().fold(f64::INFINITY, f64::min);
            assert_eq!(dj, best);
            assert_eq!(d[j], best);
            let r = 40.0;
            let mut got = Vec::new();
            g.for_each_within(qx, qy, r, |j, dd| got.push((j, dd)));
            got.sort_by_key(|p| p.0);
            let want: Vec<(usize, f64)> = d
                .iter()
                .enumerate()
                .filter(|(_, &v)| v <= r)
                .map(|(j, &v)| (j, v))
                .collect();
            assert_eq!(got, want);
        }
    }

    #[test]
    fn test_nearest_ties_go_to_lower_index() {
        let x = [5.0, 0.0, 6.0, 4.0, 5.0, 5.0];
        let y = [5.0, 0.0, 5.0, 5.0, 6.0, 4.0];
        let g = GridIndex::new(&x, &y);
        let nn = g.nearest_neighbours().unwrap();
        assert_eq!(nn[0], (2, 1.0));
        assert_eq!(g.nearest(5.0, 5.0), Some((0, 0.0)));
        assert_eq!(g.nearest(5.5, 5.0), Some((0, 0.5)));
    }

    #[test]
    fn test_negative_or_nan_radius() {
        let (x, y) = random_points(50, SEED_1);
        let g = GridIndex::new(&x, &y);
        g.for_each_pair_within(-1.0, |_, _, _| panic!("none"));
        g.for_each_pair_within(f64::NAN, |_, _, _| panic!("none"));
        g.for_each_within(1.0, 1.0, f64::NAN, |_, _| panic!("none"));
    }

    /// Closed form (METHODS §3; STYLE closed-form list): on a k×k square
    /// lattice with spacing d every nearest-neighbour distance is d, and
    /// every interior point has exactly 4 neighbours at distance d.
    #[test]
    fn test_square_lattice_nn_equals_spacing() {
        let (k, d) = (30usize, 2.5);
        let (x, y): (Vec<f64>, Vec<f64>) = (0..k * k)
            .map(|i| ((i % k) as f64 * d + d / 2.0, (i / k) as f64 * d + d / 2.0))
            .unzip();
        let g = GridIndex::new(&x, &y);
        assert!(g.nn_distances().unwrap().iter().all(|&v| v == d));
        let mut pairs = 0;
        g.for_each_pair_within(d, |_, _, _| pairs += 1);
        assert_eq!(pairs, 2 * k * (k - 1));
    }
}
