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
