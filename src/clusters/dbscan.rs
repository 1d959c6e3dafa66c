//! DBSCAN: density-based clusters with noise.
//!
//! Ester, Kriegel, Sander & Xu (1996), "A density-based algorithm for
//! discovering clusters in large spatial databases with noise", Proc. KDD-96,
//! AAAI Press, 226–231; revisited by Schubert et al. (2017), ACM TODS 42(3):19.
//!
//! The labels are those of `sklearn.cluster.DBSCAN` (docs/methods.md#dbscan, checked
//! against scikit-learn 1.9.1 in `tests/reference/dbscan_reference.py`):
//! * the neighbourhood of a point holds every point at distance `d ≤ eps`
//!   (tested as `dx² + dy² ≤ eps²`), **the point itself included**;
//! * a point is **core** when its neighbourhood holds at least `min_samples`
//!   points (or, with weights, when their weights sum to at least
//!   `min_samples`);
//! * points are visited in **input order**; at each unlabelled core point a
//!   new cluster is grown depth-first through core points. A border point
//!   reachable from several clusters keeps the label of the first cluster
//!   grown (the one whose lowest-index core point comes first) and is never
//!   relabelled. Cluster ids therefore run 0, 1, 2 ... in the order of each
//!   cluster's lowest core index; noise is −1;
//! * `min_samples = 1` makes every point core (isolated points become
//!   clusters of one).
//!
//! # Complexity
//! Points are indexed in the shared [`crate::index::GridIndex`] with cells of
//! side `eps`; each neighbourhood query scans a 3 × 3 block of cells.
//! Neighbourhoods are counted in one pass and recomputed for core points
//! during growth, so memory stays O(n) however dense the data. Worst case
//! (everything within eps) O(n²) time.

use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::study::Pattern;
use crate::window::{convex_hull, ring_area};
use serde::{Deserialize, Serialize};

/// Options for [`dbscan`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct DbscanOptions {
    /// Neighbourhood radius in metres (`d ≤ eps_m`). Must be set (> 0); the
    /// k-distance plot ([`super::kdist`]) helps choose it.
    pub eps_m: f64,
    /// Points in a neighbourhood, itself included, for a core point.
    pub min_samples: usize,
    /// Use event weights as sample weights (sum compared to `min_samples`).
    pub use_weights: bool,
}

impl Default for DbscanOptions {
    fn default() -> Self {
        DbscanOptions {
            eps_m: 0.0,
            min_samples: 5,
            use_weights: false,
        }
    }
}

impl crate::params::Params for DbscanOptions {
    const NAME: &'static str = "dbscan";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::{Field, EXTENT_FACTOR};
        vec![
            Field::number(
                "eps_m",
                Some("m"),
                "neighbourhood radius (required; the k-distance plot helps choose it)",
            )
            .scale_length(EXTENT_FACTOR),
            Field::integer(
                "min_samples",
                "events in a neighbourhood, itself included, for a core event",
            )
            .range(1.0, MAX_MIN_SAMPLES as f64),
            Field::boolean("use_weights", "count events by their weight"),
        ]
    }
}

/// Largest `min_samples` accepted by [`dbscan`] and the k-distance plot.
pub const MAX_MIN_SAMPLES: usize = 1000;

/// One row of the cluster table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ClusterRow {
    /// Cluster label (0-based, as in `labels`).
    pub id: i32,
    pub members: usize,
    pub core_members: usize,
    /// Mean of member coordinates, metres.
    pub centre_x: f64,
    pub centre_y: f64,
    /// Area of the members' convex hull, km² (0 for fewer than three
    /// non-collinear members).
    pub hull_area_km2: f64,
    /// Members per km² of hull; `None` when the hull has no area.
    pub density_per_km2: Option<f64>,
    /// The hull as a closed anticlockwise ring, metres.
    pub hull: Vec<[f64; 2]>,
}

/// DBSCAN labels and the cluster table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DbscanResult {
    pub eps_m: f64,
    pub min_samples: usize,
    /// Per event in input order: cluster id, or −1 for noise.
    pub labels: Vec<i32>,
    /// Per event: is it a core point?
    pub core: Vec<bool>,
    pub n_clusters: usize,
    pub noise: usize,
    pub clusters: Vec<ClusterRow>,
}

/// DBSCAN on a pattern (see the module docs).
pub fn dbscan(pattern: &Pattern, o: &DbscanOptions) -> Result<DbscanResult, AnalysisError> {
    let w = if o.use_weights {
        pattern.weight()
    } else {
        None
    };
    dbscan_xy(pattern.x(), pattern.y(), w, o)
}

/// DBSCAN on bare coordinates in metres.
pub fn dbscan_xy(
    x: &[f64],
    y: &[f64],
    weights: Option<&[f64]>,
    o: &DbscanOptions,
) -> Result<DbscanResult, AnalysisError> {
    if !(o.eps_m > 0.0 && o.eps_m.is_finite()) {
        return Err(AnalysisError::BadParameter {
            name: "eps".into(),
            detail: "the neighbourhood radius must be a positive number of metres \
                     (the k-distance plot helps choose it)"
                .into(),
        });
    }
    if o.min_samples == 0 {
        return Err(AnalysisError::BadParameter {
            name: "min_samples".into(),
            detail: "must be 1 or more (it counts the point itself)".into(),
        });
    }
    if x.len() != y.len() || weights.is_some_and(|w| w.len() != x.len()) {
        return Err(AnalysisError::BadParameter {
            name: "events".into(),
            detail: "coordinate and weight lists differ in length".into(),
        });
    }
    let (labels, core) = dbscan_labels(x, y, o.eps_m, o.min_samples, weights);
    let n_clusters = labels.iter().copied().max().map_or(0, |m| (m + 1) as usize);
    let noise = labels.iter().filter(|&&l| l < 0).count();
    let mut members: Vec<Vec<usize>> = vec![Vec::new(); n_clusters];
    for (i, &l) in labels.iter().enumerate() {
        if l >= 0 {
            members[l as usize].push(i);
        }
    }
    let clusters = members
        .iter()
        .enumerate()
        .map(|(id, m)| {
            let k = m.len() as f64;
            let pts: Vec<[f64; 2]> = m.iter().map(|&i| [x[i], y[i]]).collect();
            let hull = convex_hull(&pts);
            let area = ring_area(&hull);
            ClusterRow {
                id: id as i32,
                members: m.len(),
                core_members: m.iter().filter(|&&i| core[i]).count(),
                centre_x: m.iter().map(|&i| x[i]).sum::<f64>() / k,
                centre_y: m.iter().map(|&i| y[i]).sum::<f64>() / k,
                hull_area_km2: area / 1e6,
                density_per_km2: (area > 0.0).then(|| k / (area / 1e6)),
                hull,
            }
        })
        .collect();
    Ok(DbscanResult {
        eps_m: o.eps_m,
        min_samples: o.min_samples,
        labels,
        core,
        n_clusters,
        noise,
        clusters,
    })
}

/// The labelling itself: `(labels, is_core)` with scikit-learn's numbering.
pub fn dbscan_labels(
    x: &[f64],
    y: &[f64],
    eps: f64,
    min_samples: usize,
    weights: Option<&[f64]>,
) -> (Vec<i32>, Vec<bool>) {
    let n = x.len();
    let eps2 = eps * eps;
    let b = GridIndex::with_cell(x, y, eps);
    let neighbours = |i: usize, f: &mut dyn FnMut(usize)| {
        let (xi, yi) = (x[i], y[i]);
        b.for_each_candidate(xi, yi, eps, |j| {
            let dx = x[j] - xi;
            let dy = y[j] - yi;
            if dx * dx + dy * dy <= eps2 {
                f(j);
            }
        });
    };
    let need = min_samples as f64;
    let core: Vec<bool> = (0..n)
        .map(|i| {
            let mut s = 0.0;
            match weights {
                Some(w) => neighbours(i, &mut |j| s += w[j]),
                None => neighbours(i, &mut |_| s += 1.0),
            }
            s >= need
        })
        .collect();
    let mut labels = vec![-1i32; n];
    let mut label = 0i32;
    let mut stack: Vec<usize> = Vec::new();
    for seed in 0..n {
        if labels[seed] != -1 || !core[seed] {
            continue;
        }
        labels[seed] = label;
        stack.push(seed);
        while let Some(i) = stack.pop() {
            // Only core points reach this point (non-core ones are labelled
            // but not pushed).
            neighbours(i, &mut |j| {
                if labels[j] == -1 {
                    labels[j] = label;
                    if core[j] {
                        stack.push(j);
                    }
                }
            });
        }
        label += 1;
    }
    (labels, core)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn run(pts: &[(f64, f64)], eps: f64, ms: usize) -> (Vec<i32>, Vec<bool>) {
        let x: Vec<f64> = pts.iter().map(|p| p.0).collect();
        let y: Vec<f64> = pts.iter().map(|p| p.1).collect();
        dbscan_labels(&x, &y, eps, ms, None)
    }

    const A: [(f64, f64); 4] = [(-0.5, 0.0), (-0.5, 0.5), (0.0, 0.5), (0.0, 0.0)];
    const B: [(f64, f64); 4] = [(1.8, 0.0), (1.8, 0.5), (2.3, 0.0), (2.3, 0.5)];
    const P: (f64, f64) = (0.9, 0.0);
    const NOISE: (f64, f64) = (5.0, 5.0);

    #[test]
    fn db10_border_point_goes_to_first_cluster_grown() {
        // docs/methods.md#dbscan fixture DB10 [C: sklearn 1.9.1], eps = 1, min_samples = 4.
        let mut pts: Vec<(f64, f64)> = A.to_vec();
        pts.push(P);
        pts.extend(B);
        pts.push(NOISE);
        let (l, c) = run(&pts, 1.0, 4);
        assert_eq!(l, vec![0, 0, 0, 0, 0, 1, 1, 1, 1, -1]);
        let ci: Vec<usize> = (0..10).filter(|&i| c[i]).collect();
        assert_eq!(ci, vec![0, 1, 2, 3, 5, 6, 7, 8]);

        let mut pts: Vec<(f64, f64)> = B.to_vec();
        pts.push(P);
        pts.extend(A);
        pts.push(NOISE);
        assert_eq!(run(&pts, 1.0, 4).0, vec![0, 0, 0, 0, 0, 1, 1, 1, 1, -1]);

        let mut pts = vec![P];
        pts.extend(A);
        pts.extend(B);
        pts.push(NOISE);
        let (l, c) = run(&pts, 1.0, 4);
        assert_eq!(l, vec![0, 0, 0, 0, 0, 1, 1, 1, 1, -1]);
        assert!(!c[0]);
    }

    #[test]
    fn boundary_is_inclusive() {
        // docs/methods.md#dbscan [C]: two points exactly 1 apart.
        let pts = [(0.0, 0.0), (1.0, 0.0)];
        assert_eq!(run(&pts, 1.0, 2).0, vec![0, 0]);
        assert_eq!(run(&pts, 0.999999, 2).0, vec![-1, -1]);
    }

    #[test]
    fn min_samples_one_makes_singletons() {
        // docs/methods.md#dbscan [C]: every point is core.
        let pts = [(0.0, 0.0), (10.0, 0.0), (0.5, 0.0)];
        assert_eq!(run(&pts, 1.0, 1).0, vec![0, 1, 0]);
    }

    #[test]
    fn empty_and_single_point() {
        assert_eq!(run(&[], 1.0, 2).0, Vec::<i32>::new());
        assert_eq!(run(&[(3.0, 4.0)], 1.0, 2).0, vec![-1]);
        assert!(dbscan_xy(&[], &[], None, &DbscanOptions::default()).is_err());
        let o = DbscanOptions {
            eps_m: 1.0,
            ..Default::default()
        };
        let r = dbscan_xy(&[], &[], None, &o).unwrap();
        assert_eq!((r.n_clusters, r.noise), (0, 0));
    }

    #[test]
    fn matches_brute_force_definition() {
        // Oracle: core status from an O(n²) count, labels from union of
        // core components in input order (the definition in the docs).
        let mut rng = crate::rng::rng_from_seed(11);
        use rand::RngExt;
        let n = 600;
        let x: Vec<f64> = (0..n)
            .map(|_| (rng.random::<f64>() * 64.0).floor() / 4.0)
            .collect();
        let y: Vec<f64> = (0..n)
            .map(|_| (rng.random::<f64>() * 64.0).floor() / 4.0)
            .collect();
        let (eps, ms) = (0.75, 4);
        let (l, c) = dbscan_labels(&x, &y, eps, ms, None);
        let near = |i: usize, j: usize| (x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2) <= eps * eps;
        for (i, &ci) in c.iter().enumerate() {
            let cnt = (0..n).filter(|&j| near(i, j)).count();
            assert_eq!(ci, cnt >= ms);
        }
        let mut want = vec![-1; n];
        let mut lab = 0;
        for s in 0..n {
            if want[s] != -1 || !c[s] {
                continue;
            }
            let mut st = vec![s];
            want[s] = lab;
            while let Some(i) = st.pop() {
                for j in 0..n {
                    if near(i, j) && want[j] == -1 {
                        want[j] = lab;
                        if c[j] {
                            st.push(j);
                        }
                    }
                }
            }
            lab += 1;
        }
        assert_eq!(l, want);
    }
}
