//! Convex hulls of cluster members (Andrew 1979, "Another efficient algorithm
//! for convex hulls in two dimensions", Information Processing Letters
//! 9:216–219: the monotone chain).

/// Convex hull as an anticlockwise ring, closed (first point repeated), with
/// collinear points dropped. Fewer than three distinct non-collinear points
/// give the degenerate hull (a point or a segment) closed the same way.
pub fn convex_hull(pts: &[[f64; 2]]) -> Vec<[f64; 2]> {
    let mut p: Vec<[f64; 2]> = pts.to_vec();
    p.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
    p.dedup();
    if p.len() <= 2 {
        let mut r = p.clone();
        if let Some(&f) = p.first() {
            r.push(f);
        }
        return r;
    }
    let cross = |o: [f64; 2], a: [f64; 2], b: [f64; 2]| {
        (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0])
    };
    let mut h: Vec<[f64; 2]> = Vec::with_capacity(2 * p.len());
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
    // h now ends with the first point again.
    h
}

/// Area of a closed ring (absolute value), m².
pub fn ring_area(r: &[[f64; 2]]) -> f64 {
    let mut s = 0.0;
    for w in r.windows(2) {
        s += w[0][0] * w[1][1] - w[1][0] * w[0][1];
    }
    (0.5 * s).abs()
}

#[cfg(test)]
mod tests {
    use super::*;

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
    }

    #[test]
    fn degenerate_hulls_have_zero_area() {
        assert_eq!(ring_area(&convex_hull(&[[1.0, 1.0]])), 0.0);
        assert_eq!(
            ring_area(&convex_hull(&[[0.0, 0.0], [1.0, 1.0], [2.0, 2.0]])),
            0.0
        );
        assert!(convex_hull(&[]).is_empty());
    }
}
