//! Tests of src/clusters: DBSCAN, against scikit-learn outside the project.
//!
//! The JSON file in `tests/reference/` is written by the committed Python
//! script `tests/reference/dbscan_reference.py` (versions pinned in `tests/reference/requirements.txt`),
//! which says how the invented data were drawn.

mod common;
use common::nums;

/// DBSCAN against sklearn.cluster.DBSCAN (`dbscan_reference.py`).
mod dbscan {
    use super::nums;
    use cloister::clusters::dbscan::dbscan_labels;
    use serde_json::Value;
    use std::collections::HashMap;

    fn reference() -> Value {
        serde_json::from_str(include_str!("reference/dbscan_reference.json")).unwrap()
    }

    /// Same partition, whatever the cluster numbers (noise must match noise).
    fn same_partition(a: &[i32], b: &[i32]) -> bool {
        let mut ab: HashMap<i32, i32> = HashMap::new();
        let mut ba: HashMap<i32, i32> = HashMap::new();
        a.iter().zip(b).all(|(&x, &y)| {
            (x == -1) == (y == -1)
                && *ab.entry(x).or_insert(y) == y
                && *ba.entry(y).or_insert(x) == x
        })
    }

    #[test]
    fn test_labels_identical_to_sklearn() {
        let r = reference();
        let cases = r["cases"].as_array().unwrap();
        assert!(cases.len() >= 8);
        for c in cases {
            let name = c["name"].as_str().unwrap();
            let w = if c["weights"].is_null() {
                None
            } else {
                Some(nums(&c["weights"]))
            };
            let (labels, core) = dbscan_labels(
                &nums(&c["x"]),
                &nums(&c["y"]),
                c["eps"].as_f64().unwrap(),
                c["min_samples"].as_u64().unwrap() as usize,
                w.as_deref(),
            );
            let want: Vec<i32> = c["labels"]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_i64().unwrap() as i32)
                .collect();
            assert!(same_partition(&labels, &want), "{name}: partition differs");
            // scikit-learn's numbering follows the order rule exactly.
            assert_eq!(labels, want, "{name}: numbering differs");
            let want_core: Vec<usize> = c["core"]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_u64().unwrap() as usize)
                .collect();
            let got_core: Vec<usize> = (0..core.len()).filter(|&i| core[i]).collect();
            assert_eq!(got_core, want_core, "{name}: core points differ");
        }
    }

    #[test]
    fn test_partition_check_can_fail() {
        // The helper must reject a merged or split labelling.
        assert!(same_partition(&[0, 0, 1, -1], &[1, 1, 0, -1]));
        assert!(!same_partition(&[0, 0, 1, -1], &[0, 0, 0, -1]));
        assert!(!same_partition(&[0, 1, 1, -1], &[0, 0, 1, -1]));
        assert!(!same_partition(&[0, 0, 1, -1], &[0, 0, 1, 2]));
    }
}
