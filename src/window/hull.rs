//! Convex hulls: the crate's one hull routine, used for the study area drawn
//! around the events ([`Window::convex_hull_of`](super::Window::convex_hull_of))
//! and for the outline of each DBSCAN cluster.
//!
//! The hull itself is `geo`'s QuickHull (Barber, Dobkin & Huhdanpaa 1996,
//! "The Quickhull algorithm for convex hulls", ACM Trans. Math. Softw.
//! 22(4):469–483), with robust orientation predicates. The ring is then put
//! in one fixed form so that every caller, and every run, sees the same
//! vertices in the same order.

/// Convex hull as a counter-clockwise ring, closed (first point repeated),
/// starting at the smallest point in (x, y) order, with points on the hull's
/// edges dropped. Fewer than three distinct non-collinear points give the
/// degenerate hull closed the same way: `[p, p]` for one point, `[a, b, a]`
/// (a, b the smallest and largest points) for points on one line; no points
/// give an empty ring.
pub fn convex_hull(pts: &[[f64; 2]]) -> Vec<[f64; 2]> {
    let mut p: Vec<[f64; 2]> = match outside_octagon(pts) {
        Some(kept) => kept,
        None => pts.to_vec(),
    };
    p.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
    p.dedup();
    let (Some(&first), Some(&last)) = (p.first(), p.last()) else {
        return Vec::new();
    };
    if p.len() == 1 {
        return vec![first, first];
    }
    let degenerate = vec![first, last, first];
    if p.len() == 2 {
        return degenerate;
    }
    let mut coords: Vec<geo::Coord<f64>> =
        p.iter().map(|q| geo::Coord { x: q[0], y: q[1] }).collect();
    let ring = geo::algorithm::convex_hull::quick_hull(&mut coords);
    let mut h: Vec<[f64; 2]> = ring.0.iter().map(|c| [c.x, c.y]).collect();
    if h.len() >= 2 && h.first() == h.last() {
        h.pop();
    }
    if h.len() < 3 || super::signed_area2(&h) == 0.0 {
        return degenerate;
    }
    if super::signed_area2(&h) < 0.0 {
        h.reverse();
    }
    // Start at the smallest vertex in (x, y) order.
    let k = (0..h.len())
        .min_by(|&i, &j| {
            h[i][0]
                .total_cmp(&h[j][0])
                .then(h[i][1].total_cmp(&h[j][1]))
        })
        .unwrap_or(0);
    h.rotate_left(k);
    h.push(h[0]);
    h
}

/// Below this many points the hull sorts them all.
const OCTAGON_MIN_POINTS: usize = 1024;

/// For many points: the points not strictly inside the octagon of extreme
/// points (least and greatest x, y, x + y and x − y), which is the
/// Akl–Toussaint heuristic (Akl & Toussaint 1978, "A fast convex hull
/// algorithm", Inf. Process. Lett. 7(5):219–222). The octagon's corners lie
/// on the hull, so a point strictly inside it is never a hull vertex, and
/// the hull of the points kept is the hull of all (same vertices; the ring
/// is then put in the same fixed form). "Strictly" is with a margin far
/// above the rounding of the orientation test, so a point on or near an
/// octagon edge is kept. `None` (keep everything) for few points, any
/// non-finite coordinate, or an octagon without area.
fn outside_octagon(pts: &[[f64; 2]]) -> Option<Vec<[f64; 2]>> {
    if pts.len() < OCTAGON_MIN_POINTS {
        return None;
    }
    // Extremes in the directions 180°, 225°, ..., 135° (counter-clockwise).
    let score = |q: &[f64; 2]| {
        [
            -q[0],
            -q[0] - q[1],
            -q[1],
            q[0] - q[1],
            q[0],
            q[0] + q[1],
            q[1],
            q[1] - q[0],
        ]
    };
    let mut best = [f64::NEG_INFINITY; 8];
    let mut corner = [pts[0]; 8];
    let mut scale: f64 = 0.0;
    for q in pts {
        if !(q[0].is_finite() && q[1].is_finite()) {
            return None;
        }
        scale = scale.max(q[0].abs()).max(q[1].abs());
        for (k, v) in score(q).into_iter().enumerate() {
            if v > best[k] {
                best[k] = v;
                corner[k] = *q;
            }
        }
    }
    let mut ring: Vec<[f64; 2]> = corner.to_vec();
    ring.dedup();
    while ring.len() > 1 && ring.first() == ring.last() {
        ring.pop();
    }
    if ring.len() < 3 || super::signed_area2(&ring) <= 0.0 {
        return None;
    }
    // The cross product of coordinates up to `scale` is off by a few units
    // in the last place of scale²; 1e-9·scale² is a wide margin.
    let margin = 1e-9 * scale * scale;
    let m = ring.len();
    let inside = |q: &[f64; 2]| {
        (0..m).all(|i| {
            let (a, b) = (ring[i], ring[(i + 1) % m]);
            (b[0] - a[0]) * (q[1] - a[1]) - (b[1] - a[1]) * (q[0] - a[0]) > margin
        })
    };
    Some(pts.iter().filter(|q| !inside(q)).copied().collect())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::ring_area;

    #[test]
    fn hull_of_square_with_inner_and_edge_points() {
        // Closed form: the unit square's hull is the square, area 1.
        let pts = [
            [0.0, 0.0],
            [1.0, 0.0],
            [1.0, 1.0],
            [0.0, 1.0],
            [0.5, 0.5],
            [0.5, 0.0],
            [0.2, 0.7],
        ];
        let h = convex_hull(&pts);
        assert_eq!(h.len(), 5);
        assert_eq!(h.first(), h.last());
        assert!((ring_area(&h) - 1.0).abs() < 1e-15);
        // Counter-clockwise from the smallest point.
        assert_eq!(
            h,
            [[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0], [0.0, 0.0]]
        );
    }

    #[test]
    fn degenerate_hulls_have_zero_area() {
        assert_eq!(ring_area(&convex_hull(&[[1.0, 1.0]])), 0.0);
        assert_eq!(
            convex_hull(&[[1.0, 1.0], [1.0, 1.0]]),
            [[1.0, 1.0], [1.0, 1.0]]
        );
        assert_eq!(
            ring_area(&convex_hull(&[[0.0, 0.0], [1.0, 1.0], [2.0, 2.0]])),
            0.0
        );
        assert_eq!(
            convex_hull(&[[1.0, 1.0], [0.0, 0.0], [2.0, 2.0], [3.0, 3.0]]),
            [[0.0, 0.0], [3.0, 3.0], [0.0, 0.0]]
        );
        assert!(convex_hull(&[]).is_empty());
    }

    /// Andrew's monotone chain (Andrew 1979), an independent hull for comparison.
    fn monotone_chain(pts: &[[f64; 2]]) -> Vec<[f64; 2]> {
        let mut p = pts.to_vec();
        p.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
        p.dedup();
        let cross = |o: [f64; 2], a: [f64; 2], b: [f64; 2]| {
            (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0])
        };
        let mut h: Vec<[f64; 2]> = Vec::new();
        for &q in &p {
            while h.len() >= 2 && cross(h[h.len() - 2], h[h.len() - 1], q) <= 0.0 {
                h.pop();
            }
            h.push(q);
        }
        let lower = h.len() + 1;
        for &q in p.iter().rev().skip(1) {
            while h.len() >= lower && cross(h[h.len() - 2], h[h.len() - 1], q) <= 0.0 {
                h.pop();
            }
            h.push(q);
        }
        h
    }

    /// The same ring as Andrew's monotone chain (Andrew 1979) on random
    /// points: same vertices, same order, same start.
    #[test]
    fn hull_matches_monotone_chain() {
        use rand::RngExt;
        let chain = monotone_chain;
        let mut rng = crate::rng::rng_from_seed(4);
        for n in [3, 4, 10, 100, 2000] {
            let pts: Vec<[f64; 2]> = (0..n)
                .map(|_| [rng.random::<f64>() * 100.0, rng.random::<f64>() * 50.0])
                .collect();
            assert_eq!(convex_hull(&pts), chain(&pts), "n = {n}");
        }
    }

    /// Many points (the octagon of extreme points drops the inner ones
    /// first): still the same ring as Andrew's monotone chain, for points
    /// in a disc, on a circle (every point a vertex), on a rectangle's
    /// edges and inside it (collinear points, corners shared by several
    /// extremes) and on a lattice with every point repeated.
    #[test]
    fn hull_of_many_points_matches_monotone_chain() {
        use rand::RngExt;
        let mut rng = crate::rng::rng_from_seed(5);
        let n = 20_000;
        let disc: Vec<[f64; 2]> = (0..n)
            .map(|_| {
                let (r, t) = (rng.random::<f64>().sqrt() * 3e5, rng.random::<f64>() * 6.3);
                [r * t.cos() - 1e4, r * t.sin() + 2e4]
            })
            .collect();
        let circle: Vec<[f64; 2]> = (0..5000)
            .map(|k| {
                let t = k as f64 * std::f64::consts::TAU / 5000.0;
                [1e3 * t.cos(), 1e3 * t.sin()]
            })
            .collect();
        let rect: Vec<[f64; 2]> = (0..n)
            .map(|k| {
                let u = rng.random::<f64>() * 40.0;
                match k % 5 {
                    0 => [u, 0.0],
                    1 => [40.0, u / 2.0],
                    2 => [u, 20.0],
                    3 => [0.0, u / 2.0],
                    _ => [u, rng.random::<f64>() * 20.0],
                }
            })
            .collect();
        let lattice: Vec<[f64; 2]> = (0..2 * 60 * 40)
            .map(|k| [((k / 2) % 60) as f64 * 5.0, ((k / 2) / 60) as f64 * 5.0])
            .collect();
        for (name, pts) in [
            ("disc", &disc),
            ("circle", &circle),
            ("rect", &rect),
            ("lattice", &lattice),
        ] {
            assert!(pts.len() >= OCTAGON_MIN_POINTS);
            assert!(outside_octagon(pts).is_some(), "{name}: octagon used");
            assert_eq!(convex_hull(pts), monotone_chain(pts), "{name}");
        }
        // The octagon does drop inner points of the disc.
        assert!(outside_octagon(&disc).unwrap().len() < n / 2);
    }
}
