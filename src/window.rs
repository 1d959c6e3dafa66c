//! Where could an event have fallen?
//!
//! A [`Window`] is the study area in planar metres: one or more polygons, each
//! with any number of holes (a lake, an airport). Points on the boundary count
//! as inside, for data and simulations alike.
//!
//! # Conventions
//! * Rings are stored closed (first vertex repeated last), exterior rings
//!   counter-clockwise and holes clockwise, whatever the input order was.
//! * Containment uses the even-odd rule over all rings of a polygon (so a
//!   point in a hole is outside), and a point is in the window if it is in
//!   any of its polygons. A point within [`Window::boundary_tolerance`]
//!   (`1e-12 ×` the larger of the bounding box's longer side and its largest
//!   absolute coordinate) of any edge counts as on the boundary, hence
//!   inside; this makes rounded coordinates that lie on an edge behave the
//!   same way in data and simulations (METHODS §1, "boundary counts as
//!   inside"), also for large planar coordinates such as UTM northings.
//! * The perimeter includes the boundaries of holes (METHODS §0).
//! * Checked: every corner of a hole lies inside or on its outer ring.
//!   Not checked: self-intersecting rings, holes that cross their outer ring
//!   between corners or overlap each other, and overlapping polygons (RFC 7946
//!   GeoJSON forbids all of these). Overlapping polygons would have their
//!   overlap counted twice in [`Window::area`].
//!
//! # Speed
//! The edges are kept in horizontal bands (an edge is listed in every band
//! its y-range meets). A containment test looks only at the edges of the
//! band holding the point, so it costs O(edges per band) instead of
//! O(all edges). Windows with at most 64 edges use a single band.

use crate::error::{InputError, InputErrorKind};
use crate::rng::Rng;
use rand::RngExt;
use serde::Serialize;

/// Where the study area came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum WindowOrigin {
    /// Drawn from a polygon file the user gave.
    File,
    /// The convex hull of the events (biases clustering tests: warn).
    ConvexHull,
    /// The bounding box of the events (biases clustering tests: warn).
    BoundingBox,
}

/// One boundary segment, tagged with the polygon it belongs to.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Edge {
    a: [f64; 2],
    b: [f64; 2],
    poly: u32,
}

/// Edges grouped by horizontal band (compressed rows: the edges of band `k`
/// are `items[start[k]..start[k + 1]]`, copies in increasing edge order so
/// that one band is contiguous in memory).
#[derive(Debug, Clone, PartialEq)]
struct Bands {
    y0: f64,
    h: f64,
    start: Vec<u32>,
    items: Vec<Edge>,
}

impl Bands {
    fn count(&self) -> usize {
        self.start.len() - 1
    }
    fn band_of(&self, y: f64) -> usize {
        let k = ((y - self.y0) / self.h).floor();
        if k.is_nan() || k < 0.0 {
            0
        } else {
            (k as usize).min(self.count() - 1)
        }
    }
}

/// Edges bucketed in a square grid for distance queries: the edges whose
/// bounding box meets cell c are `idx[start[c]..start[c + 1]]`; edges whose
/// box would cover more than 16 cells are kept in `long` and always scanned.
#[derive(Debug, Clone, PartialEq)]
struct EdgeGrid {
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
    start: Vec<u32>,
    idx: Vec<u32>,
    long: Vec<u32>,
}

impl EdgeGrid {
    fn build(edges: &[Edge], bbox: [f64; 4]) -> Option<EdgeGrid> {
        if edges.len() <= 64 {
            return None;
        }
        let (w, h) = (bbox[2] - bbox[0], bbox[3] - bbox[1]);
        let cell = (w * h / edges.len() as f64).sqrt().max(w.max(h) / 4096.0);
        let nx = ((w / cell).floor() as usize + 1).min(4096);
        let ny = ((h / cell).floor() as usize + 1).min(4096);
        let mut g = EdgeGrid {
            x0: bbox[0],
            y0: bbox[1],
            cell,
            nx,
            ny,
            start: vec![0; nx * ny + 1],
            idx: Vec::new(),
            long: Vec::new(),
        };
        let mut spans = Vec::with_capacity(edges.len());
        for (i, e) in edges.iter().enumerate() {
            let (cx0, cx1) = (g.col(e.a[0].min(e.b[0])), g.col(e.a[0].max(e.b[0])));
            let (cy0, cy1) = (g.row(e.a[1].min(e.b[1])), g.row(e.a[1].max(e.b[1])));
            if (cx1 - cx0 + 1) * (cy1 - cy0 + 1) > 16 {
                g.long.push(i as u32);
                spans.push(None);
                continue;
            }
            for cy in cy0..=cy1 {
                for cx in cx0..=cx1 {
                    g.start[cy * nx + cx + 1] += 1;
                }
            }
            spans.push(Some((cx0, cx1, cy0, cy1)));
        }
        for c in 0..nx * ny {
            g.start[c + 1] += g.start[c];
        }
        let mut fill: Vec<u32> = g.start[..nx * ny].to_vec();
        g.idx = vec![0; g.start[nx * ny] as usize];
        for (i, sp) in spans.iter().enumerate() {
            if let Some((cx0, cx1, cy0, cy1)) = *sp {
                for cy in cy0..=cy1 {
                    for cx in cx0..=cx1 {
                        let f = &mut fill[cy * nx + cx];
                        g.idx[*f as usize] = i as u32;
                        *f += 1;
                    }
                }
            }
        }
        Some(g)
    }
    fn col(&self, x: f64) -> usize {
        crate::index::cell_coord(x, self.x0, self.cell, self.nx)
    }
    fn row(&self, y: f64) -> usize {
        crate::index::cell_coord(y, self.y0, self.cell, self.ny)
    }
    /// Smallest squared distance from (x, y) to any edge: long edges first,
    /// then rings of cells around the point's cell until no unvisited cell
    /// can hold a closer edge.
    fn min_dist2(&self, edges: &[Edge], x: f64, y: f64) -> f64 {
        let mut best = f64::INFINITY;
        for &i in &self.long {
            let e = &edges[i as usize];
            best = best.min(seg_dist2(x, y, e.a, e.b));
        }
        let (cx, cy) = (self.col(x) as isize, self.row(y) as isize);
        let (nx, ny) = (self.nx as isize, self.ny as isize);
        let visit = |ix: isize, iy: isize, best: &mut f64| {
            let c = iy as usize * self.nx + ix as usize;
            for &i in &self.idx[self.start[c] as usize..self.start[c + 1] as usize] {
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
}

/// Side (in cells) of the grid used to sample thin windows.
const COVER_GRID: usize = 64;

/// A study area: polygons with holes, in metres.
///
/// # Examples
/// The square [0, 10]² with the hole [4, 6]² (METHODS §1): area 96, the
/// hole is outside, its edge is inside.
/// ```
/// use cloister::window::{Window, WindowOrigin};
/// let w = Window::from_polygons(
///     vec![vec![
///         vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
///         vec![[4.0, 4.0], [6.0, 4.0], [6.0, 6.0], [4.0, 6.0]],
///     ]],
///     WindowOrigin::File,
/// )
/// .unwrap();
/// assert_eq!(w.area(), 96.0);
/// assert!(!w.contains(5.0, 5.0) && w.contains(4.0, 5.0));
/// assert_eq!(w.boundary_distance(2.0, 5.0), 2.0);
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct Window {
    polygons: Vec<Vec<Vec<[f64; 2]>>>,
    origin: WindowOrigin,
    edges: Vec<Edge>,
    bands: Bands,
    /// Grid of edges for distance queries (`None` for ≤ 64 edges).
    grid: Option<EdgeGrid>,
    /// Cells of a 64 × 64 grid over the bounding box that may hold part of
    /// the window; empty when the window fills at least 25 % of its box.
    cover: Vec<u32>,
    area: f64,
    perimeter: f64,
    bbox: [f64; 4],
    /// Distance below which a point counts as on the boundary.
    tol: f64,
}

fn bad(detail: String) -> InputError {
    InputError::new(InputErrorKind::BadPolygon { detail })
}

/// Twice the signed area of an open ring (shoelace, relative to the first
/// vertex for accuracy); positive when counter-clockwise.
fn signed_area2(ring: &[[f64; 2]]) -> f64 {
    let o = ring[0];
    let mut s = 0.0;
    for k in 1..ring.len().saturating_sub(1) {
        let p = ring[k];
        let q = ring[k + 1];
        s += (p[0] - o[0]) * (q[1] - o[1]) - (q[0] - o[0]) * (p[1] - o[1]);
    }
    s
}

/// Squared distance from (x, y) to the segment a–b.
fn seg_dist2(x: f64, y: f64, a: [f64; 2], b: [f64; 2]) -> f64 {
    let dx = b[0] - a[0];
    let dy = b[1] - a[1];
    let px = x - a[0];
    let py = y - a[1];
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 {
        ((px * dx + py * dy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    let ex = px - t * dx;
    let ey = py - t * dy;
    ex * ex + ey * ey
}

/// Cleans one ring: finite check, consecutive duplicates (and the closing
/// vertex) dropped, at least 3 distinct vertices, non-zero area. Returns the
/// open ring and its doubled signed area.
fn clean_ring(ring: &[[f64; 2]], what: &str) -> Result<(Vec<[f64; 2]>, f64), InputError> {
    let mut out: Vec<[f64; 2]> = Vec::with_capacity(ring.len());
    for (k, p) in ring.iter().enumerate() {
        if !(p[0].is_finite() && p[1].is_finite()) {
            return Err(bad(format!(
                "{what}, corner {}: coordinate ({}, {}) is not a finite number",
                k + 1,
                p[0],
                p[1]
            )));
        }
        if out.last() != Some(p) {
            out.push(*p);
        }
    }
    while out.len() > 1 && out.first() == out.last() {
        out.pop();
    }
    let mut distinct = out.clone();
    distinct.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
    distinct.dedup();
    if distinct.len() < 3 {
        return Err(bad(format!(
            "{what} has {} distinct corner(s); a ring needs at least 3",
            distinct.len()
        )));
    }
    let a2 = signed_area2(&out);
    let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
    for p in &out {
        x0 = x0.min(p[0]);
        y0 = y0.min(p[1]);
        x1 = x1.max(p[0]);
        y1 = y1.max(p[1]);
    }
    let diag2 = (x1 - x0).powi(2) + (y1 - y0).powi(2);
    if a2.is_nan() || a2.abs() <= 1e-12 * diag2 {
        return Err(bad(format!(
            "{what} has zero area (its corners lie on one line)"
        )));
    }
    Ok((out, a2))
}

impl Window {
    /// Builds a window from polygons (exterior ring first, then holes; rings
    /// need not be closed). Fails on fewer than 3 distinct vertices, zero area
    /// or non-finite coordinates.
    pub fn from_polygons(
        polygons: Vec<Vec<Vec<[f64; 2]>>>,
        origin: WindowOrigin,
    ) -> Result<Window, InputError> {
        if polygons.is_empty() {
            return Err(bad("the study area contains no polygon".to_string()));
        }
        let many = polygons.len() > 1;
        let mut clean: Vec<Vec<Vec<[f64; 2]>>> = Vec::with_capacity(polygons.len());
        let mut area = 0.0;
        for (pi, poly) in polygons.iter().enumerate() {
            let pname = if many {
                format!("polygon {}", pi + 1)
            } else {
                "the polygon".into()
            };
            if poly.is_empty() {
                return Err(bad(format!("{pname} has no rings")));
            }
            let mut rings = Vec::with_capacity(poly.len());
            let mut parea = 0.0;
            for (ri, ring) in poly.iter().enumerate() {
                let what = if ri == 0 {
                    format!("{pname}, outer ring")
                } else {
                    format!("{pname}, hole {ri}")
                };
                let (mut r, a2) = clean_ring(ring, &what)?;
                // Exterior counter-clockwise, holes clockwise.
                if (ri == 0) != (a2 > 0.0) {
                    r.reverse();
                }
                parea += if ri == 0 {
                    a2.abs() / 2.0
                } else {
                    -a2.abs() / 2.0
                };
                r.push(r[0]);
                rings.push(r);
            }
            if parea.is_nan() || parea <= 0.0 {
                return Err(bad(format!("{pname}: its holes cover all of its area")));
            }
            if rings.len() > 1 {
                // Every corner of every hole must be inside (or on) the outer ring.
                let outer = Self::assemble(vec![vec![rings[0].clone()]], origin, 0.0);
                for (hi, hole) in rings.iter().enumerate().skip(1) {
                    if let Some(p) = hole.iter().find(|p| !outer.contains(p[0], p[1])) {
                        return Err(bad(format!(
                            "{pname}, hole {hi}: its corner ({}, {}) lies outside the outer ring",
                            p[0], p[1]
                        )));
                    }
                }
            }
            area += parea;
            clean.push(rings);
        }
        Ok(Self::assemble(clean, origin, area))
    }

    /// Builds the derived fields from cleaned, oriented, closed rings.
    fn assemble(polygons: Vec<Vec<Vec<[f64; 2]>>>, origin: WindowOrigin, area: f64) -> Window {
        let mut edges = Vec::new();
        let mut perimeter = 0.0;
        let mut bbox = [f64::MAX, f64::MAX, f64::MIN, f64::MIN];
        for (pi, poly) in polygons.iter().enumerate() {
            for ring in poly {
                for w in ring.windows(2) {
                    let (a, b) = (w[0], w[1]);
                    perimeter += (b[0] - a[0]).hypot(b[1] - a[1]);
                    edges.push(Edge {
                        a,
                        b,
                        poly: pi as u32,
                    });
                    bbox[0] = bbox[0].min(a[0]);
                    bbox[1] = bbox[1].min(a[1]);
                    bbox[2] = bbox[2].max(a[0]);
                    bbox[3] = bbox[3].max(a[1]);
                }
            }
        }
        let extent = (bbox[2] - bbox[0]).max(bbox[3] - bbox[1]);
        let magnitude = bbox.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let tol = 1e-12 * extent.max(magnitude);
        let nb = if edges.len() <= 64 {
            1
        } else {
            (edges.len() / 2).clamp(1, 1 << 16)
        };
        let h = ((bbox[3] - bbox[1]) / nb as f64).max(f64::MIN_POSITIVE);
        let mut bands = Bands {
            y0: bbox[1],
            h,
            start: vec![0; nb + 1],
            items: Vec::new(),
        };
        let span = |bands: &Bands, e: &Edge| {
            let lo = bands.band_of(e.a[1].min(e.b[1]) - tol);
            let hi = bands.band_of(e.a[1].max(e.b[1]) + tol);
            (lo, hi)
        };
        for e in &edges {
            let (lo, hi) = span(&bands, e);
            for k in lo..=hi {
                bands.start[k + 1] += 1;
            }
        }
        for k in 0..nb {
            bands.start[k + 1] += bands.start[k];
        }
        let mut fill: Vec<u32> = bands.start[..nb].to_vec();
        bands.items = vec![edges[0]; bands.start[nb] as usize];
        for e in &edges {
            let (lo, hi) = span(&bands, e);
            for f in &mut fill[lo..=hi] {
                bands.items[*f as usize] = *e;
                *f += 1;
            }
        }
        let grid = EdgeGrid::build(&edges, bbox);
        let mut w = Window {
            polygons,
            origin,
            edges,
            bands,
            grid,
            cover: Vec::new(),
            area,
            perimeter,
            bbox,
            tol,
        };
        if w.area < 0.25 * (bbox[2] - bbox[0]) * (bbox[3] - bbox[1]) {
            w.cover = w.covering_cells(COVER_GRID);
        }
        w
    }

    /// The rectangle [x0, x1] × [y0, y1] as a window (origin `File`).
    pub fn rectangle(x0: f64, y0: f64, x1: f64, y1: f64) -> Result<Window, InputError> {
        Window::from_polygons(
            vec![vec![vec![[x0, y0], [x1, y0], [x1, y1], [x0, y1]]]],
            WindowOrigin::File,
        )
    }

    /// The bounding box of the points as a window.
    ///
    /// Non-finite points are ignored. Fails (with `BadPolygon`) when there
    /// are no points or they all share one x or one y value.
    pub fn bounding_box_of(x: &[f64], y: &[f64]) -> Result<Window, InputError> {
        let b = crate::index::bbox(x, y).unwrap_or([0.0; 4]);
        if !(b[2] > b[0] && b[3] > b[1]) {
            return Err(bad(
                "the events all share one x or one y coordinate (or there are \
                 none), so a box drawn around them has no area; give a study-area file"
                    .to_string(),
            ));
        }
        let mut w = Window::rectangle(b[0], b[1], b[2], b[3])?;
        w.origin = WindowOrigin::BoundingBox;
        Ok(w)
    }

    /// The convex hull of the points as a window (Andrew's monotone chain,
    /// Andrew 1979, Inf. Process. Lett. 9:216–219 (from memory)).
    ///
    /// Non-finite points are ignored. Fails (with `BadPolygon`) when fewer
    /// than 3 distinct points remain or all lie on one line.
    pub fn convex_hull_of(x: &[f64], y: &[f64]) -> Result<Window, InputError> {
        let mut pts: Vec<[f64; 2]> = x
            .iter()
            .zip(y)
            .filter(|(a, b)| a.is_finite() && b.is_finite())
            .map(|(&a, &b)| [a, b])
            .collect();
        pts.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
        pts.dedup();
        let degenerate = || {
            bad(
                "the events lie on one straight line (or there are fewer than 3 distinct \
                 locations), so no area can be drawn around them; give a study-area file"
                    .to_string(),
            )
        };
        if pts.len() < 3 {
            return Err(degenerate());
        }
        let cross = |o: [f64; 2], a: [f64; 2], b: [f64; 2]| {
            (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0])
        };
        let mut hull: Vec<[f64; 2]> = Vec::with_capacity(2 * pts.len());
        for &p in &pts {
            while hull.len() >= 2 && cross(hull[hull.len() - 2], hull[hull.len() - 1], p) <= 0.0 {
                hull.pop();
            }
            hull.push(p);
        }
        let lower = hull.len() + 1;
        for &p in pts.iter().rev().skip(1) {
            while hull.len() >= lower && cross(hull[hull.len() - 2], hull[hull.len() - 1], p) <= 0.0
            {
                hull.pop();
            }
            hull.push(p);
        }
        hull.pop();
        if hull.len() < 3 {
            return Err(degenerate());
        }
        let mut w = Window::from_polygons(vec![vec![hull]], WindowOrigin::ConvexHull)
            .map_err(|_| degenerate())?;
        w.origin = WindowOrigin::ConvexHull;
        Ok(w)
    }

    /// Polygons: exterior ring first, then holes; rings closed (first == last).
    pub fn polygons(&self) -> &[Vec<Vec<[f64; 2]>>] {
        &self.polygons
    }
    pub fn origin(&self) -> WindowOrigin {
        self.origin
    }
    /// Area in m², holes excluded.
    pub fn area(&self) -> f64 {
        self.area
    }
    /// Perimeter in m, hole boundaries included.
    pub fn perimeter(&self) -> f64 {
        self.perimeter
    }
    /// [min_x, min_y, max_x, max_y].
    pub fn bbox(&self) -> [f64; 4] {
        self.bbox
    }
    /// Distance (m) within which a point counts as on the boundary.
    pub fn boundary_tolerance(&self) -> f64 {
        self.tol
    }
    /// Inside or on the boundary. Non-finite points are outside.
    pub fn contains(&self, x: f64, y: f64) -> bool {
        let t = self.tol;
        let b = self.bbox;
        // Written so that NaN fails every comparison.
        if !(x >= b[0] - t && x <= b[2] + t && y >= b[1] - t && y <= b[3] + t) {
            return false;
        }
        let k = self.bands.band_of(y);
        let list =
            &self.bands.items[self.bands.start[k] as usize..self.bands.start[k + 1] as usize];
        let t2 = t * t;
        let mut poly = u32::MAX;
        let mut odd = false;
        for e in list {
            if e.poly != poly {
                if odd {
                    return true;
                }
                poly = e.poly;
                odd = false;
            }
            let (a, bb) = (e.a, e.b);
            if x >= a[0].min(bb[0]) - t
                && x <= a[0].max(bb[0]) + t
                && y >= a[1].min(bb[1]) - t
                && y <= a[1].max(bb[1]) + t
                && seg_dist2(x, y, a, bb) <= t2
            {
                return true;
            }
            if (a[1] > y) != (bb[1] > y) {
                let xi = a[0] + (y - a[1]) * (bb[0] - a[0]) / (bb[1] - a[1]);
                if x < xi {
                    odd = !odd;
                }
            }
        }
        odd
    }
    /// Distance to the nearest boundary (outer rings and holes), whether the
    /// point is inside or outside; NaN for a non-finite point. Windows with
    /// more than 64 edges search a grid of edges outward from the point.
    pub fn boundary_distance(&self, x: f64, y: f64) -> f64 {
        if !(x.is_finite() && y.is_finite()) {
            return f64::NAN;
        }
        if let Some(g) = &self.grid {
            return g.min_dist2(&self.edges, x, y).sqrt();
        }
        let mut best = f64::INFINITY;
        for e in &self.edges {
            let d2 = seg_dist2(x, y, e.a, e.b);
            if d2 < best {
                best = d2;
            }
        }
        best.sqrt()
    }
    /// All boundary edges (outer rings and holes) as segments.
    pub fn edges(&self) -> Vec<([f64; 2], [f64; 2])> {
        self.edges.iter().map(|e| (e.a, e.b)).collect()
    }
    /// `n` independent uniform points in the window (binomial process).
    ///
    /// # Algorithm
    /// Rejection sampling (METHODS §1): a proposal uniform on a region that
    /// covers the window is kept when [`Window::contains`] is true; kept points
    /// are then uniform on the window. The proposal region is the bounding box
    /// when the window fills at least a quarter of it. For thin or ragged
    /// windows (acceptance below 25 %) it is the union of the cells of a
    /// 64 × 64 grid over the bounding box (found once, when the window is built) that either meet an edge's bounding
    /// box or have their centre inside; every other cell lies wholly outside
    /// the window, so the union still covers it, and all cells have equal
    /// area, so a cell drawn uniformly and a point drawn uniformly in it is a
    /// uniform draw on the union. The number of proposals per point is
    /// geometric with mean 1/acceptance.
    pub fn sample_uniform(&self, n: usize, rng: &mut Rng) -> (Vec<f64>, Vec<f64>) {
        let mut xs = Vec::with_capacity(n);
        let mut ys = Vec::with_capacity(n);
        if n == 0 {
            return (xs, ys);
        }
        let [x0, y0, x1, y1] = self.bbox;
        let (w, h) = (x1 - x0, y1 - y0);
        if self.cover.is_empty() {
            while xs.len() < n {
                let x = x0 + w * rng.random::<f64>();
                let y = y0 + h * rng.random::<f64>();
                if self.contains(x, y) {
                    xs.push(x);
                    ys.push(y);
                }
            }
            return (xs, ys);
        }
        let g = COVER_GRID;
        let (cw, ch) = (w / g as f64, h / g as f64);
        while xs.len() < n {
            let c = self.cover[rng.random_range(0..self.cover.len())] as usize;
            let (cx, cy) = ((c % g) as f64, (c / g) as f64);
            let x = x0 + cw * (cx + rng.random::<f64>());
            let y = y0 + ch * (cy + rng.random::<f64>());
            if self.contains(x, y) {
                xs.push(x);
                ys.push(y);
            }
        }
        (xs, ys)
    }

    /// Cells (row-major index) of a g × g grid over the bounding box that may
    /// hold part of the window (see [`Window::sample_uniform`]).
    fn covering_cells(&self, g: usize) -> Vec<u32> {
        let [x0, y0, x1, y1] = self.bbox;
        let (cw, ch) = ((x1 - x0) / g as f64, (y1 - y0) / g as f64);
        let cell = |v: f64, o: f64, s: f64| (((v - o) / s).floor().max(0.0) as usize).min(g - 1);
        let mut mark = vec![false; g * g];
        for e in &self.edges {
            let (ix0, ix1) = (
                cell(e.a[0].min(e.b[0]), x0, cw),
                cell(e.a[0].max(e.b[0]), x0, cw),
            );
            let (iy0, iy1) = (
                cell(e.a[1].min(e.b[1]), y0, ch),
                cell(e.a[1].max(e.b[1]), y0, ch),
            );
            // One cell of margin absorbs rounding at cell borders.
            for iy in iy0.saturating_sub(1)..=(iy1 + 1).min(g - 1) {
                for ix in ix0.saturating_sub(1)..=(ix1 + 1).min(g - 1) {
                    mark[iy * g + ix] = true;
                }
            }
        }
        (0..g * g)
            .filter(|&c| {
                mark[c]
                    || self.contains(
                        x0 + cw * ((c % g) as f64 + 0.5),
                        y0 + ch * ((c / g) as f64 + 0.5),
                    )
            })
            .map(|c| c as u32)
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rng::rng_from_seed;

    /// METHODS §1 / Appendix A "WH": [0,10]² minus the hole [4,6]².
    fn wh() -> Window {
        Window::from_polygons(
            vec![vec![
                vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
                vec![[4.0, 4.0], [6.0, 4.0], [6.0, 6.0], [4.0, 6.0], [4.0, 4.0]],
            ]],
            WindowOrigin::File,
        )
        .unwrap()
    }

    #[test]
    fn test_window_with_hole_area() {
        let w = wh();
        assert_eq!(w.area(), 96.0);
        assert_eq!(w.perimeter(), 48.0);
        assert_eq!(w.bbox(), [0.0, 0.0, 10.0, 10.0]);
        assert_eq!(w.edges().len(), 8);
    }

    #[test]
    fn test_window_orientation_and_closing() {
        let w = wh();
        let rings = &w.polygons()[0];
        assert_eq!(rings[0].first(), rings[0].last());
        assert!(signed_area2(&rings[0][..rings[0].len() - 1]) > 0.0);
        assert!(signed_area2(&rings[1][..rings[1].len() - 1]) < 0.0);
        assert_eq!(rings[1].len(), 5);
    }

    #[test]
    fn test_window_contains_hole_and_boundary() {
        let w = wh();
        assert!(w.contains(1.0, 1.0));
        assert!(!w.contains(5.0, 5.0));
        assert!(w.contains(4.0, 5.0)); // on the hole's edge
        assert!(w.contains(0.0, 0.0)); // corner
        assert!(w.contains(10.0, 3.0)); // outer edge
        assert!(!w.contains(10.000001, 3.0));
        assert!(!w.contains(f64::NAN, 3.0));
        assert_eq!(w.boundary_distance(3.0, 5.0), 1.0);
        assert_eq!(w.boundary_distance(5.0, 5.0), 1.0);
        assert_eq!(w.boundary_distance(12.0, 5.0), 2.0);
    }

    /// Points computed on a slanted edge far from the origin (UTM-like
    /// coordinates) are inside; 1 mm outward they are outside.
    #[test]
    fn test_contains_edge_points_large_coordinates() {
        let (a, b) = ([500_123.25, 5_000_017.5], [501_377.75, 5_000_911.125]);
        let w = Window::from_polygons(
            vec![vec![vec![a, b, [500_100.0, 5_001_500.0]]]],
            WindowOrigin::File,
        )
        .unwrap();
        let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
        let len = dx.hypot(dy);
        // Outward normal of a counter-clockwise ring's edge a→b is (dy, −dx)/len.
        let (ox, oy) = (dy / len * 1e-3, -dx / len * 1e-3);
        for k in 0..=100 {
            let t = k as f64 / 100.0;
            let (x, y) = (a[0] + t * dx, a[1] + t * dy);
            assert!(w.contains(x, y), "t = {t}");
            assert!(!w.contains(x + ox, y + oy), "t = {t} outside");
        }
        assert!(w.boundary_tolerance() < 1e-5);
    }

    #[test]
    fn test_window_rejects_bad_rings() {
        let e = Window::from_polygons(
            vec![vec![vec![[0.0, 0.0], [1.0, 1.0], [0.0, 0.0]]]],
            WindowOrigin::File,
        );
        assert!(matches!(
            e.unwrap_err().kind,
            InputErrorKind::BadPolygon { .. }
        ));
        let e = Window::from_polygons(
            vec![vec![vec![[0.0, 0.0], [1.0, 1.0], [2.0, 2.0], [0.0, 0.0]]]],
            WindowOrigin::File,
        );
        assert!(e.unwrap_err().to_string().contains("zero area"));
        let e = Window::from_polygons(
            vec![vec![vec![[0.0, 0.0], [1.0, f64::NAN], [2.0, 2.0]]]],
            WindowOrigin::File,
        );
        assert!(e.unwrap_err().to_string().contains("corner 2"));
        assert!(Window::from_polygons(vec![], WindowOrigin::File).is_err());
        let e = Window::from_polygons(
            vec![vec![
                vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
                vec![[8.0, 8.0], [12.0, 8.0], [12.0, 9.0]],
            ]],
            WindowOrigin::File,
        );
        assert!(e
            .unwrap_err()
            .to_string()
            .contains("hole 1: its corner (12, 9) lies outside the outer ring"));
        let e = Window::from_polygons(
            vec![vec![
                vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
                vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
            ]],
            WindowOrigin::File,
        );
        assert!(e.unwrap_err().to_string().contains("holes cover all"));
        assert!(Window::from_polygons(vec![vec![]], WindowOrigin::File).is_err());
    }

    #[test]
    fn test_multipolygon_area_and_contains() {
        let w = Window::from_polygons(
            vec![
                vec![vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]]],
                vec![vec![[2.0, 0.0], [2.0, 2.0], [4.0, 2.0], [4.0, 0.0]]],
            ],
            WindowOrigin::File,
        )
        .unwrap();
        assert_eq!(w.area(), 5.0);
        assert_eq!(w.perimeter(), 12.0);
        assert!(w.contains(0.5, 0.5) && w.contains(3.0, 1.0) && !w.contains(1.5, 0.5));
    }

    #[test]
    fn test_bounding_box_and_hull() {
        let x = [0.0, 2.0, 1.0, 2.0, 0.0, 1.0];
        let y = [0.0, 0.0, 0.5, 3.0, 3.0, 1.0];
        let b = Window::bounding_box_of(&x, &y).unwrap();
        assert_eq!(b.area(), 6.0);
        assert_eq!(b.origin(), WindowOrigin::BoundingBox);
        let h = Window::convex_hull_of(&x, &y).unwrap();
        assert_eq!(h.area(), 6.0);
        assert_eq!(h.polygons()[0][0].len(), 5);
        assert_eq!(h.origin(), WindowOrigin::ConvexHull);
        // A triangle hull with interior and collinear edge points.
        let h =
            Window::convex_hull_of(&[0.0, 4.0, 0.0, 1.0, 2.0], &[0.0, 0.0, 4.0, 1.0, 0.0]).unwrap();
        assert_eq!(h.area(), 8.0);
        assert_eq!(h.polygons()[0][0].len(), 4);
    }

    #[test]
    fn test_hull_degenerate_inputs() {
        for (x, y) in [
            (vec![], vec![]),
            (vec![1.0], vec![1.0]),
            (vec![1.0, 1.0, 1.0], vec![2.0, 2.0, 2.0]),
            (vec![0.0, 1.0, 2.0, 3.0], vec![0.0, 1.0, 2.0, 3.0]),
        ] {
            let e = Window::convex_hull_of(&x, &y).unwrap_err();
            assert!(e.to_string().contains("one straight line"));
            // A box around points on a diagonal line still has area.
            assert_eq!(Window::bounding_box_of(&x, &y).is_err(), x.len() < 4);
        }
    }

    #[test]
    fn test_many_vertex_polygon_uses_bands() {
        // Regular 1000-gon of radius 1: area (n/2) sin(2π/n).
        let n = 1000;
        let ring: Vec<[f64; 2]> = (0..n)
            .map(|k| {
                let t = 2.0 * std::f64::consts::PI * k as f64 / n as f64;
                [t.cos(), t.sin()]
            })
            .collect();
        let w = Window::from_polygons(vec![vec![ring]], WindowOrigin::File).unwrap();
        assert!(w.bands.count() > 1);
        let want = n as f64 / 2.0 * (2.0 * std::f64::consts::PI / n as f64).sin();
        assert!((w.area() - want).abs() < 1e-12);
        let mut rng = rng_from_seed(7);
        for _ in 0..20000 {
            let x = rng.random::<f64>() * 2.2 - 1.1;
            let y = rng.random::<f64>() * 2.2 - 1.1;
            let r = x.hypot(y);
            // The polygon lies between radius cos(π/n) and 1.
            if r < 0.99999 {
                assert!(w.contains(x, y));
            } else if r > 1.0 {
                assert!(!w.contains(x, y));
            }
        }
    }

    /// The edge grid gives the same distance as a scan of every edge, for a
    /// long-edged rectangle with a 300-vertex wiggly hole, at points inside,
    /// in the hole and far outside.
    #[test]
    fn test_boundary_distance_grid_matches_scan() {
        let hole: Vec<[f64; 2]> = (0..300)
            .map(|k| {
                let t = 2.0 * std::f64::consts::PI * k as f64 / 300.0;
                let r = 200.0 * (1.0 + 0.2 * (11.0 * t).sin());
                [500.0 + r * t.cos(), 300.0 + r * t.sin()]
            })
            .collect();
        let outer = vec![[0.0, 0.0], [1000.0, 0.0], [1000.0, 600.0], [0.0, 600.0]];
        let w = Window::from_polygons(vec![vec![outer, hole]], WindowOrigin::File).unwrap();
        assert!(w.grid.is_some());
        let edges = w.edges();
        let mut rng = rng_from_seed(5);
        for _ in 0..5000 {
            let x = rng.random::<f64>() * 3000.0 - 1000.0;
            let y = rng.random::<f64>() * 2000.0 - 700.0;
            let scan = edges
                .iter()
                .map(|&(a, b)| seg_dist2(x, y, a, b))
                .fold(f64::INFINITY, f64::min);
            assert_eq!(w.boundary_distance(x, y), scan.sqrt(), "({x}, {y})");
        }
        assert!(w.boundary_distance(f64::NAN, 0.0).is_nan());
    }

    /// METHODS §1 check values: |W| = 96, mean (5, 5), none in the hole,
    /// P(x < 2) = 20/96; tolerance 4 standard errors.
    #[test]
    fn test_sample_uniform_in_window_with_hole() {
        let w = wh();
        let mut rng = rng_from_seed(20260311);
        let n = 200_000;
        let (x, y) = w.sample_uniform(n, &mut rng);
        assert_eq!(x.len(), n);
        let nf = n as f64;
        let mx = x.iter().sum::<f64>() / nf;
        let my = y.iter().sum::<f64>() / nf;
        // Var of x under uniform on W: E[x²] − 25 with E[x²] = (10·1000/3 − 2·(216−64)/3)/96.
        let ex2 = (10.0 * 1000.0 / 3.0 - 2.0 * (216.0 - 64.0) / 3.0) / 96.0;
        let se = ((ex2 - 25.0) / nf).sqrt();
        assert!((mx - 5.0).abs() < 4.0 * se, "mean x {mx}, se {se}");
        assert!((my - 5.0).abs() < 4.0 * se, "mean y {my}");
        assert!(x
            .iter()
            .zip(&y)
            .all(|(&a, &b)| !(a > 4.0 && a < 6.0 && b > 4.0 && b < 6.0)));
        let p = 20.0 / 96.0;
        let frac = x.iter().filter(|&&a| a < 2.0).count() as f64 / nf;
        assert!(
            (frac - p).abs() < 4.0 * (p * (1.0 - p) / nf).sqrt(),
            "P(x<2) {frac}"
        );
    }

    /// A thin L-shaped window (acceptance < 25 %) uses the cell cover; the
    /// fraction of points in each arm must match its share of the area.
    #[test]
    fn test_sample_uniform_thin_window() {
        let w = Window::from_polygons(
            vec![vec![vec![
                [0.0, 0.0],
                [100.0, 0.0],
                [100.0, 1.0],
                [1.0, 1.0],
                [1.0, 100.0],
                [0.0, 100.0],
            ]]],
            WindowOrigin::File,
        )
        .unwrap();
        assert_eq!(w.area(), 199.0);
        let mut rng = rng_from_seed(3);
        let n = 100_000;
        let (x, y) = w.sample_uniform(n, &mut rng);
        assert!(x.iter().zip(&y).all(|(&a, &b)| w.contains(a, b)));
        // Horizontal arm y < 1 has area 100 of 199.
        let p = 100.0 / 199.0;
        let frac = y.iter().filter(|&&b| b < 1.0).count() as f64 / n as f64;
        assert!(
            (frac - p).abs() < 4.0 * (p * (1.0 - p) / n as f64).sqrt(),
            "{frac}"
        );
        // Uniform along the arm: mean x of points in the horizontal arm (x ≥ 1) = 50.5.
        let arm: Vec<f64> = x
            .iter()
            .zip(&y)
            .filter(|(&a, &b)| b < 1.0 && a >= 1.0)
            .map(|(&a, _)| a)
            .collect();
        let m = arm.iter().sum::<f64>() / arm.len() as f64;
        let se = (99.0f64.powi(2) / 12.0 / arm.len() as f64).sqrt();
        assert!((m - 50.5).abs() < 4.0 * se, "{m}");
    }

    #[test]
    fn test_sample_zero_points() {
        let mut rng = rng_from_seed(1);
        assert_eq!(wh().sample_uniform(0, &mut rng).0.len(), 0);
    }
}
