//! Tests of src/summary.rs: descriptive summaries, against numpy outside the project.
//!
//! The JSON file in `tests/reference/` is written by the committed Python
//! script `tests/reference/summary_reference.py`, which says what it computes and with which seed.

mod common;
use common::f;

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
