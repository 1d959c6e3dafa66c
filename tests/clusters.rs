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

/// The suggested reach (Kneedle on log k-distance, docs/methods.md#dbscan)
/// on a pattern with a known answer.
mod knee {
    use cloister::clusters::dbscan::dbscan_labels;
    use cloister::clusters::k_distance_plot;
    use cloister::clusters::kdist::kth_distances;
    use cloister::rng::rng_from_seed;
    use rand::RngExt;
    use std::collections::HashMap;

    /// Adjusted Rand index (Hubert & Arabie 1985, "Comparing partitions",
    /// Journal of Classification 2:193–218, eq. 5), each label a class
    /// (noise −1 is one class).
    fn adjusted_rand(a: &[i32], b: &[i32]) -> f64 {
        let c2 = |v: f64| v * (v - 1.0) / 2.0;
        let mut nij: HashMap<(i32, i32), f64> = HashMap::new();
        let mut ai: HashMap<i32, f64> = HashMap::new();
        let mut bj: HashMap<i32, f64> = HashMap::new();
        for (&x, &y) in a.iter().zip(b) {
            *nij.entry((x, y)).or_default() += 1.0;
            *ai.entry(x).or_default() += 1.0;
            *bj.entry(y).or_default() += 1.0;
        }
        let sij: f64 = nij.values().map(|&v| c2(v)).sum();
        let sa: f64 = ai.values().map(|&v| c2(v)).sum();
        let sb: f64 = bj.values().map(|&v| c2(v)).sum();
        let expected = sa * sb / c2(a.len() as f64);
        (sij - expected) / ((sa + sb) / 2.0 - expected)
    }

    #[test]
    fn test_adjusted_rand_worked_values() {
        // Identical partitions (relabelled) give 1; sklearn.metrics.
        // adjusted_rand_score([0,0,1,1],[0,0,1,2]) = 0.5714285714285715.
        assert_eq!(adjusted_rand(&[0, 0, 1, 1], &[5, 5, 3, 3]), 1.0);
        assert!((adjusted_rand(&[0, 0, 1, 1], &[0, 0, 1, 2]) - 0.5714285714285715).abs() < 1e-12);
    }

    /// Three tight Gaussian clusters (σ = 20 m, 150 events each) in 300
    /// uniform noise events over a 3 km square (invented, seeded).
    fn three_clusters() -> (Vec<f64>, Vec<f64>, Vec<i32>) {
        let mut rng = rng_from_seed(0x6b6e_6565);
        let (mut x, mut y, mut t) = (Vec::new(), Vec::new(), Vec::new());
        let centres = [(700.0, 800.0), (2200.0, 1200.0), (1400.0, 2400.0)];
        for (c, &(cx, cy)) in centres.iter().enumerate() {
            for _ in 0..150 {
                // Box–Muller.
                let (u1, u2) = (1.0 - rng.random::<f64>(), rng.random::<f64>());
                let r = 20.0 * (-2.0 * u1.ln()).sqrt();
                let a = 2.0 * std::f64::consts::PI * u2;
                x.push(cx + r * a.cos());
                y.push(cy + r * a.sin());
                t.push(c as i32);
            }
        }
        for _ in 0..300 {
            x.push(3000.0 * rng.random::<f64>());
            y.push(3000.0 * rng.random::<f64>());
            t.push(-1);
        }
        (x, y, t)
    }

    #[test]
    fn test_knee_recovers_three_gaussian_clusters() {
        let (x, y, truth) = three_clusters();
        let ms = 5;
        let kd = k_distance_plot(&x, &y, ms).unwrap();
        let eps = kd.knee_eps_m.unwrap();
        assert_eq!(kd.sorted_desc_m[kd.knee_index.unwrap()], eps);
        // Noise's typical k-distance: the median over the noise events.
        let k = kth_distances(&x, &y, ms).unwrap();
        let mut noise: Vec<f64> = (450..750).map(|i| k[i]).collect();
        noise.sort_by(f64::total_cmp);
        let noise_median = noise[150];
        assert!(
            eps >= 2.0 * 20.0 && eps <= noise_median,
            "eps {eps} not between 2σ and the noise median {noise_median}"
        );
        let (labels, _) = dbscan_labels(&x, &y, eps, ms, None);
        // Each planted cluster is found whole: at least 145 of its 150
        // events share one DBSCAN cluster, and the three are distinct.
        let mut found = Vec::new();
        for c in 0..3 {
            let mut count: HashMap<i32, usize> = HashMap::new();
            for &l in &labels[c * 150..(c + 1) * 150] {
                *count.entry(l).or_default() += 1;
            }
            let (&l, &m) = count.iter().max_by_key(|e| *e.1).unwrap();
            assert!(
                l >= 0 && m >= 145,
                "planted cluster {c}: {m} in cluster {l}"
            );
            found.push(l);
        }
        found.sort();
        found.dedup();
        assert_eq!(found.len(), 3, "two planted clusters merged at eps {eps}");
        // Stated bound: ARI with the truth (noise one class) above 0.7; some
        // noise events form small clusters of their own at this reach.
        let ari = adjusted_rand(&labels, &truth);
        eprintln!("three clusters: eps {eps:.1} m, noise median {noise_median:.1} m, ARI {ari:.3}");
        assert!(ari > 0.7, "ARI {ari} at eps {eps}");
    }
}
