//! Checks of the core against reference libraries outside the project.
//!
//! Each JSON file in `tests/reference/` is written by the Python script of the
//! same name (pyproj, shapely, numpy, scipy); the scripts are committed next to
//! their output and say what they compute and with which seed.

use serde_json::Value;

fn f(v: &Value) -> f64 {
    v.as_f64().expect("number in reference JSON")
}

/// Transverse Mercator against PROJ (pyproj), see `projection_reference.py`.
mod projection {
    use super::f;
    use cloister::projection::Projection;
    use serde_json::Value;

    fn reference() -> Value {
        serde_json::from_str(include_str!("reference/projection_reference.json")).unwrap()
    }

    #[test]
    fn test_forward_matches_pyproj_within_1mm() {
        let r = reference();
        let pts = r["points"].as_array().unwrap();
        assert!(pts.len() >= 100);
        let mut worst: f64 = 0.0;
        for p in pts {
            let proj = Projection::TransverseMercator {
                lon0: f(&p["lon0"]),
                lat0: f(&p["lat0"]),
            };
            let (e, n) = proj.forward(f(&p["lon"]), f(&p["lat"]));
            let d = (e - f(&p["e"])).hypot(n - f(&p["n"]));
            worst = worst.max(d);
            assert!(d < 1e-3, "point {p}: got ({e}, {n}), off by {d} m");
        }
        eprintln!("largest forward difference from pyproj: {worst:e} m");
    }

    #[test]
    fn test_inverse_round_trip() {
        let r = reference();
        for p in r["points"].as_array().unwrap() {
            let proj = Projection::TransverseMercator {
                lon0: f(&p["lon0"]),
                lat0: f(&p["lat0"]),
            };
            // Inverse of PROJ's own easting/northing must give the input back.
            let (lon, lat) = proj.inverse(f(&p["e"]), f(&p["n"]));
            let dlon = (lon - f(&p["lon"]) + 540.0) % 360.0 - 180.0;
            assert!(dlon.abs() < 1e-9, "lon {lon} vs {}", p["lon"]);
            assert!(
                (lat - f(&p["lat"])).abs() < 1e-9,
                "lat {lat} vs {}",
                p["lat"]
            );
            // And forward then inverse.
            let (e, n) = proj.forward(f(&p["lon"]), f(&p["lat"]));
            let (lon2, lat2) = proj.inverse(e, n);
            let dlon2 = (lon2 - f(&p["lon"]) + 540.0) % 360.0 - 180.0;
            assert!(dlon2.abs() < 1e-9 && (lat2 - f(&p["lat"])).abs() < 1e-9);
        }
    }

    #[test]
    fn test_scale_factor_matches_pyproj() {
        let r = reference();
        for p in r["points"].as_array().unwrap() {
            let proj = Projection::TransverseMercator {
                lon0: f(&p["lon0"]),
                lat0: f(&p["lat0"]),
            };
            let k = proj.scale_factor(f(&p["lon"]), f(&p["lat"]));
            assert!((k - f(&p["k"])).abs() < 1e-9, "k {k} vs {}", p["k"]);
        }
    }

    #[test]
    fn test_planar_distance_error_within_reported_bound() {
        let r = reference();
        for s in r["distance_scales"].as_array().unwrap() {
            let bound = f(&s["max_abs_error_m"]);
            for q in s["pairs"].as_array().unwrap() {
                let proj = Projection::TransverseMercator {
                    lon0: f(&q["lon0"]),
                    lat0: f(&q["lat0"]),
                };
                let (e1, n1) = proj.forward(f(&q["lon1"]), f(&q["lat1"]));
                let (e2, n2) = proj.forward(f(&q["lon2"]), f(&q["lat2"]));
                let d = (e2 - e1).hypot(n2 - n1);
                // Same planar distance as PROJ (to 2 mm: two points, 1 mm each) ...
                assert!(
                    (d - f(&q["planar_m"])).abs() < 2e-3,
                    "{d} vs {}",
                    q["planar_m"]
                );
                // ... so within the reported error of the geodesic, plus 2 mm slack.
                assert!((d - f(&q["geodesic_m"])).abs() <= bound + 2e-3);
            }
        }
    }
}

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

/// Grid index against scipy's cKDTree, see `index_reference.py`.
mod index {
    use super::f;
    use cloister::index::GridIndex;
    use serde_json::Value;

    fn vec(v: &Value) -> Vec<f64> {
        v.as_array().unwrap().iter().map(f).collect()
    }

    #[test]
    fn test_nn_distances_match_ckdtree() {
        let r: Value =
            serde_json::from_str(include_str!("reference/index_reference.json")).unwrap();
        let (x, y) = (vec(&r["x"]), vec(&r["y"]));
        let g = GridIndex::new(&x, &y);
        for (k, key) in [(1, "nn1"), (2, "nn2"), (3, "nn3")] {
            let want = vec(&r[key]);
            let got = g.kth_nn_distances(k).unwrap();
            assert_eq!(got.len(), want.len());
            for i in 0..got.len() {
                assert!(
                    (got[i] - want[i]).abs() <= 1e-9 * want[i].max(1.0),
                    "{key}[{i}]"
                );
            }
            if k == 1 {
                assert!(got.iter().filter(|&&d| d == 0.0).count() >= 100);
            }
        }
        for (rs, count) in r["pairs_within"].as_object().unwrap() {
            let rad: f64 = rs.parse().unwrap();
            let mut n = 0u64;
            g.for_each_pair_within(rad, |_, _, _| n += 1);
            assert_eq!(n, count.as_u64().unwrap(), "pairs within {rad}");
        }
    }
}

/// Summary statistics against numpy / scipy, see `summary_reference.py`.
mod summary {
    use super::f;
    use cloister::input::LengthUnit;
    use cloister::projection::Projection;
    use cloister::study::{Coincidence, Pattern, Study};
    use cloister::summary::summarise;
    use cloister::window::Window;
    use serde_json::Value;

    fn close(got: f64, want: f64, what: &str) {
        assert!(
            (got - want).abs() <= 1e-9 * want.abs().max(1.0),
            "{what}: {got} vs {want}"
        );
    }

    #[test]
    fn test_summary_matches_numpy() {
        let r: Value =
            serde_json::from_str(include_str!("reference/summary_reference.json")).unwrap();
        let x: Vec<f64> = r["x"].as_array().unwrap().iter().map(f).collect();
        let y: Vec<f64> = r["y"].as_array().unwrap().iter().map(f).collect();
        let study = Study {
            projection: Projection::Planar {
                unit: LengthUnit::Metre,
            },
            window: Window::rectangle(40_000.0, -30_000.0, 60_000.0, -10_000.0).unwrap(),
            events: Pattern::from_xy(x, y).unwrap(),
            controls: None,
            event_rejections: vec![],
            events_rows_read: 503,
            control_rejections: vec![],
            controls_rows_read: 0,
            coincident: Coincidence::default(),
            warnings: vec![],
        };
        let s = summarise(&study);
        assert_eq!(s.n_events, 503);
        close(s.mean_centre.x_m, f(&r["mean_x"]), "mean x");
        close(s.mean_centre.y_m, f(&r["mean_y"]), "mean y");
        close(
            s.standard_distance_m,
            f(&r["standard_distance"]),
            "standard distance",
        );
        let e = s.ellipse.unwrap();
        close(e.semi_major_m, f(&r["semi_major"]), "semi-major");
        close(e.semi_minor_m, f(&r["semi_minor"]), "semi-minor");
        close(e.major_axis_angle_deg, f(&r["angle_deg"]), "angle");
        let nn = s.nearest_neighbour_m.unwrap();
        close(nn.min, f(&r["nn_min"]), "nn min");
        close(nn.median, f(&r["nn_median"]), "nn median");
        close(nn.mean, f(&r["nn_mean"]), "nn mean");
        close(nn.max, f(&r["nn_max"]), "nn max");
        close(s.window_area_km2, 400.0, "area");
    }
}
