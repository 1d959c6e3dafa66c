//! Data for the k-distance plot used to choose DBSCAN's `eps`
//! (Ester et al. 1996, §4.2: the sorted k-dist graph).
//!
//! For each event, `kdist` is the distance to its `min_samples`-th nearest
//! event **counting itself** (so the `(min_samples − 1)`-th nearest other
//! event): exactly the smallest `eps` at which that event would be a core
//! point under [`mod@super::dbscan`]'s rule. The plot shows these distances sorted
//! from largest to smallest; a bend ("knee") separates noise (left) from
//! clustered events (right).
//!
//! The suggested `eps` is the point of the sorted curve farthest from the
//! straight line joining its ends (a common heuristic \[CP\], no single source);
//! treat it as a starting value, not an answer.

use crate::error::AnalysisError;
use crate::index::GridIndex;
use serde::Serialize;

/// The one parameter of the k-distance plot (`kDistance(min_samples)`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, serde::Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct KDistanceParams {
    /// DBSCAN's `min_samples`: the distance to the `(min_samples − 1)`-th
    /// nearest other event is plotted.
    pub min_samples: usize,
}

impl Default for KDistanceParams {
    fn default() -> Self {
        KDistanceParams { min_samples: 5 }
    }
}

impl crate::params::Params for KDistanceParams {
    const NAME: &'static str = "kDistance";
    fn fields() -> Vec<crate::params::Field> {
        vec![crate::params::Field::integer(
            "min_samples",
            "DBSCAN's min_samples: distances to the (min_samples − 1)-th nearest other event",
        )
        .range(2.0, super::dbscan::MAX_MIN_SAMPLES as f64)]
    }
}

/// The sorted k-distances and a suggested `eps`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KDistance {
    pub min_samples: usize,
    /// Distances in metres, largest first (one per event).
    pub sorted_desc_m: Vec<f64>,
    /// Suggested eps at the knee, metres (`None` with fewer than 3 events).
    pub knee_eps_m: Option<f64>,
    /// Position of the knee in `sorted_desc_m`.
    pub knee_index: Option<usize>,
}

/// Distance from each event to its `k`-th nearest event counting itself
/// (`k ≥ 1`; `k = 1` gives zeros). Input order. Errors when `k > n`.
pub fn kth_distances(x: &[f64], y: &[f64], k: usize) -> Result<Vec<f64>, AnalysisError> {
    let n = x.len();
    if k == 0 || k > n {
        return Err(AnalysisError::TooFewPoints {
            needed: k.max(1),
            found: n,
        });
    }
    // Counting the event itself (distance 0), the k-th nearest is the
    // (k − 1)-th nearest other event.
    Ok(GridIndex::new(x, y)
        .kth_nn_distances(k - 1)
        .unwrap_or_else(|| vec![0.0; n]))
}

/// k-distance plot data for `min_samples`.
pub fn k_distance_plot(
    x: &[f64],
    y: &[f64],
    min_samples: usize,
) -> Result<KDistance, AnalysisError> {
    let mut d = kth_distances(x, y, min_samples)?;
    d.sort_by(|a, b| b.total_cmp(a));
    let n = d.len();
    let (knee_eps_m, knee_index) = if n >= 3 && d[0] > d[n - 1] {
        // Farthest point from the chord, in coordinates scaled to [0,1]².
        let (y0, y1) = (d[0], d[n - 1]);
        let mut best = (0usize, -1.0);
        for (i, &v) in d.iter().enumerate() {
            let t = i as f64 / (n - 1) as f64;
            let u = (v - y1) / (y0 - y1);
            // Chord from (0,1) to (1,0): distance ∝ |t + u − 1|.
            let dist = (1.0 - t - u).abs();
            if dist > best.1 {
                best = (i, dist);
            }
        }
        (Some(d[best.0]), Some(best.0))
    } else {
        (None, None)
    };
    Ok(KDistance {
        min_samples,
        sorted_desc_m: d,
        knee_eps_m,
        knee_index,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::RngExt;

    #[test]
    fn matches_brute_force() {
        // Oracle: sort all distances from each event (O(n²)).
        let mut rng = crate::rng::rng_from_seed(5);
        let n = 700;
        let x: Vec<f64> = (0..n)
            .map(|_| 1000.0 * rng.random::<f64>().powi(2))
            .collect();
        let y: Vec<f64> = (0..n).map(|_| 500.0 * rng.random::<f64>()).collect();
        for k in [1, 2, 5, 17] {
            let got = kth_distances(&x, &y, k).unwrap();
            for i in 0..n {
                let mut d: Vec<f64> = (0..n)
                    .map(|j| ((x[j] - x[i]).powi(2) + (y[j] - y[i]).powi(2)).sqrt())
                    .collect();
                d.sort_by(|a, b| a.total_cmp(b));
                assert_eq!(got[i], d[k - 1], "k={k} i={i}");
            }
        }
    }

    #[test]
    fn kdist_is_the_eps_that_makes_a_point_core() {
        // With eps = kdist_i the point is core (d ≤ eps), and just below not.
        let x = [0.0, 1.0, 3.0, 7.0, 7.5];
        let y = [0.0; 5];
        let d = kth_distances(&x, &y, 3).unwrap();
        assert_eq!(d, vec![3.0, 2.0, 3.0, 4.0, 4.5]);
        let (_, core) = super::super::dbscan::dbscan_labels(&x, &y, 3.0, 3, None);
        assert_eq!(core, vec![true, true, true, false, false]);
        assert!(kth_distances(&x, &y, 6).is_err());
    }
}
