//! Area geometry the analyses share: the raster mask of a grid (kernel
//! surfaces, scan cells), the exact area of a disc inside the window (kernel
//! edge correction), and the area of a rectangle inside the window
//! (quadrat counts). All work on the window's oriented edges or rings.

use super::Window;

impl Window {
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
    /// window, in m²: the sum over oriented edges of the signed area of
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
                    total += 0.5 * super::signed_area2(&clipped);
                }
            }
        }
        total.max(0.0)
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
mod tests {
    use crate::window::Window;

    /// Fixture WH (docs/methods.md#fixtures): [0,10]² minus [4,6]².
    fn wh() -> Window {
        Window::rectangle_with_hole([0.0, 0.0, 10.0, 10.0], [4.0, 4.0, 6.0, 6.0]).unwrap()
    }

    #[test]
    fn disc_area_closed_forms() {
        let r = wh();
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
        let r = wh();
        // 10×10 unit cells: 100 − 4 hole cells.
        let m = r.raster_mask(0.0, 0.0, 1.0, 10, 10);
        assert_eq!(m.iter().filter(|&&v| v).count(), 96);
        assert!(!m[4 * 10 + 4] && m[0]);
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
