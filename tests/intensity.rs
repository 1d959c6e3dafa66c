//! Tests of src/intensity: kernel intensity, against scikit-learn and scipy outside the project.
//!
//! The JSON file in `tests/reference/` is written by the committed Python
//! script `tests/reference/kde_reference.py` (versions pinned in `tests/reference/requirements.txt`),
//! which says how the invented data were drawn.

mod common;
use common::nums;

/// Kernel intensity against sklearn.neighbors.KernelDensity,
/// scipy.stats.gaussian_kde (isotropic bandwidth) and
/// scipy.stats.multivariate_normal (`kde_reference.py`).
mod kde {
    use super::nums;
    use cloister::intensity::*;
    use cloister::window::Window;
    use serde_json::Value;

    fn reference() -> Value {
        serde_json::from_str(include_str!("reference/kde_reference.json")).unwrap()
    }

    fn surface(r: &Value, edge: EdgeCorrection, evaluation: Evaluation) -> IntensitySurface {
        let w = nums(&r["window"]);
        let region = Window::rectangle(w[0], w[1], w[2], w[3]).unwrap();
        let o = SurfaceOptions {
            bandwidth: BandwidthOptions {
                method: BandwidthMethod::Fixed,
                fixed_m: Some(r["h"].as_f64().unwrap()),
                ..Default::default()
            },
            edge,
            evaluation,
            grid: GridOptions {
                cells_long_side: r["cells_long_side"].as_u64().unwrap() as usize,
                cell_m: None,
            },
            ..Default::default()
        };
        kernel_surface_in(&nums(&r["x"]), &nums(&r["y"]), None, &region, &o).unwrap()
    }

    /// Largest |ours − reference| over cells, as a fraction of the reference peak.
    fn worst(s: &IntensitySurface, want: &[f64]) -> f64 {
        let peak = want.iter().cloned().fold(0.0, f64::max);
        s.grid
            .values
            .iter()
            .zip(want)
            .map(|(a, b)| (a / PER_KM2 - b).abs())
            .fold(0.0, f64::max)
            / peak
    }

    #[test]
    fn test_grid_matches_reference_layout() {
        let r = reference();
        let s = surface(&r, EdgeCorrection::None, Evaluation::Exact);
        assert_eq!(s.grid.nx, r["nx"].as_u64().unwrap() as usize);
        assert_eq!(s.grid.ny, r["ny"].as_u64().unwrap() as usize);
        assert_eq!(s.grid.cell_m, r["cell"].as_f64().unwrap());
        assert_eq!(s.grid.centre(0, 0), (10.0, 10.0));
    }

    #[test]
    fn test_exact_raw_matches_sklearn_and_scipy() {
        // Exact evaluation (Gaussian cut at 8 SD): relative error < 1e-9 of
        // the peak against both libraries.
        let r = reference();
        let s = surface(&r, EdgeCorrection::None, Evaluation::Exact);
        assert!(worst(&s, &nums(&r["sklearn_raw"])) < 1e-9);
        assert!(worst(&s, &nums(&r["scipy_raw"])) < 1e-9);
        assert!(worst(&s, &nums(&r["scipy_gaussian_kde"])) < 1e-9);
    }

    #[test]
    fn test_binned_raw_within_one_percent_of_sklearn() {
        // Linear binning + 4 SD separable convolution, cell = h/3: the
        // approximation stays within 1 % of the peak.
        let r = reference();
        let s = surface(&r, EdgeCorrection::None, Evaluation::Binned);
        let e = worst(&s, &nums(&r["sklearn_raw"]));
        assert!(e < 0.01, "binned error {e}");
    }

    #[test]
    fn test_edge_corrections_match_exact_rectangle_factor() {
        // Our e_h comes from the cell mask; the reference uses the exact
        // rectangle factor (normal CDFs). Within 0.5 % of the peak.
        let r = reference();
        for (edge, key, integral) in [
            (EdgeCorrection::Uniform, "uniform", "integral_uniform"),
            (
                EdgeCorrection::JonesDiggle,
                "jones_diggle",
                "integral_jones_diggle",
            ),
        ] {
            let s = surface(&r, edge, Evaluation::Exact);
            let e = worst(&s, &nums(&r[key]));
            assert!(e < 5e-3, "{key}: {e}");
            let want = r[integral].as_f64().unwrap();
            assert!(
                (s.integral_events - want).abs() / want < 2e-3,
                "{key} integral"
            );
        }
        let s = surface(&r, EdgeCorrection::None, Evaluation::Exact);
        let want = r["integral_raw"].as_f64().unwrap();
        assert!((s.integral_events - want).abs() / want < 1e-9);
    }
}
