//! Tests of src/index.rs: the neighbour index, against scipy.spatial.cKDTree outside the project.
//!
//! The JSON file in `tests/reference/` is written by the committed Python
//! script `tests/reference/index_reference.py`, which says what it computes and with which seed.

mod common;
use common::f;

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
