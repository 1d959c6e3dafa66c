//! Helpers shared by the integration tests: reading the reference JSON
//! (`tests/reference/*.json`), the fixture windows and Monte Carlo means.
//! Each test file uses what it needs.
#![allow(dead_code)]

use cloister::window::Window;
use serde_json::Value;

/// Fixture WH (docs/methods.md#fixtures): [0,10]² minus [4,6]².
pub fn wh() -> Window {
    Window::rectangle_with_hole([0.0, 0.0, 10.0, 10.0], [4.0, 4.0, 6.0, 6.0]).unwrap()
}

/// The clustered pattern of the power checks: a Thomas process in the unit
/// square with 10 parents, 8 offspring each on average, σ = 0.02, seed
/// `seed`.
pub fn thomas_for_power(seed: u64) -> cloister::study::Pattern {
    use cloister::distance::{simulate_thomas, ThomasParams};
    let w = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
    let params = ThomasParams {
        kappa: 10.0,
        mu: 8.0,
        sigma: 0.02,
    };
    simulate_thomas(&w, params, seed).unwrap()
}

/// The mean of Monte Carlo values and its standard error (sample standard
/// deviation over √m).
pub fn mean_se(v: &[f64]) -> (f64, f64) {
    let m = v.len() as f64;
    let mean = v.iter().sum::<f64>() / m;
    let var = v.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / (m - 1.0);
    (mean, (var / m).sqrt())
}

/// A number of the reference JSON.
pub fn f(v: &Value) -> f64 {
    v.as_f64().expect("number in reference JSON")
}

/// A list of numbers of the reference JSON.
pub fn nums(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("list in reference JSON")
        .iter()
        .map(|x| x.as_f64().expect("number in reference JSON"))
        .collect()
}

/// The rings of one polygon in the reference JSON: `[[[x, y], ...], ...]`
/// (outer ring first, then holes).
pub fn rings(v: &Value) -> Vec<Vec<[f64; 2]>> {
    v.as_array()
        .expect("list of rings in reference JSON")
        .iter()
        .map(|ring| {
            ring.as_array()
                .expect("ring in reference JSON")
                .iter()
                .map(|c| [f(&c[0]), f(&c[1])])
                .collect()
        })
        .collect()
}

/// Several polygons in the reference JSON, each as in [`rings`].
pub fn polygons(v: &Value) -> Vec<Vec<Vec<[f64; 2]>>> {
    v.as_array()
        .expect("list of polygons in reference JSON")
        .iter()
        .map(rings)
        .collect()
}
