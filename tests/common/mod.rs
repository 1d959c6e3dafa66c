//! Helpers shared by the integration tests that read reference JSON
//! (`tests/reference/*.json`). Each test file uses what it needs.
#![allow(dead_code)]

use serde_json::Value;

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
