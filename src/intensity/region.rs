//! The study area as the hotspot methods need it: rasterised onto a grid,
//! clipped against circles, and sampled uniformly.
//!
//! A [`Region`] holds the same rings as a [`Window`] (exterior ring first,
//! then holes; closed or not) plus what the hotspot code asks of them many
//! times over: the area, the bounding box, oriented edges for exact
//! circle-intersection areas, and a coarse cell locator for fast
//! point-in-area tests. Inside means inside an odd number of rings
//! (even–odd rule), which is the same as "in an exterior ring and not in one
//! of its holes" for valid polygons.

use crate::error::AnalysisError;
use crate::rng::Rng;
use crate::window::Window;
use rand::RngExt;

/// Rings in metres (exterior first, then holes) for each polygon.
pub type Polygons = Vec<Vec<Vec<[f64; 2]>>>;

/// An oriented boundary edge: exteriors anticlockwise, holes clockwise,
/// so the area to the left of every edge is inside.
#[derive(Debug, Clone, Copy)]
struct Edge {
    a: [f64; 2],
    b: [f64; 2],
}

/// A study area prepared for rasterising, clipping and sampling.
#[derive(Debug, Clone)]
pub struct Region {
    edges: Vec<Edge>,
    area_m2: f64,
    bbox: [f64; 4],
    locator: Locator,
}

/// Coarse cells over the bounding box; each knows whether its centre is
/// inside and which edges may cross it.
#[derive(Debug, Clone)]
struct Locator {
    nx: usize,
    ny: usize,
    x0: f64,
    y0: f64,
    cw: f64,
    ch: f64,
    centre_inside: Vec<bool>,
    start: Vec<u32>,
    edge_ids: Vec<u32>,
}

fn signed_ring_area(ring: &[[f64; 2]]) -> f64 {
    let n = ring.len();
    let mut s = 0.0;
    for i in 0..n {
        let p = ring[i];
        let q = ring[(i + 1) % n];
        s += p[0] * q[1] - q[0] * p[1];
    }
    0.5 * s
}

impl Region {
    /// Prepares a window's polygons.
    pub fn from_window(w: &Window) -> Result<Region, AnalysisError> {
        Region::from_polygons(w.polygons())
    }

    /// Prepares polygons given as rings (exterior first, then holes).
    /// Fails on non-finite coordinates or zero area.
    pub fn from_polygons(polygons: &[Vec<Vec<[f64; 2]>>]) -> Result<Region, AnalysisError> {
        let bad = |detail: &str| AnalysisError::BadParameter {
            name: "study area".into(),
            detail: detail.into(),
        };
        let mut edges = Vec::new();
        let mut area = 0.0;
        let mut bbox = [
            f64::INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NEG_INFINITY,
        ];
        for poly in polygons {
            for (k, ring) in poly.iter().enumerate() {
                let mut r: Vec<[f64; 2]> = ring.clone();
                if r.len() >= 2 && r[0] == r[r.len() - 1] {
                    r.pop();
                }
                if r.iter().any(|p| !p[0].is_finite() || !p[1].is_finite()) {
                    return Err(bad("a vertex is not a finite number"));
                }
                if r.len() < 3 {
                    continue;
                }
                let s = signed_ring_area(&r);
                if s == 0.0 {
                    continue;
                }
                // Exterior anticlockwise (positive), holes clockwise.
                let want_positive = k == 0;
                if (s > 0.0) != want_positive {
                    r.reverse();
                }
                area += if want_positive { s.abs() } else { -s.abs() };
                for i in 0..r.len() {
                    let a = r[i];
                    let b = r[(i + 1) % r.len()];
                    bbox[0] = bbox[0].min(a[0]);
                    bbox[1] = bbox[1].min(a[1]);
                    bbox[2] = bbox[2].max(a[0]);
                    bbox[3] = bbox[3].max(a[1]);
                    edges.push(Edge { a, b });
                }
            }
        }
        if edges.is_empty() || area <= 0.0 || !area.is_finite() {
            return Err(bad("the study area has no area"));
        }
        let locator = Locator::build(&edges, bbox);
        Ok(Region {
            edges,
            area_m2: area,
            bbox,
            locator,
        })
    }

    /// An axis-aligned rectangle (handy for tests and demos).
    pub fn rectangle(x0: f64, y0: f64, x1: f64, y1: f64) -> Result<Region, AnalysisError> {
        Region::from_polygons(&[vec![vec![[x0, y0], [x1, y0], [x1, y1], [x0, y1]]]])
    }

    /// Area in m² (holes excluded).
    pub fn area(&self) -> f64 {
        self.area_m2
    }

    /// `[min_x, min_y, max_x, max_y]`.
    pub fn bbox(&self) -> [f64; 4] {
        self.bbox
    }

    /// Inside by the even–odd rule (points exactly on an edge may go either way).
    pub fn contains(&self, x: f64, y: f64) -> bool {
        self.locator.contains(&self.edges, x, y)
    }

    /// Full even–odd ray cast to +x over all edges.
    fn contains_slow(edges: &[Edge], x: f64, y: f64) -> bool {
        let mut inside = false;
        for e in edges {
            let (a, b) = (e.a, e.b);
            if (a[1] > y) != (b[1] > y) {
                let xc = a[0] + (y - a[1]) * (b[0] - a[0]) / (b[1] - a[1]);
                if xc > x {
                    inside = !inside;
                }
            }
        }
        inside
    }

    /// For each row of cell centres `y = y0 + (j + 0.5)·cell` and column
    /// `x = x0 + (i + 0.5)·cell`, whether the centre is inside (row-major,
    /// row 0 at the bottom). Scanline fill: O(edges·ny + nx·ny).
    pub fn raster_mask(&self, x0: f64, y0: f64, cell: f64, nx: usize, ny: usize) -> Vec<bool> {
        let mut mask = vec![false; nx * ny];
        let mut xs: Vec<f64> = Vec::new();
        for j in 0..ny {
            let y = y0 + (j as f64 + 0.5) * cell;
            xs.clear();
            for e in &self.edges {
                let (a, b) = (e.a, e.b);
                if (a[1] > y) != (b[1] > y) {
                    xs.push(a[0] + (y - a[1]) * (b[0] - a[0]) / (b[1] - a[1]));
                }
            }
            xs.sort_by(|p, q| p.total_cmp(q));
            for pair in xs.chunks_exact(2) {
                // Columns whose centre lies in [pair[0], pair[1]).
                let lo = ((pair[0] - x0) / cell - 0.5).ceil().max(0.0);
                let hi = ((pair[1] - x0) / cell - 0.5).ceil().min(nx as f64);
                if hi > lo {
                    let (lo, hi) = (lo as usize, hi as usize);
                    for v in &mut mask[j * nx + lo..j * nx + hi] {
                        *v = true;
                    }
                }
            }
        }
        mask
    }

    /// Exact area of the disc of radius `r` about `(cx, cy)` inside the
    /// region, in m²: the sum over oriented edges of the signed area of
    /// disc ∩ triangle(centre, a, b).
    pub fn disc_area(&self, cx: f64, cy: f64, r: f64) -> f64 {
        if r <= 0.0 {
            return 0.0;
        }
        let mut s = 0.0;
        for e in &self.edges {
            s += disc_triangle_area([e.a[0] - cx, e.a[1] - cy], [e.b[0] - cx, e.b[1] - cy], r);
        }
        s.max(0.0)
    }

    /// `n` independent uniform points in the region (rejection from the
    /// bounding box). Returns empty vectors when `n == 0`.
    pub fn sample_uniform(&self, n: usize, rng: &mut Rng) -> (Vec<f64>, Vec<f64>) {
        let mut xs = Vec::with_capacity(n);
        let mut ys = Vec::with_capacity(n);
        let [x0, y0, x1, y1] = self.bbox;
        while xs.len() < n {
            let x = x0 + (x1 - x0) * rng.random::<f64>();
            let y = y0 + (y1 - y0) * rng.random::<f64>();
            if self.contains(x, y) {
                xs.push(x);
                ys.push(y);
            }
        }
        (xs, ys)
    }

    /// Boundary edges as segments.
    pub fn segments(&self) -> impl Iterator<Item = ([f64; 2], [f64; 2])> + '_ {
        self.edges.iter().map(|e| (e.a, e.b))
    }
}

fn cross(p: [f64; 2], q: [f64; 2]) -> f64 {
    p[0] * q[1] - p[1] * q[0]
}

/// Signed area of the disc (centre at the origin, radius r) ∩ triangle (0, a, b).
fn disc_triangle_area(a: [f64; 2], b: [f64; 2], r: f64) -> f64 {
    let d = [b[0] - a[0], b[1] - a[1]];
    let qa = d[0] * d[0] + d[1] * d[1];
    if qa == 0.0 {
        return 0.0;
    }
    let qb = 2.0 * (a[0] * d[0] + a[1] * d[1]);
    let qc = a[0] * a[0] + a[1] * a[1] - r * r;
    let mut ts = [0.0, 1.0, 1.0, 1.0];
    let mut nt = 1;
    let disc = qb * qb - 4.0 * qa * qc;
    if disc > 0.0 {
        let sq = disc.sqrt();
        for t in [(-qb - sq) / (2.0 * qa), (-qb + sq) / (2.0 * qa)] {
            if t > 0.0 && t < 1.0 {
                ts[nt] = t;
                nt += 1;
            }
        }
    }
    ts[nt] = 1.0;
    nt += 1;
    let at = |t: f64| [a[0] + t * d[0], a[1] + t * d[1]];
    let r2 = r * r;
    let mut s = 0.0;
    for k in 0..nt - 1 {
        let p = at(ts[k]);
        let q = at(ts[k + 1]);
        let m = [(p[0] + q[0]) * 0.5, (p[1] + q[1]) * 0.5];
        if m[0] * m[0] + m[1] * m[1] <= r2 {
            s += 0.5 * cross(p, q);
        } else {
            let ang = cross(p, q).atan2(p[0] * q[0] + p[1] * q[1]);
            s += 0.5 * r2 * ang;
        }
    }
    s
}

impl Locator {
    fn build(edges: &[Edge], bbox: [f64; 4]) -> Locator {
        let side = ((edges.len() as f64).sqrt() * 2.0).clamp(8.0, 256.0) as usize;
        let (w, h) = ((bbox[2] - bbox[0]).max(1e-9), (bbox[3] - bbox[1]).max(1e-9));
        let (nx, ny) = (side, side);
        let (cw, ch) = (w / nx as f64, h / ny as f64);
        let (x0, y0) = (bbox[0], bbox[1]);
        let mut lists: Vec<Vec<u32>> = vec![Vec::new(); nx * ny];
        let clampi = |v: f64, n: usize| (v.floor().max(0.0) as usize).min(n - 1);
        for (k, e) in edges.iter().enumerate() {
            let i0 = clampi((e.a[0].min(e.b[0]) - x0) / cw, nx);
            let i1 = clampi((e.a[0].max(e.b[0]) - x0) / cw, nx);
            let j0 = clampi((e.a[1].min(e.b[1]) - y0) / ch, ny);
            let j1 = clampi((e.a[1].max(e.b[1]) - y0) / ch, ny);
            for j in j0..=j1 {
                for i in i0..=i1 {
                    lists[j * nx + i].push(k as u32);
                }
            }
        }
        let mut centre_inside = Vec::with_capacity(nx * ny);
        let mut start = Vec::with_capacity(nx * ny + 1);
        let mut edge_ids = Vec::new();
        for j in 0..ny {
            for i in 0..nx {
                let cx = x0 + (i as f64 + 0.5) * cw;
                let cy = y0 + (j as f64 + 0.5) * ch;
                centre_inside.push(Region::contains_slow(edges, cx, cy));
                start.push(edge_ids.len() as u32);
                edge_ids.extend_from_slice(&lists[j * nx + i]);
            }
        }
        start.push(edge_ids.len() as u32);
        Locator {
            nx,
            ny,
            x0,
            y0,
            cw,
            ch,
            centre_inside,
            start,
            edge_ids,
        }
    }

    fn contains(&self, edges: &[Edge], x: f64, y: f64) -> bool {
        let fi = (x - self.x0) / self.cw;
        let fj = (y - self.y0) / self.ch;
        if !(fi >= 0.0 && fj >= 0.0 && fi <= self.nx as f64 && fj <= self.ny as f64) {
            return false;
        }
        let i = (fi as usize).min(self.nx - 1);
        let j = (fj as usize).min(self.ny - 1);
        let c = j * self.nx + i;
        let mut inside = self.centre_inside[c];
        let (s, e) = (self.start[c] as usize, self.start[c + 1] as usize);
        if s == e {
            return inside;
        }
        // Parity of crossings between the point and the cell centre; every
        // edge crossing that segment passes through this cell.
        let p = [x, y];
        let q = [
            self.x0 + (i as f64 + 0.5) * self.cw,
            self.y0 + (j as f64 + 0.5) * self.ch,
        ];
        for &k in &self.edge_ids[s..e] {
            let ed = edges[k as usize];
            if segments_cross(p, q, ed.a, ed.b) {
                inside = !inside;
            }
        }
        inside
    }
}

/// Proper crossing of segments pq and ab, with a half-open rule on the
/// vertices of ab so a crossing through a shared vertex counts once.
fn segments_cross(p: [f64; 2], q: [f64; 2], a: [f64; 2], b: [f64; 2]) -> bool {
    let o = |u: [f64; 2], v: [f64; 2], w: [f64; 2]| {
        (v[0] - u[0]) * (w[1] - u[1]) - (v[1] - u[1]) * (w[0] - u[0])
    };
    let d1 = o(p, q, a);
    let d2 = o(p, q, b);
    // a and b on strictly different sides, counting "on the line" as the
    // positive side (half-open) so shared vertices are not double counted.
    if (d1 > 0.0) == (d2 > 0.0) {
        return false;
    }
    let d3 = o(a, b, p);
    let d4 = o(a, b, q);
    (d3 > 0.0) != (d4 > 0.0) && d3 != 0.0 && d4 != 0.0
}

#[cfg(test)]
mod tests {
    use super::*;

    fn square_with_hole() -> Region {
        // Appendix A fixture WH: [0,10]² minus [4,6]².
        Region::from_polygons(&[vec![
            vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
            vec![[4.0, 4.0], [6.0, 4.0], [6.0, 6.0], [4.0, 6.0]],
        ]])
        .unwrap()
    }

    #[test]
    fn area_of_square_with_hole() {
        // Closed form: 100 − 4 = 96 (METHODS Appendix A, WH).
        assert!((square_with_hole().area() - 96.0).abs() < 1e-12);
    }

    #[test]
    fn contains_matches_full_ray_cast() {
        let r = square_with_hole();
        let mut rng = crate::rng::rng_from_seed(7);
        for _ in 0..20000 {
            let x = -1.0 + 12.0 * rng.random::<f64>();
            let y = -1.0 + 12.0 * rng.random::<f64>();
            let truth = (0.0..=10.0).contains(&x)
                && (0.0..=10.0).contains(&y)
                && !((4.0..=6.0).contains(&x) && (4.0..=6.0).contains(&y));
            assert_eq!(r.contains(x, y), truth, "({x},{y})");
        }
    }

    #[test]
    fn disc_area_closed_forms() {
        let r = square_with_hole();
        let pi = std::f64::consts::PI;
        // Disc well inside: πr².
        assert!((r.disc_area(2.0, 2.0, 1.0) - pi).abs() < 1e-12);
        // Centred on a corner of the outer square: a quarter disc.
        assert!((r.disc_area(0.0, 0.0, 2.0) - pi).abs() < 1e-12);
        // Centred in the hole, radius 1 (inside the hole): nothing.
        assert!(r.disc_area(5.0, 5.0, 1.0).abs() < 1e-12);
        // Covering everything: the area.
        assert!((r.disc_area(5.0, 5.0, 100.0) - 96.0).abs() < 1e-9);
        // Centred on the middle of the bottom edge: half a disc.
        assert!((r.disc_area(2.0, 0.0, 1.5) - pi * 1.5 * 1.5 / 2.0).abs() < 1e-12);
    }

    #[test]
    fn raster_mask_counts_cells() {
        let r = square_with_hole();
        // 10×10 unit cells: 100 − 4 hole cells.
        let m = r.raster_mask(0.0, 0.0, 1.0, 10, 10);
        assert_eq!(m.iter().filter(|&&v| v).count(), 96);
        assert!(!m[4 * 10 + 4] && m[0]);
    }
}
