//! Which points are near each other?
//!
//! The one neighbour index of the crate: a uniform grid over points in
//! metres for k-nearest-neighbour and fixed-radius queries, and the pair
//! enumeration the distance functions count in. Every module that asks
//! "which points are near this one" uses [`GridIndex`]: the summary and
//! Clark–Evans (nearest-neighbour distances), G and F, masking and
//! k-anonymity (counts within r), DBSCAN (ε-neighbourhoods), the k-distance
//! plot, bandwidth selection and the exact kernel sums (candidates within a
//! cut-off), the hard-core simulation and K and g (pairs within r).
//!
//! # Conventions
//! * A distance is `(dx² + dy²).sqrt()` and a pair is "within r" when that
//!   value is `≤ r` (one method everywhere; tests use the same expression).
//!   The crate-internal slot-level iterators hand over candidates or `d²`
//!   and leave the comparison to the caller, which keeps its own rule.
//! * A point is never its own neighbour, but coincident points are each
//!   other's neighbours at distance 0 (they are kept, not merged).
//! * Indices refer to the order of the slices given to the constructor.
//!   Inside, points are stored in *slot* order (sorted by cell); the
//!   crate-internal iterators speak in slots, `id[slot]` maps back.
//!
//! # Algorithm
//! Points are bucketed by a stable counting sort into square cells over
//! their bounding box ([`bbox`]), row-major, so the points of a row of cells
//! are one contiguous run of slots and, within a cell, in input order.
//! [`GridIndex::new`] picks the side `s = √(2·area/n)` (about two points per
//! cell; a line of points or all-identical points get a one-dimensional or a
//! single cell, and the cell count never exceeds 2n + 4);
//! [`GridIndex::with_cell`] takes the side from the caller (a search radius,
//! say) and enlarges it only to keep the table at most max(4n, 4096) cells.
//! A nearest-neighbour search visits rings of cells around the query's cell
//! and stops once the k-th best distance is no larger than the distance to
//! any unvisited cell. Pairs are enumerated once each by pairing every cell
//! with itself and with runs of cells in the "forward" half of its
//! neighbourhood, each row clipped to the columns that can reach the disc of
//! radius r (with cells of side r/4 about 1.5 times the pairs within r are
//! examined).
//!
//! The pair-counting inner loop of K and g (`for_each_block`,
//! `for_each_point_runs_beyond`) works on these same slots and cells: it
//! hands out whole runs of slots so the caller's loop walks plain slices
//! and vectorises. It is part of this index, not a second grid; K and g
//! keep their order of summation, hence their values bit for bit.
//!
//! # Coincident points
//! Thousands of events geocoded to one address keep one slot each (the pair
//! loops and K/g see every event), but the nearest-neighbour searches
//! (`kth_nn_distances`, `nn_distances`, `nearest_neighbours`, `nearest`,
//! the G/F distances) run on a second table over the same cells: the
//! *distinct locations*, each once with its multiplicity m and its events'
//! slots (an offset table, O(n) memory, built on first use). The k-th
//! nearest distance is computed once per location: with m > k it is 0 at
//! once; otherwise the m − 1 others count as k-th candidates at distance 0
//! and the ring search over locations counts each location m times. The
//! distances are those of the per-event search bit for bit (the same
//! coordinates enter the same expression). DBSCAN works on the locations
//! too ([`crate::clusters::dbscan`]). [`GridIndex::distinct_locations`] and
//! [`GridIndex::multiplicities`] expose the grouping.
//!
//! # Notes
//! Building is O(n) (the location table O(n log m) for cells of m events);
//! a nearest-neighbour query is O(1) expected for points spread over an
//! area, and pair enumeration is O(n + #pairs). Stacked events cost one
//! location each. Distinct points packed much more densely than the rest of
//! the bounding box (a tight cloud plus a far outlier) still crowd a few
//! cells and degrade towards O(m²) within them.
//! Non-finite coordinates are not expected (a [`crate::study::Pattern`] has
//! none); if present they are left out of the bounding box and never count
//! as near anything.

/// Bounding box `[x0, y0, x1, y1]` of the points with finite coordinates
/// (the shorter slice sets the count), or `None` when there are none.
///
/// # Examples
/// ```
/// use cloister::index::bbox;
/// assert_eq!(bbox(&[1.0, f64::NAN, -2.0], &[5.0, 0.0, 3.0]), Some([-2.0, 3.0, 1.0, 5.0]));
/// assert_eq!(bbox(&[], &[]), None);
/// ```
pub fn bbox(x: &[f64], y: &[f64]) -> Option<[f64; 4]> {
    let mut b = [f64::MAX, f64::MAX, f64::MIN, f64::MIN];
    for (&px, &py) in x.iter().zip(y) {
        if px.is_finite() && py.is_finite() {
            b = [b[0].min(px), b[1].min(py), b[2].max(px), b[3].max(py)];
        }
    }
    (b[0] <= b[2]).then_some(b)
}

/// Column (or row) of coordinate `v` in a grid of `n ≥ 1` cells of side
/// `cell` starting at `v0`: clamped to `0..n`, NaN to 0.
#[inline]
pub(crate) fn cell_coord(v: f64, v0: f64, cell: f64, n: usize) -> usize {
    // `as` truncates toward zero and saturates (negative and NaN to 0), so
    // this is floor-then-clamp without a call to `floor`, which a portable
    // x86-64 build cannot inline (no SSE4.1 rounding instruction).
    (((v - v0) / cell) as usize).min(n - 1)
}

#[cfg(test)]
#[test]
fn cell_coord_is_floor_then_clamp() {
    // The definition it replaces: floor, then NaN and below 0 to 0, above to n − 1.
    let reference = |v: f64, v0: f64, cell: f64, n: usize| {
        let c = ((v - v0) / cell).floor();
        if c.is_nan() || c < 0.0 {
            0
        } else {
            (c as usize).min(n - 1)
        }
    };
    let vs = [
        -1e300,
        -3.5,
        -1.0,
        -0.5,
        -1e-300,
        -0.0,
        0.0,
        1e-300,
        0.5,
        0.999_999_999,
        1.0,
        2.0,
        2.5,
        9.999,
        10.0,
        10.5,
        1e300,
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::NAN,
    ];
    for &v in &vs {
        for &(v0, cell, n) in &[(0.0, 1.0, 10), (-2.0, 0.25, 7), (5.0, 3.0, 1)] {
            assert_eq!(
                cell_coord(v, v0, cell, n),
                reference(v, v0, cell, n),
                "{v} {v0} {cell}"
            );
        }
    }
}

/// Locations per native thread below which the nearest-neighbour distances
/// stay on one thread (starting a thread costs about as much as a few
/// thousand searches; common practice, no source).
pub const LOCATIONS_PER_THREAD: usize = 100_000;

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
    /// Coordinates in slot (cell) order.
    pub(crate) xs: Vec<f64>,
    pub(crate) ys: Vec<f64>,
    /// Original index of each slot.
    pub(crate) id: Vec<u32>,
    /// Slots of cell c are `start[c]..start[c + 1]` (cells row-major).
    start: Vec<u32>,
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
    /// Distinct locations, built on the first nearest-neighbour search.
    locs: std::sync::OnceLock<Locations>,
}

/// The distinct locations of the points, cell by cell: the layer the
/// nearest-neighbour searches run on, so that m events at one address are
/// one candidate of multiplicity m (built on the first such search).
#[derive(Debug, Clone)]
pub(crate) struct Locations {
    /// Coordinates of each location, cells row-major; within a cell, in
    /// the order of each location's first slot.
    pub(crate) x: Vec<f64>,
    pub(crate) y: Vec<f64>,
    /// Locations of cell c are `start[c]..start[c + 1]`.
    start: Vec<u32>,
    /// Slots at location l are `slots[off[l]..off[l + 1]]`, ascending
    /// (hence ascending original index too).
    off: Vec<u32>,
    slots: Vec<u32>,
    /// Location of each slot.
    pub(crate) of_slot: Vec<u32>,
    /// Lowest original index at each location.
    first_id: Vec<u32>,
}

impl Locations {
    fn build(g: &GridIndex) -> Locations {
        let n = g.len();
        let ncell = g.nx * g.ny;
        // At most n locations: room for all, so no table grows by copying.
        let mut off = Vec::with_capacity(n + 1);
        off.push(0);
        let mut loc = Locations {
            x: Vec::with_capacity(n),
            y: Vec::with_capacity(n),
            start: Vec::with_capacity(ncell + 1),
            off,
            slots: Vec::with_capacity(n),
            of_slot: vec![0; n],
            first_id: Vec::with_capacity(n),
        };
        // Exactly equal coordinates (0.0 and −0.0 alike) share a location;
        // a non-finite point is a location of its own.
        let key = |s: usize| {
            let (x, y) = (g.xs[s], g.ys[s]);
            if x.is_finite() && y.is_finite() {
                ((x + 0.0).to_bits(), (y + 0.0).to_bits(), 0)
            } else {
                (0, 0, s + 1)
            }
        };
        let mut order: Vec<usize> = Vec::new();
        let mut groups: Vec<(usize, usize)> = Vec::new();
        for c in 0..ncell {
            loc.start.push(loc.x.len() as u32);
            let r = g.range(c);
            if r.is_empty() {
                continue;
            }
            // A few points, all at different places (the usual case): each
            // is a location of its own, in slot order, as the general path
            // below would give, without sorting.
            let distinct = r.len() == 1
                || (r.len() <= 8 && r.clone().all(|a| (a + 1..r.end).all(|b| key(a) != key(b))));
            if distinct {
                for s in r {
                    loc.x.push(g.xs[s]);
                    loc.y.push(g.ys[s]);
                    loc.first_id.push(g.id[s]);
                    loc.of_slot[s] = (loc.x.len() - 1) as u32;
                    loc.slots.push(s as u32);
                    loc.off.push(loc.slots.len() as u32);
                }
                continue;
            }
            order.clear();
            order.extend(r);
            if order.len() > 1 {
                order.sort_by_key(|&s| (key(s), s));
            }
            // Runs of equal keys, then ordered by their first slot.
            groups.clear();
            let mut a = 0;
            for b in 1..=order.len() {
                if b == order.len() || key(order[b]) != key(order[a]) {
                    groups.push((a, b));
                    a = b;
                }
            }
            groups.sort_by_key(|&(a, _)| order[a]);
            for &(a, b) in &groups {
                let l = loc.x.len() as u32;
                let s0 = order[a];
                loc.x.push(g.xs[s0]);
                loc.y.push(g.ys[s0]);
                loc.first_id.push(g.id[s0]);
                for &s in &order[a..b] {
                    loc.slots.push(s as u32);
                    loc.of_slot[s] = l;
                }
                loc.off.push(loc.slots.len() as u32);
            }
        }
        loc.start.push(loc.x.len() as u32);
        loc
    }

    /// Number of distinct locations.
    pub(crate) fn len(&self) -> usize {
        self.x.len()
    }

    /// Locations in cell c.
    #[inline]
    pub(crate) fn cell(&self, c: usize) -> std::ops::Range<usize> {
        self.start[c] as usize..self.start[c + 1] as usize
    }

    /// Locations in cells c0..=c1 (one run when they are in one row).
    #[inline]
    pub(crate) fn run(&self, c0: usize, c1: usize) -> std::ops::Range<usize> {
        self.start[c0] as usize..self.start[c1 + 1] as usize
    }

    /// Number of events at location l.
    #[inline]
    pub(crate) fn mult(&self, l: usize) -> usize {
        (self.off[l + 1] - self.off[l]) as usize
    }

    #[inline]
    pub(crate) fn members(&self, l: usize) -> &[u32] {
        &self.slots[self.off[l] as usize..self.off[l + 1] as usize]
    }
}
/// Receives candidate locations during a ring search.
trait Sink {
    /// The distance² a candidate must beat (∞ until enough are known).
    fn worst(&self) -> f64;
    /// Offers location `l` at distance² `d2` (its multiplicity and lowest
    /// original index are read from `loc` only when needed).
    fn offer(&mut self, d2: f64, l: usize, loc: &Locations);
    /// Whether candidates at exactly the current worst distance are still
    /// wanted (then the search goes on while an unvisited cell could hold
    /// one at that distance).
    fn keeps_ties(&self) -> bool {
        false
    }
}

/// The single nearest distance² (no index kept).
struct BestD(f64);

impl Sink for BestD {
    #[inline]
    fn worst(&self) -> f64 {
        self.0
    }
    #[inline]
    fn offer(&mut self, d2: f64, _l: usize, _loc: &Locations) {
        if d2 < self.0 {
            self.0 = d2;
        }
    }
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
    fn offer(&mut self, d2: f64, l: usize, loc: &Locations) {
        if d2 < self.d2 || (d2 == self.d2 && loc.first_id[l] < self.j) {
            self.d2 = d2;
            self.j = loc.first_id[l];
        }
    }
}

/// The k-th smallest distance² counting each location with its
/// multiplicity: the nearest locations seen so far as (distance², events),
/// ascending, trimmed to those needed to reach k events.
struct Kth {
    k: usize,
    total: usize,
    items: Vec<(f64, usize)>,
}

impl Kth {
    fn reset(&mut self, k: usize) {
        self.k = k;
        self.total = 0;
        self.items.clear();
    }
}

impl Sink for Kth {
    #[inline]
    fn worst(&self) -> f64 {
        if self.total < self.k {
            f64::INFINITY
        } else {
            self.items[self.items.len() - 1].0
        }
    }
    #[inline]
    fn offer(&mut self, d2: f64, l: usize, loc: &Locations) {
        // NaN and anything beyond the current k-th are rejected.
        if d2.is_nan() || d2 > self.worst() {
            return;
        }
        let m = loc.mult(l);
        let pos = self.items.partition_point(|&(e, _)| e <= d2);
        self.items.insert(pos, (d2, m));
        self.total += m;
        while let Some(&(_, last)) = self.items.last() {
            if self.total - last >= self.k {
                self.total -= last;
                self.items.pop();
            } else {
                break;
            }
        }
    }
}

/// Every location within the k-th smallest distance², ties at that
/// distance included (each location counted with its multiplicity): the
/// candidates of [`GridIndex::k_nearest_ranked`].
struct KthTies {
    k: usize,
    total: usize,
    items: Vec<(f64, usize, usize)>,
}

impl KthTies {
    /// The k-th smallest distance² so far (∞ until k events are known).
    fn kth(&self) -> f64 {
        let mut acc = 0;
        for &(d2, _, m) in &self.items {
            acc += m;
            if acc >= self.k {
                return d2;
            }
        }
        f64::INFINITY
    }
}

impl Sink for KthTies {
    #[inline]
    fn worst(&self) -> f64 {
        if self.total < self.k {
            f64::INFINITY
        } else {
            self.items[self.items.len() - 1].0
        }
    }
    fn offer(&mut self, d2: f64, l: usize, loc: &Locations) {
        if d2.is_nan() || d2 > self.worst() {
            return;
        }
        let m = loc.mult(l);
        let pos = self.items.partition_point(|&(e, _, _)| e <= d2);
        self.items.insert(pos, (d2, l, m));
        self.total += m;
        let kth = self.kth();
        if kth.is_finite() {
            let keep = self.items.partition_point(|&(e, _, _)| e <= kth);
            for &(_, _, m) in &self.items[keep..] {
                self.total -= m;
            }
            self.items.truncate(keep);
        }
    }
    fn keeps_ties(&self) -> bool {
        true
    }
}

/// Neighbour lists of [`GridIndex::k_nearest_ranked`].
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct RankedNeighbours {
    /// Neighbours per point: `k`.
    pub k: usize,
    /// Row i (`ids[i·k .. (i+1)·k]`) lists point i's k nearest other points
    /// (original indices), nearest first; equal distances in the given rank order.
    pub ids: Vec<u32>,
    /// Points whose list (or one of its first-k prefixes) was settled by the
    /// rank order, because two candidates at the same distance straddled a
    /// cut: without ties this is 0.
    pub tie_decided: usize,
}

impl GridIndex {
    /// Builds the index with cells of about two points each. If the slices
    /// differ in length the extra values are ignored.
    pub fn new(x: &[f64], y: &[f64]) -> GridIndex {
        let n = x.len().min(y.len());
        let [x0, y0, x1, y1] = bbox(&x[..n], &y[..n]).unwrap_or([0.0; 4]);
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
        GridIndex::fill(&x[..n], &y[..n], x0, y0, cell, nx, ny)
    }

    /// Builds the index with cells of side `cell` (a search radius or a
    /// fraction of it; 1 if not a positive finite number), enlarged only as
    /// far as needed to keep the cell table at most about max(4n, 4096)
    /// cells (memory stays flat per simulation; larger cells only mean more
    /// candidates, never missed ones). If the slices differ in length the
    /// extra values are ignored.
    pub fn with_cell(x: &[f64], y: &[f64], cell: f64) -> GridIndex {
        let n = x.len().min(y.len());
        let [x0, y0, x1, y1] = bbox(&x[..n], &y[..n]).unwrap_or([0.0; 4]);
        let mut cell = if cell.is_finite() && cell > 0.0 {
            cell
        } else {
            1.0
        };
        let max_cells = (4 * n).max(4096) as f64;
        let (w, h) = (x1 - x0, y1 - y0);
        if (w / cell + 1.0) * (h / cell + 1.0) > max_cells {
            // Positive root of (w/c + 1)(h/c + 1) = max_cells.
            let a = max_cells - 1.0;
            let b = w + h;
            let c = (b + (b * b + 4.0 * a * w * h).sqrt()) / (2.0 * a);
            cell = cell.max(c);
        }
        let nx = ((w / cell).floor() as usize + 1).max(1);
        let ny = ((h / cell).floor() as usize + 1).max(1);
        GridIndex::fill(&x[..n], &y[..n], x0, y0, cell, nx, ny)
    }

    /// Stable counting sort of the points into the given cells.
    fn fill(x: &[f64], y: &[f64], x0: f64, y0: f64, cell: f64, nx: usize, ny: usize) -> Self {
        let n = x.len();
        let mut g = GridIndex {
            xs: vec![0.0; n],
            ys: vec![0.0; n],
            id: vec![0; n],
            start: vec![0; nx * ny + 1],
            x0,
            y0,
            cell,
            nx,
            ny,
            locs: std::sync::OnceLock::new(),
        };
        let cells: Vec<u32> = (0..n).map(|i| g.cell_of(x[i], y[i]) as u32).collect();
        for &c in &cells {
            g.start[c as usize + 1] += 1;
        }
        for c in 0..nx * ny {
            g.start[c + 1] += g.start[c];
        }
        let mut fill: Vec<u32> = g.start[..nx * ny].to_vec();
        for (i, &c) in cells.iter().enumerate() {
            let s = fill[c as usize] as usize;
            fill[c as usize] += 1;
            g.xs[s] = x[i];
            g.ys[s] = y[i];
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
    /// Side of the cells actually used, in the points' units.
    pub fn cell(&self) -> f64 {
        self.cell
    }

    #[inline]
    fn col(&self, x: f64) -> usize {
        cell_coord(x, self.x0, self.cell, self.nx)
    }
    #[inline]
    fn row(&self, y: f64) -> usize {
        cell_coord(y, self.y0, self.cell, self.ny)
    }
    fn cell_of(&self, x: f64, y: f64) -> usize {
        self.row(y) * self.nx + self.col(x)
    }
    #[inline]
    fn range(&self, c: usize) -> std::ops::Range<usize> {
        self.start[c] as usize..self.start[c + 1] as usize
    }

    /// The distinct locations (built on first use).
    pub(crate) fn locations(&self) -> &Locations {
        self.locs.get_or_init(|| Locations::build(self))
    }

    /// Number of distinct locations among the points (exactly equal
    /// coordinates; a point with a non-finite coordinate counts alone).
    pub fn distinct_locations(&self) -> usize {
        self.locations().len()
    }

    /// For each point in input order, the number of points (itself
    /// included) at exactly its location.
    pub fn multiplicities(&self) -> Vec<usize> {
        let loc = self.locations();
        let mut out = vec![0; self.len()];
        for (s, &l) in loc.of_slot.iter().enumerate() {
            out[self.id[s] as usize] = loc.mult(l as usize);
        }
        out
    }

    /// Cells in x and y.
    pub(crate) fn dims(&self) -> (usize, usize) {
        (self.nx, self.ny)
    }

    /// Ring search over the distinct locations around (qx, qy), skipping
    /// location `skip` (use `usize::MAX` for none). Returns the number of
    /// locations examined.
    fn search<B: Sink>(&self, qx: f64, qy: f64, skip: usize, best: &mut B) -> usize {
        let loc = self.locations();
        let (cx, cy) = (self.col(qx) as isize, self.row(qy) as isize);
        let (nx, ny) = (self.nx as isize, self.ny as isize);
        let mut rho: isize = 0;
        let mut visited = 0;
        loop {
            let (ylo, yhi) = ((cy - rho).max(0), (cy + rho).min(ny - 1));
            let (xlo, xhi) = ((cx - rho).max(0), (cx + rho).min(nx - 1));
            // Cells ix0..=ix1 of row iy: one run of locations (cells are
            // row-major), offered in the same order as cell by cell.
            let mut visit_run = |ix0: isize, ix1: isize, iy: isize| {
                let c0 = iy as usize * self.nx;
                let ls = loc.run(c0 + ix0 as usize, c0 + ix1 as usize);
                visited += ls.len();
                let (xs, ys) = (&loc.x[ls.clone()], &loc.y[ls.clone()]);
                for (k, (&x, &y)) in xs.iter().zip(ys).enumerate() {
                    let l = ls.start + k;
                    if l == skip {
                        continue;
                    }
                    let dx = x - qx;
                    let dy = y - qy;
                    best.offer(dx * dx + dy * dy, l, loc);
                }
            };
            // Only the cells on the ring at Chebyshev distance rho are new.
            for iy in ylo..=yhi {
                if iy == cy - rho || iy == cy + rho {
                    visit_run(xlo, xhi, iy);
                } else {
                    if cx - rho >= 0 {
                        visit_run(cx - rho, cx - rho, iy);
                    }
                    if rho > 0 && cx + rho < nx {
                        visit_run(cx + rho, cx + rho, iy);
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
                return visited; // the whole grid was visited
            }
            let bound = bound.max(0.0);
            let (worst, b2) = (best.worst(), bound * bound);
            if worst < b2 || (worst == b2 && !best.keeps_ties()) {
                return visited;
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
    /// than `k` points. Computed once per distinct location: a location
    /// holding more than k events answers 0 without a search.
    pub fn kth_nn_distances(&self, k: usize) -> Option<Vec<f64>> {
        let mut out = vec![0.0; self.len()];
        self.each_kth_nn(k, |s, d| out[self.id[s as usize] as usize] = d)?;
        Some(out)
    }

    /// The distances of [`GridIndex::nn_distances`] in no particular order
    /// (grid order): for summaries of the distribution, which need no
    /// point-by-point answer and so skip scattering them into input order.
    /// In a native build with at least [`LOCATIONS_PER_THREAD`] locations
    /// per thread, the locations are split over the machine's cores
    /// (contiguous ranges joined in order: the same values in the same
    /// order as on one thread).
    pub fn nn_distances_unordered(&self) -> Option<Vec<f64>> {
        let threads = crate::cores::threads_for(self.locations().len(), LOCATIONS_PER_THREAD);
        #[cfg(not(target_arch = "wasm32"))]
        if threads > 1 && self.len() > 1 {
            return Some(self.nn_distances_split(threads));
        }
        let _ = threads;
        let mut out = Vec::with_capacity(self.len());
        self.each_kth_nn(1, |_, d| out.push(d))?;
        Some(out)
    }

    /// [`GridIndex::nn_distances_unordered`] over `threads` native threads
    /// (more than one point). Progress is not reported from them.
    #[cfg(not(target_arch = "wasm32"))]
    fn nn_distances_split(&self, threads: usize) -> Vec<f64> {
        let loc = self.locations();
        let range = |r: std::ops::Range<usize>| {
            let mut out = Vec::new();
            for l in r {
                let m = loc.mult(l);
                let d = if m > 1 {
                    0.0
                } else {
                    self.nearest_d2_of_location(l).sqrt()
                };
                out.extend(std::iter::repeat_n(d, m));
            }
            out
        };
        // A thread failed (cannot happen short of a panic): all of it on
        // this thread.
        let parts = crate::cores::each_on_a_thread(crate::cores::ranges(loc.len(), threads), range)
            .unwrap_or_else(|| vec![range(0..loc.len())]);
        let mut out = Vec::with_capacity(self.len());
        for p in parts {
            out.extend_from_slice(&p);
        }
        out
    }

    /// Calls `put(slot, d)` with each slot's distance to its k-th nearest
    /// other point, location by location; `None` (and no calls) when
    /// `k == 0` or there are not more than `k` points.
    fn each_kth_nn(&self, k: usize, mut put: impl FnMut(u32, f64)) -> Option<()> {
        let n = self.len();
        if k == 0 || n <= k {
            return None;
        }
        let loc = self.locations();
        let mut b = Kth {
            k,
            total: 0,
            items: Vec::with_capacity(k + 1),
        };
        for l in 0..loc.len() {
            if l % 2048 == 0 {
                crate::progress::report(l, loc.len());
            }
            let m = loc.mult(l);
            let d = if m > k {
                0.0
            } else if k == 1 {
                self.nearest_d2_of_location(l).sqrt()
            } else {
                // The other m − 1 events here are at distance 0.
                b.reset(k - (m - 1));
                self.search(loc.x[l], loc.y[l], l, &mut b);
                b.worst().sqrt()
            };
            for &s in loc.members(l) {
                put(s, d);
            }
        }
        Some(())
    }

    /// Squared distance from location l to the nearest other location (∞
    /// when there is none). First the block of 3 × 3 cells around l's cell
    /// (three runs of locations, one per row); if the nearest found there is
    /// no farther than the nearest cell outside the block (the stopping
    /// rule of the ring search after its first ring), it is the nearest of
    /// all; otherwise the ring search decides. The minimum of the same
    /// distances², so the ring search's value bit for bit, with less work
    /// per location for points spread over an area.
    fn nearest_d2_of_location(&self, l: usize) -> f64 {
        let loc = self.locations();
        let (qx, qy) = (loc.x[l], loc.y[l]);
        let (cx, cy) = (self.col(qx), self.row(qy));
        let (xlo, xhi) = (cx.saturating_sub(1), (cx + 1).min(self.nx - 1));
        let (ylo, yhi) = (cy.saturating_sub(1), (cy + 1).min(self.ny - 1));
        let mut best = f64::INFINITY;
        for iy in ylo..=yhi {
            let c0 = iy * self.nx;
            let ls = loc.run(c0 + xlo, c0 + xhi);
            let (xs, ys) = (&loc.x[ls.clone()], &loc.y[ls.clone()]);
            for (k, (&x, &y)) in xs.iter().zip(ys).enumerate() {
                let dx = x - qx;
                let dy = y - qy;
                let d2 = dx * dx + dy * dy;
                if d2 < best && ls.start + k != l {
                    best = d2;
                }
            }
        }
        // Distance to the nearest cell outside the block (as the ring
        // search bounds it after its ring of radius 1).
        let mut bound = f64::INFINITY;
        if cx > 1 {
            bound = bound.min(qx - (self.x0 + (cx - 1) as f64 * self.cell));
        }
        if cx + 2 < self.nx {
            bound = bound.min(self.x0 + (cx + 2) as f64 * self.cell - qx);
        }
        if cy > 1 {
            bound = bound.min(qy - (self.y0 + (cy - 1) as f64 * self.cell));
        }
        if cy + 2 < self.ny {
            bound = bound.min(self.y0 + (cy + 2) as f64 * self.cell - qy);
        }
        if bound == f64::INFINITY {
            return best; // the block is the whole grid
        }
        let bound = bound.max(0.0);
        if best <= bound * bound {
            return best;
        }
        let mut b = BestD(f64::INFINITY);
        self.search(qx, qy, l, &mut b);
        b.0
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
        let loc = self.locations();
        let mut out = vec![(0, 0.0); n];
        for l in 0..loc.len() {
            let members = loc.members(l);
            if members.len() >= 2 {
                // Coincident events: the lowest other index at distance 0
                // (members ascend by slot, hence by original index).
                let (lo, lo2) = (self.id[members[0] as usize], self.id[members[1] as usize]);
                for &s in members {
                    let i = self.id[s as usize];
                    out[i as usize] = (if i == lo { lo2 } else { lo } as usize, 0.0);
                }
                continue;
            }
            let mut b = Best1 {
                d2: f64::INFINITY,
                j: u32::MAX,
            };
            self.search(loc.x[l], loc.y[l], l, &mut b);
            let i = self.id[members[0] as usize] as usize;
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
        self.search(qx, qy, usize::MAX, &mut b);
        (b.j != u32::MAX).then(|| (b.j as usize, b.d2.sqrt()))
    }

    /// The k nearest other points of every point, ordered by distance and,
    /// at equal distance, by `rank` (lower first; `rank[i]` for point i, a
    /// permutation or any numbers): a total order, so the first k′ entries
    /// of each list are its k′ nearest by the same rule for every k′ ≤ k.
    /// Points at exactly the same location come first (distance 0), then
    /// the ring search over the distinct locations, which keeps every
    /// location tied at the k-th distance so the rank, not the order of the
    /// search, decides among them. `None` when `k == 0`, there are not more
    /// than k points, `rank` is shorter than the points, or a point has
    /// fewer than k neighbours at a finite distance.
    ///
    /// Cost: O(m log m) per location of m events, plus one ring search per
    /// location holding at most k events; memory n·k indices.
    ///
    /// # Examples
    /// Two points stacked at 0 and one at 5: the stacked ones are each
    /// other's nearest; the rank decides the order of point 2's two
    /// neighbours at the same distance.
    /// ```
    /// use cloister::index::GridIndex;
    /// let g = GridIndex::new(&[0.0, 0.0, 5.0], &[0.0, 0.0, 0.0]);
    /// let nb = g.k_nearest_ranked(2, &[1, 0, 2]).unwrap();
    /// assert_eq!(nb.ids, vec![1, 2, 0, 2, 1, 0]);
    /// assert_eq!(nb.tie_decided, 1);
    /// ```
    pub fn k_nearest_ranked(&self, k: usize, rank: &[u32]) -> Option<RankedNeighbours> {
        let n = self.len();
        if k == 0 || n <= k || rank.len() < n {
            return None;
        }
        let loc = self.locations();
        let mut ids = vec![0u32; n * k];
        let mut tie_decided = 0;
        let mut sink = KthTies {
            k,
            total: 0,
            items: Vec::new(),
        };
        let by_rank = |a: &u32, b: &u32| rank[*a as usize].cmp(&rank[*b as usize]).then(a.cmp(b));
        let mut here: Vec<u32> = Vec::new();
        let mut outside: Vec<u32> = Vec::new();
        let mut group: Vec<u32> = Vec::new();
        for l in 0..loc.len() {
            if l % 2048 == 0 {
                crate::progress::report(l, loc.len());
            }
            here.clear();
            here.extend(loc.members(l).iter().map(|&s| self.id[s as usize]));
            here.sort_unstable_by(by_rank);
            let m = here.len();
            outside.clear();
            // Whether the cut after the outside candidates splits a tie.
            let mut outside_tie = false;
            if m <= k {
                let need = k - (m - 1);
                sink.k = need;
                sink.total = 0;
                sink.items.clear();
                self.search(loc.x[l], loc.y[l], l, &mut sink);
                if sink.total < need {
                    return None;
                }
                let mut a = 0;
                while a < sink.items.len() && outside.len() < need {
                    let d2 = sink.items[a].0;
                    let mut b = a;
                    group.clear();
                    while b < sink.items.len() && sink.items[b].0 == d2 {
                        group.extend(
                            loc.members(sink.items[b].1)
                                .iter()
                                .map(|&s| self.id[s as usize]),
                        );
                        b += 1;
                    }
                    if group.len() > 1 {
                        group.sort_unstable_by(by_rank);
                        // The order inside a group of equal distances
                        // settles the shorter prefixes, the cut the list.
                        outside_tie = true;
                    }
                    let take = group.len().min(need - outside.len());
                    outside.extend_from_slice(&group[..take]);
                    a = b;
                }
            }
            // Stacked others at distance 0: with more than one, their order
            // (or, with more than k, which of them) is the rank's.
            let stacked_tie = m > 2;
            for (pos, &i) in here.iter().enumerate() {
                let row = &mut ids[i as usize * k..(i as usize + 1) * k];
                let mut t = 0;
                for (q, &j) in here.iter().enumerate() {
                    if t == k {
                        break;
                    }
                    if q != pos {
                        row[t] = j;
                        t += 1;
                    }
                }
                row[t..].copy_from_slice(&outside[..k - t]);
                if stacked_tie || outside_tie {
                    tie_decided += 1;
                }
            }
        }
        Some(RankedNeighbours {
            k,
            ids,
            tie_decided,
        })
    }

    /// Distance from (qx, qy) to the nearest indexed point other than slot
    /// `skip` (`usize::MAX` skips none); infinite when there is none.
    pub(crate) fn nearest_distance(&self, qx: f64, qy: f64, skip: usize) -> f64 {
        let mut b = BestD(f64::INFINITY);
        if !self.is_empty() {
            let loc = self.locations();
            // Slot `skip`'s location stays a candidate if other events share it.
            let skip = match loc.of_slot.get(skip) {
                Some(&l) if loc.mult(l as usize) == 1 => l as usize,
                _ => usize::MAX,
            };
            self.search(qx, qy, skip, &mut b);
        }
        b.0.sqrt()
    }

    /// Candidates (locations) examined by the k-th nearest-neighbour
    /// search from point i, as [`GridIndex::kth_nn_distances`] runs it
    /// (test support for the work done on stacked events).
    #[cfg(test)]
    fn candidates_examined(&self, i: usize, k: usize) -> usize {
        let s = self.id.iter().position(|&j| j as usize == i).unwrap();
        let loc = self.locations();
        let l = loc.of_slot[s] as usize;
        let m = loc.mult(l);
        if m > k {
            return 0;
        }
        let mut b = Kth {
            k: k - (m - 1),
            total: 0,
            items: Vec::new(),
        };
        self.search(loc.x[l], loc.y[l], l, &mut b)
    }

    /// Calls `f(j)` for every indexed point j in the cells that meet the
    /// box of half-side r about (qx, qy): a superset of the points within
    /// r, which the caller filters by its own rule. Order: rows of cells
    /// upwards, cells left to right, input order within a cell. Nothing is
    /// called when r is negative or NaN.
    #[inline]
    pub fn for_each_candidate<F: FnMut(usize)>(&self, qx: f64, qy: f64, r: f64, mut f: F) {
        if r.is_nan() || r < 0.0 || self.is_empty() {
            return;
        }
        let (xlo, xhi) = (self.col(qx - r), self.col(qx + r));
        let (ylo, yhi) = (self.row(qy - r), self.row(qy + r));
        for iy in ylo..=yhi {
            // Cells xlo..=xhi of a row are one run of slots.
            let row = iy * self.nx;
            let (s0, s1) = (
                self.start[row + xlo] as usize,
                self.start[row + xhi + 1] as usize,
            );
            for &j in &self.id[s0..s1] {
                f(j as usize);
            }
        }
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
            // Cells xlo..=xhi of a row are one run of slots.
            let row = iy * self.nx;
            for s in self.start[row + xlo] as usize..self.start[row + xhi + 1] as usize {
                let dx = self.xs[s] - qx;
                let dy = self.ys[s] - qy;
                let d = (dx * dx + dy * dy).sqrt();
                if d <= r {
                    f(self.id[s] as usize, d);
                }
            }
        }
    }

    /// Estimated number of unordered pairs of points within `r` of each
    /// other, from the cell counts alone in O(cells), without visiting a
    /// pair: for each cell c, the points in the square block of cells
    /// around it that holds every disc of radius r centred in c (reach
    /// q = ⌈r / cell⌉ cells each way, side (2q + 1)·cell) give a local
    /// density. Each of c's n_c points is given as neighbours the other
    /// n_c − 1 points of its cell times p = min(1, πr² / cell²) (all of them
    /// when the cell is small beside r) plus the N_block − n_c points of
    /// the rest of the block times (πr² − p·cell²) / (block area − cell²);
    /// the pairs are half the sum. Blocks that reach
    /// past the points' bounding box keep their full area, so points near
    /// the edge of the data get fewer neighbours, as they do. Exact in
    /// expectation for uniform points away from the edge; for clustered
    /// points it smooths the density over the block, so it is low when
    /// clusters are much smaller than the block (see the tests for the
    /// factors measured). 0 for r ≤ 0, NaN r or fewer than two points.
    /// Used to say how long a pair computation will take before it starts.
    pub fn estimate_pairs_within(&self, r: f64) -> f64 {
        if r.is_nan() || r <= 0.0 || self.len() < 2 {
            return 0.0;
        }
        let (nx, ny) = (self.nx, self.ny);
        let q = (r / self.cell).ceil().min(1e9) as usize;
        // Summed-area table of the counts: sat[(y)(nx+1) + x] = points in
        // cells [0, x) × [0, y).
        let w = nx + 1;
        let mut sat = vec![0u64; w * (ny + 1)];
        for cy in 0..ny {
            let mut row = 0u64;
            for cx in 0..nx {
                let c = cy * nx + cx;
                row += u64::from(self.start[c + 1] - self.start[c]);
                sat[(cy + 1) * w + cx + 1] = sat[cy * w + cx + 1] + row;
            }
        }
        let disc = std::f64::consts::PI * r * r;
        let cell2 = self.cell * self.cell;
        let side = (2 * q + 1) as f64 * self.cell;
        // The other points of the own cell: all within r when the cell's
        // diagonal is (cells of r/4), else about the disc's share of it.
        let own = (disc / cell2).min(1.0);
        let share = (disc - own * cell2) / (side * side - cell2);
        let mut ordered = 0.0;
        for cy in 0..ny {
            let (y0, y1) = (cy.saturating_sub(q), (cy + q + 1).min(ny));
            for cx in 0..nx {
                let c = cy * nx + cx;
                let nc = u64::from(self.start[c + 1] - self.start[c]);
                if nc == 0 {
                    continue;
                }
                let (x0, x1) = (cx.saturating_sub(q), (cx + q + 1).min(nx));
                let block =
                    sat[y1 * w + x1] + sat[y0 * w + x0] - sat[y0 * w + x1] - sat[y1 * w + x0];
                ordered += nc as f64 * ((nc - 1) as f64 * own + (block - nc) as f64 * share);
            }
        }
        0.5 * ordered
    }

    /// Calls `f(i, j, d)` once for every unordered pair of points i < j with
    /// distance d ≤ r, in no particular order. Nothing is called when r is
    /// negative or NaN; r = 0 gives the coincident pairs.
    pub fn for_each_pair_within<F: FnMut(usize, usize, f64)>(&self, r: f64, mut f: F) {
        if r.is_nan() || r < 0.0 || self.len() < 2 {
            return;
        }
        self.for_each_block(r, |a, b0, b1| {
            let (xa, ya) = (self.xs[a], self.ys[a]);
            for b in b0..b1 {
                let dx = self.xs[b] - xa;
                let dy = self.ys[b] - ya;
                let d = (dx * dx + dy * dy).sqrt();
                if d <= r {
                    let (i, j) = (self.id[a] as usize, self.id[b] as usize);
                    if i < j {
                        f(i, j, d)
                    } else {
                        f(j, i, d)
                    }
                }
            }
        });
    }

    /// Calls `visit(a, b, d)` once for every unordered pair of slots a ≠ b
    /// with `d² ≤ r²`, handing on `d = sqrt(d²)`.
    #[inline]
    pub(crate) fn for_each_slot_pair<F: FnMut(usize, usize, f64)>(&self, r: f64, mut visit: F) {
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

    /// Calls `block(a, b0, b1)` so that every unordered pair of slots that
    /// can be within `r` appears exactly once as (a, b) with b in b0..b1
    /// (candidates, not yet filtered by distance): the rest of a's own cell,
    /// then runs of cells in the forward half of its neighbourhood (same row
    /// to the right, rows above). This is the K/g inner loop's iteration.
    #[inline]
    pub(crate) fn for_each_block<F: FnMut(usize, usize, usize)>(&self, r: f64, mut block: F) {
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
                    // Cells lo..=hi of row ny_ are contiguous in slot order.
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
    pub(crate) fn reach(&self, r: f64) -> isize {
        (r / self.cell)
            .ceil()
            .max(1.0)
            .min(self.nx.max(self.ny) as f64) as isize
    }

    /// Largest column offset that can hold a point within `r` of a point
    /// in a cell `oy` rows away: the gap between the rows is at least
    /// (|oy| − 1)·cell, and between columns |ox| apart at least
    /// (|ox| − 1)·cell, so |ox| ≤ ⌈√(r² − gap²)/cell⌉ (with a relative
    /// margin so that rounding in the cell assignment never loses a pair).
    #[inline]
    pub(crate) fn row_span(&self, r: f64, reach: isize, oy: isize) -> isize {
        let gap = ((oy.abs() - 1).max(0)) as f64 * self.cell;
        let w2 = (r * r - gap * gap).max(0.0);
        ((w2.sqrt() * (1.0 + 1e-9) / self.cell).ceil() as isize)
            .max(1)
            .min(reach)
    }

    /// For each slot `a` with `inner(a) = Some(ρ)`, calls `visit(a, runs)`
    /// with row-runs of slots that hold every point b ≠ a with
    /// ρ < d(a, b) ≤ r (candidates, not yet filtered by distance; a itself
    /// may be among them). Cells that lie wholly inside the disc of radius ρ
    /// about a are cut out of the runs, so a point close to nothing but its
    /// inner disc costs little. (The cut keeps a margin of 1e-9 of ρ and of
    /// the cell side, so a point whose computed distance could exceed ρ is
    /// never cut.) Used by the isotropic K and g weight passes.
    pub(crate) fn for_each_point_runs_beyond<I, F>(&self, r: f64, inner: I, mut visit: F)
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
                for a in self.range(c) {
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

    /// The nearest-neighbour distances split over threads are those of
    /// one thread, value for value and in the same order, with coincident
    /// points and more threads than locations.
    #[test]
    fn nn_distances_split_equal_one_thread() {
        let (mut x, mut y): (Vec<f64>, Vec<f64>) = {
            let p = random_points(3000, SEED_1);
            (p.0, p.1)
        };
        x.extend([x[0], x[0], x[7]]);
        y.extend([y[0], y[0], y[7]]);
        for (x, y) in [(x, y), (vec![1.0, 1.0, 4.0], vec![2.0, 2.0, 6.0])] {
            let g = GridIndex::new(&x, &y);
            let mut one = Vec::new();
            g.each_kth_nn(1, |_, d| one.push(d)).unwrap();
            assert_eq!(one.len(), x.len());
            for t in [1, 2, 3, 8, 5000] {
                let split = g.nn_distances_split(t);
                assert_eq!(split.len(), one.len(), "{t}");
                assert!(
                    split
                        .iter()
                        .zip(&one)
                        .all(|(a, b)| a.to_bits() == b.to_bits()),
                    "{t}"
                );
            }
        }
    }

    /// The 3 × 3 block shortcut of the nearest-neighbour distance against
    /// the ring search alone and against brute force, location by location,
    /// on spread points, a tight cloud with far outliers (the shortcut
    /// falls back to the ring search there), a line, stacked points and
    /// grids of one or two cells.
    #[test]
    fn block_shortcut_equals_ring_search_and_brute_force() {
        let mut rng = rng_from_seed(SEED_2);
        let mut cases: Vec<(Vec<f64>, Vec<f64>)> = vec![random_points(2000, SEED_1)];
        let (mut x, mut y): (Vec<f64>, Vec<f64>) = (0..1500)
            .map(|_| (rng.random::<f64>(), rng.random::<f64>()))
            .unzip();
        x.extend([500.0, -800.0, 3.0]);
        y.extend([-300.0, 20.0, 900.0]);
        cases.push((x, y));
        cases.push(((0..300).map(|i| i as f64 * 1.5).collect(), vec![7.0; 300]));
        cases.push((vec![2.0; 5], vec![3.0; 5]));
        cases.push((vec![0.0, 1.0], vec![0.0, 1.0]));
        cases.push((vec![0.0, 1.0, 1.0, 5.0], vec![0.0, 0.0, 0.0, 0.0]));
        let mut fell_back = 0;
        for (x, y) in &cases {
            let g = GridIndex::new(x, y);
            let loc = g.locations();
            for l in 0..loc.len() {
                let mut b = BestD(f64::INFINITY);
                g.search(loc.x[l], loc.y[l], l, &mut b);
                let got = g.nearest_d2_of_location(l);
                assert_eq!(got.to_bits(), b.0.to_bits(), "location {l}");
                let i = g.id[loc.members(l)[0] as usize] as usize;
                let want = (0..x.len())
                    .filter(|&j| x[j] != x[i] || y[j] != y[i])
                    .map(|j| (x[j] - x[i]) * (x[j] - x[i]) + (y[j] - y[i]) * (y[j] - y[i]))
                    .fold(f64::INFINITY, f64::min);
                assert_eq!(got, want, "location {l}");
                if g.nx * g.ny > 9 && b.0 > 0.0 {
                    let c = g.cell();
                    // Beyond two cells is beyond every cell of the block.
                    fell_back += usize::from(got > 4.0 * c * c);
                }
            }
        }
        // The outliers took the fallback (nearest beyond the block's reach).
        assert!(fell_back > 0);
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
        // The unordered form holds the same distances (brute force, sorted).
        let mut un = g.nn_distances_unordered().unwrap();
        un.sort_by(f64::total_cmp);
        let mut all: Vec<f64> = (0..x.len()).map(|i| brute_sorted(x, y, i)[0]).collect();
        all.sort_by(f64::total_cmp);
        assert_eq!(un, all);
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

    /// Events geocoded to a few addresses: the index keeps each address
    /// once with its multiplicity, and every k-NN distance, nearest
    /// neighbour and pair still matches brute force.
    #[test]
    fn test_stacked_points_are_one_location_each() {
        let mut rng = rng_from_seed(21);
        let (mut x, mut y) = random_points(150, SEED_1);
        let addr = [(100.0, 50.0), (400.5, 250.25), (999.0, 1.0)];
        let mult = [40, 7, 2];
        for _ in 0..49 {
            // Interleaved with the others, in a seeded order.
            let a = (rng.random::<f64>() * 3.0) as usize;
            x.push(addr[a].0);
            y.push(addr[a].1);
        }
        for (a, &m) in mult.iter().enumerate() {
            let have = x.iter().zip(&y).filter(|p| (*p.0, *p.1) == addr[a]).count();
            for _ in have..m {
                x.push(addr[a].0);
                y.push(addr[a].1);
            }
        }
        let g = GridIndex::new(&x, &y);
        let m = g.multiplicities();
        let at = |a: usize| (0..x.len()).filter(|&i| (x[i], y[i]) == addr[a]).count();
        for (a, &p) in addr.iter().enumerate() {
            let i = (0..x.len()).find(|&i| (x[i], y[i]) == p).unwrap();
            assert_eq!(m[i], at(a));
        }
        let stacked: usize = (0..3).map(at).sum();
        assert_eq!(g.distinct_locations(), x.len() - stacked + 3);
        check_against_brute(&x, &y);
        for k in [5, at(0) - 1, at(0), at(0) + 3] {
            let got = g.kth_nn_distances(k).unwrap();
            for (i, &gi) in got.iter().enumerate() {
                assert_eq!(gi, brute_sorted(&x, &y, i)[k - 1], "k={k} i={i}");
            }
        }
        let nn = g.nn_distances().unwrap();
        for s in 0..x.len() {
            let i = g.id[s] as usize;
            assert_eq!(g.nearest_distance(x[i], y[i], s), nn[i]);
        }
        let mut within = Vec::new();
        g.for_each_within(addr[1].0, addr[1].1, 30.0, |j, _| within.push(j));
        assert!(within.len() >= at(1));
    }

    /// A k-NN query from a stack of m events examines each nearby address
    /// once, not the m events: with k = m (so the search must leave the
    /// stack) it looks at a few dozen locations, not thousands.
    #[test]
    fn test_knn_on_a_stack_visits_one_cell() {
        let (mut x, mut y) = random_points(300, SEED_2);
        x.extend(std::iter::repeat_n(250.0, 5000));
        y.extend(std::iter::repeat_n(125.0, 5000));
        let g = GridIndex::new(&x, &y);
        assert_eq!(g.distinct_locations(), 301);
        assert_eq!(g.multiplicities()[300], 5000);
        assert_eq!(g.candidates_examined(300, 4999), 0);
        let seen = g.candidates_examined(300, 5000);
        assert!((1..=60).contains(&seen), "{seen} candidates");
        let d = g.kth_nn_distances(4999).unwrap();
        assert!(d[300..].iter().all(|&v| v == 0.0));
        let d = g.kth_nn_distances(5000).unwrap();
        assert_eq!(d[300], brute_sorted(&x, &y, 300)[4999]);
        assert!(d[300] > 0.0);
        let nn = g.nearest_neighbours().unwrap();
        assert_eq!(nn[300], (301, 0.0));
        assert_eq!(nn[5299], (300, 0.0));
        assert_eq!(g.nearest(250.0, 125.0), Some((300, 0.0)));
    }

    /// Densely packed distinct points (100,000 per m²) and a stack inside
    /// them: exact against brute force.
    #[test]
    fn test_dense_square_matches_brute_force() {
        let mut rng = rng_from_seed(33);
        let (mut x, mut y): (Vec<f64>, Vec<f64>) = (0..700)
            .map(|_| {
                (
                    500.0 + rng.random::<f64>() * 0.08,
                    500.0 + rng.random::<f64>() * 0.08,
                )
            })
            .unzip();
        for _ in 0..60 {
            x.push(x[3]);
            y.push(y[3]);
        }
        check_against_brute(&x, &y);
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

    /// Candidates are a superset of the points within r, each once, in
    /// row-major cell order with input order inside a cell.
    #[test]
    fn test_candidates_cover_the_disc_once() {
        let (x, y) = random_points(600, SEED_2);
        for cell in [5.0, 40.0, 1000.0] {
            let g = GridIndex::with_cell(&x, &y, cell);
            let mut rng = rng_from_seed(12);
            for _ in 0..100 {
                let (qx, qy) = (
                    rng.random::<f64>() * 1200.0 - 100.0,
                    rng.random::<f64>() * 600.0,
                );
                let r = rng.random::<f64>() * 80.0;
                let mut got = Vec::new();
                g.for_each_candidate(qx, qy, r, |j| got.push(j));
                let keys: Vec<(usize, usize)> =
                    got.iter().map(|&j| (g.cell_of(x[j], y[j]), j)).collect();
                assert!(keys.windows(2).all(|w| w[0] < w[1]), "order or repeat");
                for j in 0..x.len() {
                    if ((x[j] - qx).powi(2) + (y[j] - qy).powi(2)).sqrt() <= r {
                        assert!(got.contains(&j), "missed {j}");
                    }
                }
            }
            g.for_each_candidate(0.0, 0.0, f64::NAN, |_| panic!("none"));
        }
    }

    #[test]
    fn test_negative_or_nan_radius() {
        let (x, y) = random_points(50, SEED_1);
        let g = GridIndex::new(&x, &y);
        g.for_each_pair_within(-1.0, |_, _, _| panic!("none"));
        g.for_each_pair_within(f64::NAN, |_, _, _| panic!("none"));
        g.for_each_within(1.0, 1.0, f64::NAN, |_, _| panic!("none"));
    }

    /// Closed form (docs/methods.md#clark-evans): on a k×k square
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

    // Slot-level pair and run iteration (the K/g inner loop).

    fn random_unit_points(n: usize, seed: u64) -> (Vec<f64>, Vec<f64>) {
        let mut rng = crate::rng::rng_from_seed(seed);
        let x = (0..n).map(|_| rng.random::<f64>()).collect();
        let y = (0..n).map(|_| rng.random::<f64>() * 0.6).collect();
        (x, y)
    }

    /// Exact pairs within r by brute force, for the estimate's tests.
    fn brute_pair_count(x: &[f64], y: &[f64], r: f64) -> f64 {
        let mut c = 0u64;
        for i in 0..x.len() {
            for j in i + 1..x.len() {
                if (x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2) <= r * r {
                    c += 1;
                }
            }
        }
        c as f64
    }

    /// The pair estimate from cell counts against the exact count: uniform
    /// points within 10 %, clustered points within a factor of 2, a lattice
    /// at r just above its spacing (the worst case we found: 0.50) within a
    /// factor of 2.5, for the cell size the K/g loop uses (r/4) and for the default
    /// cells (about two points each). The factors are ours (what the page's
    /// time estimate needs), measured on these seeded patterns.
    #[test]
    fn test_pair_estimate_against_exact_count() {
        let ratio = |x: &[f64], y: &[f64], r: f64, g: &GridIndex| {
            g.estimate_pairs_within(r) / brute_pair_count(x, y, r)
        };
        // Uniform, 3000 points in a 1 × 0.6 rectangle.
        let (x, y) = random_unit_points(3000, 23);
        for r in [0.01, 0.03, 0.1, 0.15] {
            for g in [
                GridIndex::with_cell(&x, &y, r / 4.0),
                GridIndex::new(&x, &y),
            ] {
                let q = ratio(&x, &y, r, &g);
                assert!((0.9..=1.1).contains(&q), "uniform r = {r}: ratio {q}");
            }
        }
        // Clustered: 30 clusters of 60 points, normal spread 0.01 around
        // uniform parents.
        let mut rng = crate::rng::rng_from_seed(29);
        let (mut cx, mut cy) = (Vec::new(), Vec::new());
        for _ in 0..30 {
            let (px, py) = (rng.random::<f64>(), rng.random::<f64>() * 0.6);
            for _ in 0..60 {
                let (u, v): (f64, f64) = (rng.random::<f64>().max(1e-12), rng.random());
                let rad = 0.01 * (-2.0 * u.ln()).sqrt();
                let a = 2.0 * std::f64::consts::PI * v;
                cx.push(px + rad * a.cos());
                cy.push(py + rad * a.sin());
            }
        }
        for r in [0.01, 0.03, 0.1] {
            let g = GridIndex::with_cell(&cx, &cy, r / 4.0);
            let q = ratio(&cx, &cy, r, &g);
            assert!((0.5..=2.0).contains(&q), "clustered r = {r}: ratio {q}");
        }
        // Square lattice of spacing 1 (40 × 40): r just above 1 and 3.
        let (lx, ly): (Vec<f64>, Vec<f64>) = (0..1600)
            .map(|i| ((i % 40) as f64, (i / 40) as f64))
            .unzip();
        for r in [1.01, 3.01] {
            let g = GridIndex::with_cell(&lx, &ly, r / 4.0);
            let q = ratio(&lx, &ly, r, &g);
            assert!((0.4..=2.5).contains(&q), "lattice r = {r}: ratio {q}");
        }
        // Nothing to pair.
        assert_eq!(
            GridIndex::new(&x[..1], &y[..1]).estimate_pairs_within(0.1),
            0.0
        );
        let g = GridIndex::new(&x, &y);
        assert_eq!(g.estimate_pairs_within(0.0), 0.0);
        assert_eq!(g.estimate_pairs_within(f64::NAN), 0.0);
    }

    /// Oracle test against an O(n²) loop on 500 seeded points.
    #[test]
    fn test_pairs_match_brute_force() {
        let (x, y) = random_unit_points(500, 17);
        for (r, cell) in [(0.05, 0.025), (0.1, 0.1), (0.2, 0.05), (0.05, 0.001)] {
            let g = GridIndex::with_cell(&x, &y, cell);
            let mut got = Vec::new();
            g.for_each_slot_pair(r, |a, b, d| {
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
        let (x, y) = random_unit_points(400, 31);
        let mut rng = crate::rng::rng_from_seed(8);
        for (r, cell) in [(0.05, 0.0125), (0.1, 0.1), (0.2, 0.05), (0.07, 0.02)] {
            let g = GridIndex::with_cell(&x, &y, cell);
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
        let (x, y) = random_unit_points(500, 3);
        // Cells sized for the nearest-neighbour search (about two points per
        // cell of the 1 × 0.6 area) and the automatic layout.
        for g in [
            GridIndex::with_cell(&x, &y, (2.0 * 0.6 / 500.0f64).sqrt()),
            GridIndex::new(&x, &y),
        ] {
            let nn = g.nn_distances().unwrap();
            for i in 0..x.len() {
                let mut best = f64::INFINITY;
                for j in 0..x.len() {
                    if i != j {
                        best = best.min(((x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2)).sqrt());
                    }
                }
                assert_eq!(nn[i], best);
            }
            for s in 0..x.len() {
                let i = g.id[s] as usize;
                assert_eq!(g.nearest_distance(x[i], y[i], s), nn[i]);
            }
        }
    }

    #[test]
    fn test_nn_edge_cases() {
        let g = GridIndex::with_cell(&[], &[], 0.5);
        assert!(g.nn_distances().is_none());
        assert_eq!(g.nearest_distance(0.5, 0.5, usize::MAX), f64::INFINITY);
        // A single point: no other point, so its distance is infinite.
        let g = GridIndex::with_cell(&[0.5], &[0.5], 0.5);
        assert!(g.nn_distances().is_none());
        assert_eq!(g.nearest_distance(0.5, 0.5, 0), f64::INFINITY);
        // Coincident points: distance 0.
        let g = GridIndex::with_cell(&[0.5, 0.5], &[0.5, 0.5], 0.5);
        assert_eq!(g.nn_distances(), Some(vec![0.0, 0.0]));
    }
}
