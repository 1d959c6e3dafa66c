//! Tests of src/window: the study area's geometry, against shapely outside the project.
//!
//! The JSON file in `tests/reference/` is written by the committed Python
//! script `tests/reference/geometry_reference.py`, which says what it computes and with which seed.

mod common;
use common::f;

/// Window area, perimeter, containment and boundary distance against
/// shapely, see `geometry_reference.py`.
mod geometry {
    use super::f;
    use cloister::window::{Window, WindowOrigin};
    use serde_json::Value;

    fn polygons(v: &Value) -> Vec<Vec<Vec<[f64; 2]>>> {
        v.as_array()
            .unwrap()
            .iter()
            .map(|poly| {
                poly.as_array()
                    .unwrap()
                    .iter()
                    .map(|ring| {
                        ring.as_array()
                            .unwrap()
                            .iter()
                            .map(|c| [f(&c[0]), f(&c[1])])
                            .collect()
                    })
                    .collect()
            })
            .collect()
    }

    #[test]
    fn test_window_matches_shapely() {
        let r: Value =
            serde_json::from_str(include_str!("reference/geometry_reference.json")).unwrap();
        let cases = r["cases"].as_array().unwrap();
        assert_eq!(cases.len(), 4);
        for c in cases {
            let name = c["name"].as_str().unwrap();
            let w = Window::from_polygons(polygons(&c["polygons"]), WindowOrigin::File).unwrap();
            let area = f(&c["area"]);
            assert!(
                (w.area() - area).abs() <= 1e-12 * area,
                "{name}: area {}",
                w.area()
            );
            let per = f(&c["perimeter"]);
            assert!(
                (w.perimeter() - per).abs() <= 1e-12 * per,
                "{name}: perimeter"
            );
            let (mut checked, mut on_boundary) = (0, 0);
            for p in c["points"].as_array().unwrap() {
                let (x, y) = (f(&p["x"]), f(&p["y"]));
                let bd = f(&p["boundary_distance"]);
                let d = w.boundary_distance(x, y);
                assert!(
                    (d - bd).abs() <= 1e-9,
                    "{name}: distance at ({x}, {y}): {d} vs {bd}"
                );
                let want = p["covers"].as_bool().unwrap();
                if bd == 0.0 {
                    // Exactly on the boundary: inside by our convention and shapely's covers.
                    assert!(want && w.contains(x, y), "{name}: ({x}, {y}) on boundary");
                    on_boundary += 1;
                } else if bd > 1e-9_f64.max(w.boundary_tolerance()) {
                    assert_eq!(w.contains(x, y), want, "{name}: contains({x}, {y})");
                    checked += 1;
                }
            }
            assert!(
                checked >= 490 && on_boundary >= 3,
                "{name}: {checked} {on_boundary}"
            );
        }
    }
}
