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
    let mut p: Vec<[f64; 2]> = pts.to_vec();
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

    /// The same ring as Andrew's monotone chain (Andrew 1979) on random
    /// points: same vertices, same order, same start.
    #[test]
    fn hull_matches_monotone_chain() {
        use rand::RngExt;
        let chain = |pts: &[[f64; 2]]| {
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
        };
        let mut rng = crate::rng::rng_from_seed(4);
        for n in [3, 4, 10, 100, 2000] {
            let pts: Vec<[f64; 2]> = (0..n)
                .map(|_| [rng.random::<f64>() * 100.0, rng.random::<f64>() * 50.0])
                .collect();
            assert_eq!(convex_hull(&pts), chain(&pts), "n = {n}");
        }
    }
}
