//! Tests of src/projection.rs: transverse Mercator, against pyproj (PROJ) outside the project.
//!
//! The JSON file in `tests/reference/` is written by the committed Python
//! script `tests/reference/projection_reference.py`, which says what it computes and with which seed.

mod common;
use common::f;

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
