//! The study area prepared for distance work: boundary edges in a grid,
//! containment, distance to the boundary, uniform sampling and the length of
//! a circle that lies inside the area.
//!
//! Built once per analysis from the polygons of a [`Window`](crate::Window)
//! (outer ring first, then holes). Ring orientation is normalised on the way
//! in (outer rings counter-clockwise, holes clockwise), so the inside of the
//! study area is always **to the left** of every directed boundary edge; the
//! circle-arc routine relies on that.
//!
//! All geometry is planar, in metres.

use crate::rng::Rng;
use rand::RngExt;

/// One directed boundary edge, inside of the area on its left.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Edge {
    pub ax: f64,
    pub ay: f64,
    pub bx: f64,
    pub by: f64,
}

impl Edge {
    /// Distance from (x, y) to the segment.
    #[cfg(test)]
    pub fn distance(&self, x: f64, y: f64) -> f64 {
        self.distance_sq(x, y).sqrt()
    }
    #[inline]
    pub fn distance_sq(&self, x: f64, y: f64) -> f64 {
        let dx = self.bx - self.ax;
        let dy = self.by - self.ay;
        let l2 = dx * dx + dy * dy;
        let (fx, fy) = (x - self.ax, y - self.ay);
        let t = if l2 > 0.0 {
            ((fx * dx + fy * dy) / l2).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let (px, py) = (fx - t * dx, fy - t * dy);
        px * px + py * py
    }
}

/// A prepared study area (see the module docs).
#[derive(Debug, Clone)]
pub(crate) struct Region {
    pub edges: Vec<Edge>,
    /// Closed rings as given (orientation normalised), for clipping.
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    pub area: f64,
    pub perimeter: f64,
    pub bbox: [f64; 4],
    /// `Some([x0, y0, x1, y1])` when the area is one axis-aligned rectangle.
    pub rectangle: Option<[f64; 4]>,
    // Edge grid for distance and neighbourhood queries.
    gx: usize,
    gy: usize,
    cell_w: f64,
    cell_h: f64,
    cell_start: Vec<u32>,
    cell_edges: Vec<u32>,
    // Horizontal strips for ray casting.
    strips: usize,
    strip_h: f64,
    strip_start: Vec<u32>,
    strip_edges: Vec<u32>,
}

fn signed_area(ring: &[[f64; 2]]) -> f64 {
    let n = ring.len();
    let mut s = 0.0;
    for i in 0..n {
        let a = ring[i];
        let b = ring[(i + 1) % n];
        s += a[0] * b[1] - b[0] * a[1];
    }
    0.5 * s
}

/// Builds a compressed cell → items table.
fn bucket(n_cells: usize, pairs: &[(u32, u32)]) -> (Vec<u32>, Vec<u32>) {
    let mut start = vec![0u32; n_cells + 1];
    for &(c, _) in pairs {
        start[c as usize + 1] += 1;
    }
    for i in 0..n_cells {
        start[i + 1] += start[i];
    }
    let mut fill = start.clone();
    let mut items = vec![0u32; pairs.len()];
    for &(c, e) in pairs {
        items[fill[c as usize] as usize] = e;
        fill[c as usize] += 1;
    }
    (start, items)
}

impl Region {
    /// Prepares polygons (outer ring first, then holes; closed or not).
    /// Returns `None` when there is no ring with positive area or a
    /// coordinate is not finite.
    pub fn from_polygons(polys: &[Vec<Vec<[f64; 2]>>]) -> Option<Region> {
        let mut polygons = Vec::new();
        let mut edges = Vec::new();
        let mut area = 0.0;
        let mut perimeter = 0.0;
        let mut bbox = [
            f64::INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NEG_INFINITY,
        ];
        for poly in polys {
            let mut rings_out = Vec::new();
            for (ri, ring) in poly.iter().enumerate() {
                let mut r: Vec<[f64; 2]> = ring.clone();
                if r.iter().any(|p| !p[0].is_finite() || !p[1].is_finite()) {
                    return None;
                }
                while r.len() > 1 && r.first() == r.last() {
                    r.pop();
                }
                r.dedup();
                if r.len() < 3 {
                    continue;
                }
                let a = signed_area(&r);
                if a == 0.0 {
                    continue;
                }
                let want_ccw = ri == 0;
                if (a > 0.0) != want_ccw {
                    r.reverse();
                }
                if ri == 0 {
                    area += a.abs();
                } else {
                    area -= a.abs();
                }
                for i in 0..r.len() {
                    let p = r[i];
                    let q = r[(i + 1) % r.len()];
                    perimeter += ((q[0] - p[0]).powi(2) + (q[1] - p[1]).powi(2)).sqrt();
                    edges.push(Edge {
                        ax: p[0],
                        ay: p[1],
                        bx: q[0],
                        by: q[1],
                    });
                    bbox[0] = bbox[0].min(p[0]);
                    bbox[1] = bbox[1].min(p[1]);
                    bbox[2] = bbox[2].max(p[0]);
                    bbox[3] = bbox[3].max(p[1]);
                }
                let mut closed = r.clone();
                closed.push(r[0]);
                rings_out.push(closed);
            }
            if !rings_out.is_empty() {
                polygons.push(rings_out);
            }
        }
        if area.is_nan() || area <= 0.0 || edges.is_empty() {
            return None;
        }
        let rectangle = if polygons.len() == 1 && polygons[0].len() == 1 && edges.len() == 4 {
            let axis = edges.iter().all(|e| e.ax == e.bx || e.ay == e.by);
            let full = (area - (bbox[2] - bbox[0]) * (bbox[3] - bbox[1])).abs() <= 1e-12 * area;
            if axis && full {
                Some(bbox)
            } else {
                None
            }
        } else {
            None
        };
        let w = (bbox[2] - bbox[0]).max(f64::MIN_POSITIVE);
        let h = (bbox[3] - bbox[1]).max(f64::MIN_POSITIVE);
        // About four edges per cell on average, at most 256 cells a side.
        let target = ((edges.len() as f64) / 4.0).max(1.0);
        let side = (w * h / target).sqrt();
        let gx = ((w / side).ceil() as usize).clamp(1, 256);
        let gy = ((h / side).ceil() as usize).clamp(1, 256);
        let cell_w = w / gx as f64;
        let cell_h = h / gy as f64;
        let mut pairs = Vec::new();
        for (k, e) in edges.iter().enumerate() {
            let (x0, x1) = (e.ax.min(e.bx), e.ax.max(e.bx));
            let (y0, y1) = (e.ay.min(e.by), e.ay.max(e.by));
            let cx0 =
                (((x0 - bbox[0]) / cell_w).floor() as isize).clamp(0, gx as isize - 1) as usize;
            let cx1 =
                (((x1 - bbox[0]) / cell_w).floor() as isize).clamp(0, gx as isize - 1) as usize;
            let cy0 =
                (((y0 - bbox[1]) / cell_h).floor() as isize).clamp(0, gy as isize - 1) as usize;
            let cy1 =
                (((y1 - bbox[1]) / cell_h).floor() as isize).clamp(0, gy as isize - 1) as usize;
            for cy in cy0..=cy1 {
                for cx in cx0..=cx1 {
                    pairs.push(((cy * gx + cx) as u32, k as u32));
                }
            }
        }
        let (cell_start, cell_edges) = bucket(gx * gy, &pairs);
        let strips = (edges.len() / 2).clamp(1, 1024);
        let strip_h = h / strips as f64;
        let mut spairs = Vec::new();
        for (k, e) in edges.iter().enumerate() {
            let (y0, y1) = (e.ay.min(e.by), e.ay.max(e.by));
            let s0 = (((y0 - bbox[1]) / strip_h).floor() as isize).clamp(0, strips as isize - 1);
            let s1 = (((y1 - bbox[1]) / strip_h).floor() as isize).clamp(0, strips as isize - 1);
            for s in s0..=s1 {
                spairs.push((s as u32, k as u32));
            }
        }
        let (strip_start, strip_edges) = bucket(strips, &spairs);
        Some(Region {
            edges,
            polygons,
            area,
            perimeter,
            bbox,
            rectangle,
            gx,
            gy,
            cell_w,
            cell_h,
            cell_start,
            cell_edges,
            strips,
            strip_h,
            strip_start,
            strip_edges,
        })
    }

    /// Prepares a [`Window`](crate::Window).
    pub fn from_window(w: &crate::Window) -> Option<Region> {
        Region::from_polygons(w.polygons())
    }

    /// Inside or on the boundary (even–odd rule, so holes are excluded).
    pub fn contains(&self, x: f64, y: f64) -> bool {
        if x < self.bbox[0] || x > self.bbox[2] || y < self.bbox[1] || y > self.bbox[3] {
            return false;
        }
        let s = (((y - self.bbox[1]) / self.strip_h).floor() as isize)
            .clamp(0, self.strips as isize - 1) as usize;
        let mut inside = false;
        for &k in &self.strip_edges[self.strip_start[s] as usize..self.strip_start[s + 1] as usize]
        {
            let e = &self.edges[k as usize];
            // On the boundary counts as inside.
            if e.distance_sq(x, y) == 0.0 {
                return true;
            }
            if (e.ay > y) != (e.by > y) {
                let xc = e.ax + (y - e.ay) * (e.bx - e.ax) / (e.by - e.ay);
                if x < xc {
                    inside = !inside;
                }
            }
        }
        inside
    }

    #[inline]
    fn cell_of(&self, x: f64, y: f64) -> (isize, isize) {
        (
            ((x - self.bbox[0]) / self.cell_w).floor() as isize,
            ((y - self.bbox[1]) / self.cell_h).floor() as isize,
        )
    }

    #[inline]
    fn cell_items(&self, cx: usize, cy: usize) -> &[u32] {
        let c = cy * self.gx + cx;
        &self.cell_edges[self.cell_start[c] as usize..self.cell_start[c + 1] as usize]
    }

    /// Distance from (x, y) to the nearest boundary edge (outer rings and
    /// holes).
    pub fn boundary_distance(&self, x: f64, y: f64) -> f64 {
        let (hx, hy) = self.cell_of(x, y);
        let hx = hx.clamp(0, self.gx as isize - 1);
        let hy = hy.clamp(0, self.gy as isize - 1);
        let mut best = f64::INFINITY;
        let max_k = self.gx.max(self.gy) as isize;
        for k in 0..=max_k {
            for cy in (hy - k)..=(hy + k) {
                if cy < 0 || cy >= self.gy as isize {
                    continue;
                }
                let on_row_edge = cy == hy - k || cy == hy + k;
                let step = if on_row_edge { 1 } else { (2 * k).max(1) };
                let mut cx = hx - k;
                while cx <= hx + k {
                    if cx >= 0 && cx < self.gx as isize {
                        for &e in self.cell_items(cx as usize, cy as usize) {
                            let d = self.edges[e as usize].distance_sq(x, y);
                            if d < best {
                                best = d;
                            }
                        }
                    }
                    cx += step;
                }
            }
            // Everything not yet visited lies outside the block of cells
            // within ring k of the home cell.
            let bx0 = self.bbox[0] + (hx - k) as f64 * self.cell_w;
            let bx1 = self.bbox[0] + (hx + k + 1) as f64 * self.cell_w;
            let by0 = self.bbox[1] + (hy - k) as f64 * self.cell_h;
            let by1 = self.bbox[1] + (hy + k + 1) as f64 * self.cell_h;
            let margin = (x - bx0).min(bx1 - x).min(y - by0).min(by1 - y);
            if best.is_finite() && margin >= 0.0 && best <= margin * margin {
                break;
            }
        }
        best.sqrt()
    }

    /// Indices of the edges within distance `r` of (x, y), sorted.
    pub fn edges_near(&self, x: f64, y: f64, r: f64) -> Vec<u32> {
        let (cx0, cy0) = self.cell_of(x - r, y - r);
        let (cx1, cy1) = self.cell_of(x + r, y + r);
        let cx0 = cx0.clamp(0, self.gx as isize - 1) as usize;
        let cx1 = cx1.clamp(0, self.gx as isize - 1) as usize;
        let cy0 = cy0.clamp(0, self.gy as isize - 1) as usize;
        let cy1 = cy1.clamp(0, self.gy as isize - 1) as usize;
        let mut out = Vec::new();
        let r2 = r * r;
        for cy in cy0..=cy1 {
            for cx in cx0..=cx1 {
                for &e in self.cell_items(cx, cy) {
                    if self.edges[e as usize].distance_sq(x, y) <= r2 {
                        out.push(e);
                    }
                }
            }
        }
        out.sort_unstable();
        out.dedup();
        out
    }

    /// Length of the circle of radius `d` about (cx, cy) that lies inside
    /// the area, using only the edges listed in `near` (which must contain
    /// every edge within `d` of the centre).
    ///
    /// Algorithm: intersect the circle with each edge analytically (edge
    /// parameter t in [0, 1), so a crossing at a shared vertex counts once);
    /// each crossing is entering or leaving according to whether the
    /// counter-clockwise tangent points to the left of the edge (inside).
    /// With one edge crossed twice the inside arc is 2π·d minus (or just) the
    /// arc 2·d·acos(p/d) cut off by the chord, p the distance from the
    /// centre to the edge's line; otherwise crossing angles are sorted and
    /// the arcs from each entering to the next leaving crossing are summed.
    /// If entering and leaving do not alternate (tangencies, vertex
    /// grazes), arc midpoints are tested for containment instead.
    ///
    /// Known limit: for a centre exactly on the boundary, a circle through
    /// a vertex can be misjudged (a crossing at the vertex is dropped). The
    /// distance functions do not use this routine (see `IsoCache`, which
    /// handles such points); it stays as an independent check for points
    /// inside the area.
    pub fn arc_inside(&self, cx: f64, cy: f64, d: f64, near: &[u32]) -> f64 {
        const TAU: f64 = std::f64::consts::TAU;
        if d <= 0.0 {
            return 0.0;
        }
        let d2 = d * d;
        // Up to a few crossings is the common case: keep them on the stack.
        let mut buf: [(f64, bool, u32); 16] = [(0.0, false, 0); 16];
        let mut heap: Vec<(f64, bool, u32)> = Vec::new();
        let mut count = 0usize;
        let mut single_edge = u32::MAX;
        let mut single_ok = true;
        // First pass: t parameters and directions (no angles yet).
        for &k in near {
            let e = &self.edges[k as usize];
            let (fx, fy) = (e.ax - cx, e.ay - cy);
            let (dx, dy) = (e.bx - e.ax, e.by - e.ay);
            let a = dx * dx + dy * dy;
            if a == 0.0 {
                continue;
            }
            let b = 2.0 * (fx * dx + fy * dy);
            let c = fx * fx + fy * fy - d2;
            let disc = b * b - 4.0 * a * c;
            if disc <= 0.0 {
                continue;
            }
            let sq = disc.sqrt();
            for t in [(-b - sq) / (2.0 * a), (-b + sq) / (2.0 * a)] {
                if (0.0..1.0).contains(&t) {
                    let px = fx + t * dx;
                    let py = fy + t * dy;
                    let entering = px * dx + py * dy > 0.0;
                    // Store the relative crossing point packed as an angle
                    // later; for now keep t.
                    let item = (t, entering, k);
                    if count < buf.len() {
                        buf[count] = item;
                    } else {
                        if heap.is_empty() {
                            heap.extend_from_slice(&buf);
                        }
                        heap.push(item);
                    }
                    count += 1;
                    if single_edge == u32::MAX {
                        single_edge = k;
                    } else if single_edge != k {
                        single_ok = false;
                    }
                }
            }
        }
        if count == 0 {
            // The circle meets no edge: wholly inside or wholly outside.
            return if self.contains(cx + d, cy) {
                TAU * d
            } else {
                0.0
            };
        }
        if count == 2 && single_ok {
            let e = &self.edges[single_edge as usize];
            let (dx, dy) = (e.bx - e.ax, e.by - e.ay);
            let len = (dx * dx + dy * dy).sqrt();
            let cross = dx * (cy - e.ay) - dy * (cx - e.ax);
            let p = (cross / len).abs();
            let cut = 2.0 * d * (p / d).min(1.0).acos();
            return if cross > 0.0 { TAU * d - cut } else { cut };
        }
        let items: &mut [(f64, bool, u32)] = if heap.is_empty() {
            &mut buf[..count]
        } else {
            &mut heap[..]
        };
        // Replace t by the crossing angle in [0, 2π).
        for it in items.iter_mut() {
            let e = &self.edges[it.2 as usize];
            let px = e.ax + it.0 * (e.bx - e.ax) - cx;
            let py = e.ay + it.0 * (e.by - e.ay) - cy;
            let mut th = py.atan2(px);
            if th < 0.0 {
                th += TAU;
            }
            it.0 = th;
        }
        items.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
        let n = items.len();
        let alternates = n.is_multiple_of(2) && (0..n).all(|i| items[i].1 != items[(i + 1) % n].1);
        let mut inside = 0.0;
        if alternates {
            for i in 0..n {
                if items[i].1 {
                    let mut span = items[(i + 1) % n].0 - items[i].0;
                    if span < 0.0 {
                        span += TAU;
                    }
                    inside += span;
                }
            }
        } else {
            for i in 0..n {
                let mut span = items[(i + 1) % n].0 - items[i].0;
                if span <= 0.0 {
                    span += TAU;
                }
                if n == 1 {
                    span = TAU;
                }
                let mid = items[i].0 + 0.5 * span;
                if self.contains(cx + d * mid.cos(), cy + d * mid.sin()) {
                    inside += span;
                }
            }
        }
        inside * d
    }

    /// One uniform point in the area (rejection from the bounding box).
    #[inline]
    pub fn sample_one(&self, rng: &mut Rng) -> (f64, f64) {
        let [x0, y0, x1, y1] = self.bbox;
        loop {
            let x = x0 + (x1 - x0) * rng.random::<f64>();
            let y = y0 + (y1 - y0) * rng.random::<f64>();
            if self.rectangle.is_some() || self.contains(x, y) {
                return (x, y);
            }
        }
    }

    /// `n` independent uniform points in the area (binomial process).
    pub fn sample(&self, n: usize, rng: &mut Rng) -> (Vec<f64>, Vec<f64>) {
        let mut xs = Vec::with_capacity(n);
        let mut ys = Vec::with_capacity(n);
        for _ in 0..n {
            let (x, y) = self.sample_one(rng);
            xs.push(x);
            ys.push(y);
        }
        (xs, ys)
    }

    /// Area of the intersection with an axis-aligned rectangle, by clipping
    /// each ring against the rectangle (Sutherland–Hodgman; exact for any
    /// ring because the clip region is convex) and adding signed areas, so
    /// holes subtract.
    pub fn rect_intersection_area(&self, rect: [f64; 4]) -> f64 {
        let mut total = 0.0;
        for poly in &self.polygons {
            for ring in poly {
                let open = &ring[..ring.len() - 1];
                let clipped = clip_ring_to_rect(open, rect);
                if clipped.len() >= 3 {
                    total += signed_area(&clipped);
                }
            }
        }
        total.max(0.0)
    }
}

/// Sutherland–Hodgman clipping of a ring against an axis-aligned rectangle.
fn clip_ring_to_rect(ring: &[[f64; 2]], r: [f64; 4]) -> Vec<[f64; 2]> {
    let mut out: Vec<[f64; 2]> = ring.to_vec();
    // (axis, bound, keep_greater)
    for (axis, bound, greater) in [
        (0, r[0], true),
        (0, r[2], false),
        (1, r[1], true),
        (1, r[3], false),
    ] {
        if out.is_empty() {
            break;
        }
        let input = std::mem::take(&mut out);
        let inside = |p: &[f64; 2]| {
            if greater {
                p[axis] >= bound
            } else {
                p[axis] <= bound
            }
        };
        for i in 0..input.len() {
            let cur = input[i];
            let prev = input[(i + input.len() - 1) % input.len()];
            let (ci, pi) = (inside(&cur), inside(&prev));
            if ci {
                if !pi {
                    out.push(intersect_axis(prev, cur, axis, bound));
                }
                out.push(cur);
            } else if pi {
                out.push(intersect_axis(prev, cur, axis, bound));
            }
        }
    }
    out
}

fn intersect_axis(p: [f64; 2], q: [f64; 2], axis: usize, bound: f64) -> [f64; 2] {
    let t = (bound - p[axis]) / (q[axis] - p[axis]);
    let mut out = [p[0] + t * (q[0] - p[0]), p[1] + t * (q[1] - p[1])];
    out[axis] = bound;
    out
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    pub fn unit_square() -> Region {
        Region::from_polygons(&[vec![vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]]]])
            .unwrap()
    }
    /// Fixture WH (METHODS Appendix A): [0,10]² minus [4,6]².
    pub fn wh() -> Region {
        Region::from_polygons(&[vec![
            vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
            vec![[4.0, 4.0], [6.0, 4.0], [6.0, 6.0], [4.0, 6.0]],
        ]])
        .unwrap()
    }

    #[test]
    fn test_region_area_perimeter_hole() {
        // |W| = 100 − 4 = 96 and P = 40 + 8 (hole included), METHODS §1 / Appendix A WH.
        let w = wh();
        assert!((w.area - 96.0).abs() < 1e-12);
        assert!((w.perimeter - 48.0).abs() < 1e-12);
        assert!(w.rectangle.is_none());
        assert!(unit_square().rectangle.is_some());
        assert!(!w.contains(5.0, 5.0));
        assert!(w.contains(3.0, 5.0));
        assert!(w.contains(4.0, 5.0)); // on the hole boundary counts as inside
        assert!(!w.contains(10.5, 5.0));
    }

    #[test]
    fn test_boundary_distance_oracle() {
        let w = wh();
        let mut rng = crate::rng::rng_from_seed(5);
        for _ in 0..500 {
            let (x, y) = w.sample_one(&mut rng);
            let brute = w
                .edges
                .iter()
                .map(|e| e.distance(x, y))
                .fold(f64::INFINITY, f64::min);
            assert!((w.boundary_distance(x, y) - brute).abs() < 1e-12);
        }
    }

    #[test]
    fn test_arc_inside_single_weights() {
        // METHODS §4.3 single-weight checks: unit square, x = (0.1, 0.2),
        // r = 0.3: inside arc length 0.79210827 (analytic; shapely 0.79210829).
        let w = unit_square();
        let near = w.edges_near(0.1, 0.2, 0.3);
        let arc = w.arc_inside(0.1, 0.2, 0.3, &near);
        assert!((arc - 0.79210827).abs() < 1e-7, "{arc}");
        let e = std::f64::consts::TAU * 0.3 / arc;
        assert!((e - 2.37966913).abs() < 1e-7, "{e}");
        // WH, x = (3.5, 5), r = 1: inside fraction exactly 2/3 (e = 1.5).
        let w = wh();
        let near = w.edges_near(3.5, 5.0, 1.0);
        let arc = w.arc_inside(3.5, 5.0, 1.0, &near);
        assert!((std::f64::consts::TAU / arc - 1.5).abs() < 1e-12, "{arc}");
    }

    #[test]
    fn test_rect_intersection_area() {
        let w = wh();
        // Cell [3,5]x[3,5] overlaps the hole [4,6]² in [4,5]²: 4 − 1 = 3.
        assert!((w.rect_intersection_area([3.0, 3.0, 5.0, 5.0]) - 3.0).abs() < 1e-12);
        assert!((w.rect_intersection_area([-5.0, -5.0, 20.0, 20.0]) - 96.0).abs() < 1e-12);
        assert_eq!(w.rect_intersection_area([11.0, 11.0, 12.0, 12.0]), 0.0);
    }
}
