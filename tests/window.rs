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

    pub(super) use crate::common::polygons;

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

/// Study areas as users have them: invalid geometry against shapely, large
/// lon/lat areas against pyproj, and many-corner outlines
/// (`geometry_reference.py`, sections "invalid" and "lonlat").
mod real_areas {
    use super::f;
    use cloister::input::{read_area, read_points, ReadOptions};
    use cloister::study::{AreaFallback, Study};
    use cloister::window::{Window, WindowOrigin, MAX_CORNERS};
    use serde_json::Value;

    fn reference() -> Value {
        serde_json::from_str(include_str!("reference/geometry_reference.json")).unwrap()
    }

    /// The numbers after "at about (" in a message.
    fn place_in(msg: &str) -> [f64; 2] {
        let s = &msg[msg.find("at about (").expect(msg) + 10..];
        let s = &s[..s.find(')').unwrap()];
        let v: Vec<f64> = s.split(", ").map(|t| t.parse().unwrap()).collect();
        [v[0], v[1]]
    }

    /// Rings shapely calls invalid (a ring with two corners swapped, an
    /// uneven and a symmetric bow-tie) are refused as crossing themselves,
    /// at the place GEOS names; overlapping, duplicate and nested parts
    /// are merged, with the area of shapely's `unary_union` and a note;
    /// parts sharing an edge, and a valid ring, keep their area silently.
    #[test]
    fn test_invalid_areas_match_shapely() {
        let r = reference();
        let cases = r["invalid"].as_array().unwrap();
        assert_eq!(cases.len(), 8);
        for c in cases {
            let name = c["name"].as_str().unwrap();
            let polys = super::geometry::polygons(&c["polygons"]);
            let single = polys.len() == 1;
            let res = Window::from_polygons(polys, WindowOrigin::File);
            if single {
                if c["is_valid"].as_bool().unwrap() {
                    let w = res.unwrap();
                    assert_eq!(w.area(), f(&c["sum_of_areas"]), "{name}");
                    assert!(w.notes().is_empty());
                } else {
                    let msg = res.unwrap_err().to_string();
                    assert!(msg.contains("crosses itself"), "{name}: {msg}");
                    let (at, want) = (place_in(&msg), &c["at"]);
                    assert!(
                        (at[0] - f(&want[0])).abs() < 1e-9 && (at[1] - f(&want[1])).abs() < 1e-9,
                        "{name}: {msg} vs {want}"
                    );
                }
            } else {
                let w = res.unwrap_or_else(|e| panic!("{name}: {e}"));
                let (sum, union) = (f(&c["sum_of_areas"]), f(&c["union_area"]));
                assert!(
                    (w.area() - union).abs() <= 1e-9 * union,
                    "{name}: area {} vs union {union}",
                    w.area()
                );
                assert_eq!(w.notes().len(), usize::from(union < sum), "{name}");
                if union < sum {
                    assert!(w.notes()[0].contains("overlap"), "{name}");
                }
            }
        }
    }

    fn lonlat_area(ring: &Value) -> Vec<u8> {
        format!(r#"{{"type":"Polygon","coordinates":[{ring}]}}"#).into_bytes()
    }

    /// A 3° × 3° lon/lat rectangle: an event 0.0005° (about 55 m) inside
    /// its southern edge is kept (the straight projected edge used to cut
    /// about 1 km inside the curved parallel), and the projected area
    /// exceeds the ellipsoidal area from pyproj.Geod by the transverse
    /// Mercator's own scale error and nothing more: the area scale is
    /// k² ≈ 1 + x²/R² (x from the central meridian), whose mean over a
    /// rectangle of half-width w is 1 + w²/(3R²) (derived here); w is the
    /// half-width at the middle latitude, R = 6,371 km; tolerance 0.001 %.
    #[test]
    fn test_large_lonlat_rectangle() {
        let r = reference();
        let rect = &r["lonlat"]["rectangle"];
        let area = read_area(&lonlat_area(&rect["ring"]), None).unwrap();
        let p = &rect["inside_south"];
        let csv = format!("lon,lat\n{},{}\n21.5,41.5\n20.2,42.8\n", f(&p[0]), f(&p[1]));
        let ev = read_points(csv.as_bytes(), &ReadOptions::default()).unwrap();
        let s = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap();
        assert!(s.event_rejections.is_empty(), "{:?}", s.event_rejections);
        let want = f(&rect["ellipsoid_area"]);
        let got = s.window.area();
        let w = 1.5_f64.to_radians() * 6_371_000.0 * 41.5_f64.to_radians().cos();
        let excess = w * w / (3.0 * 6_371_000.0_f64.powi(2));
        assert!(
            (got / want - 1.0 - excess).abs() < 1e-5,
            "{got} vs {want}: {:.5} % (expected {:.5} %)",
            (got / want - 1.0) * 100.0,
            excess * 100.0
        );
        assert!(
            !s.warnings.iter().any(|w| w.contains("too large")),
            "{:?}",
            s.warnings
        );
    }

    /// A 24° × 10° lon/lat rectangle: the study warns that it is too large
    /// for one flat map, naming the ellipsoidal area from pyproj.Geod; a
    /// polar cap (latitude 80° to the pole, all longitudes) is refused with
    /// a message saying why (it used to get two thirds of its area).
    #[test]
    fn test_too_large_lonlat_areas() {
        let r = reference();
        let wide = &r["lonlat"]["wide"];
        let area = read_area(&lonlat_area(&wide["ring"]), None).unwrap();
        let ev = read_points(b"lon,lat\n10,55\n12,56\n", &ReadOptions::default()).unwrap();
        let s = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap();
        let want = f(&wide["ellipsoid_area"]) / 1e6;
        let w = s
            .warnings
            .iter()
            .find(|w| w.contains("too large for one flat map"))
            .unwrap_or_else(|| panic!("{:?}", s.warnings));
        assert!(
            w.contains(&format!("against {want:.1} km²")),
            "{w} vs {want}"
        );
        let cap = &r["lonlat"]["polar_cap"];
        let area = read_area(&lonlat_area(&cap["ring"]), None).unwrap();
        let ev = read_points(b"lon,lat\n10,85\n100,86\n-60,84\n", &ReadOptions::default()).unwrap();
        let e = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap_err();
        assert!(e.to_string().contains("one flat map"), "{e}");
        assert!(
            e.to_string().contains("° of longitude from its centre"),
            "{e}"
        );
    }

    /// A saw-tooth outline: base [0, n] at y = 0, n teeth of height 10.
    fn saw_tooth(n: usize) -> Vec<[f64; 2]> {
        let mut r = vec![[0.0, 0.0], [n as f64, 0.0]];
        for k in (0..n).rev() {
            r.push([k as f64 + 1.0, 1.0]);
            r.push([k as f64 + 0.5, 10.0]);
        }
        r.push([0.0, 1.0]);
        r
    }

    /// A valid 20,003-corner saw-tooth loads through the GeoJSON reader and
    /// the study (this used to need memory growing with the square of the
    /// corner count and panicked), with area 5.5 per tooth; events in a
    /// tooth and in a gap are placed right. An outline over the corner
    /// limit is refused with a message, not a panic.
    #[test]
    fn test_many_corner_area_loads() {
        let ring = saw_tooth(10_000);
        let coords: Vec<String> = ring
            .iter()
            .chain(std::iter::once(&ring[0]))
            .map(|p| format!("[{},{}]", p[0], p[1]))
            .collect();
        let text = format!(
            r#"{{"type":"Polygon","coordinates":[[{}]]}}"#,
            coords.join(",")
        );
        assert!(text.len() > 100_000);
        let opts = Some(cloister::input::CoordKind::Planar {
            unit: cloister::input::LengthUnit::Metre,
        });
        let area = read_area(text.as_bytes(), opts).unwrap();
        let ev = read_points(
            b"x,y\n5000.5,9.0\n5000.0,9.0\n2.5,0.5\n",
            &ReadOptions {
                coords: opts,
                ..ReadOptions::default()
            },
        )
        .unwrap();
        let s = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap();
        assert_eq!(s.window.area(), 55_000.0);
        assert_eq!(s.events.len(), 2);
        assert_eq!(s.event_rejections.len(), 1);
        assert_eq!(s.event_rejections[0].row, 2 + 1);
        // Over the limit: a clear error.
        let big = vec![vec![vec![[0.0, 0.0]; MAX_CORNERS + 1]]];
        let e = Window::from_polygons(big, WindowOrigin::File).unwrap_err();
        assert!(e.to_string().contains("at most 5000000"), "{e}");
    }
}
