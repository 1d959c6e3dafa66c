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
//! The suggested `eps` is the knee found by the Kneedle algorithm
//! (Satopää, Albrecht, Irwin & Raghavan 2011, "Finding a 'Kneedle' in a
//! Haystack: Detecting Knee Points in System Behavior", 31st ICDCS
//! Workshops, 166–171) applied to the logarithm of the k-distances; see
//! [`kneedle_log`] and docs/methods.md#dbscan. Treat it as a starting value,
//! not an answer.

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
    let knee_index = kneedle_log(&d);
    let knee_eps_m = knee_index.map(|i| d[i]);
    Ok(KDistance {
        min_samples,
        sorted_desc_m: d,
        knee_eps_m,
        knee_index,
    })
}

/// Knee of a k-distance curve sorted largest first, as a position in it:
/// the Kneedle algorithm (Satopää et al. 2011) on log k-distance.
///
/// * Only positive distances take part (the logarithm of 0 is undefined;
///   events with `min_samples − 1` or more others at their own address sit
///   at the flat end of the curve anyway).
/// * The curve is read in ascending order: x = rank, y = ln(k-distance),
///   both normalised to [0, 1] (Kneedle's step 2, no smoothing: the sorted
///   curve is already monotone).
/// * On the log scale the ascending curve is *concave and increasing*: it
///   climbs steeply through the clustered events (their k-distances span
///   orders of magnitude) and flattens at the background's spacing, with a
///   short rise at the very end for isolated events. For that shape the
///   paper's difference curve is `y_n − x_n` (step 3), and the knee is its
///   maximum (step 4; ties to the smaller distance): the rank where the
///   curve reaches the background level.
///
/// The logarithm is our choice, not the paper's (the paper leaves the
/// scale to the user). On a linear scale the normalisation is set by the
/// few largest distances, the curve looks convex, and the knee lands at the
/// start of the isolated-event tail, above the background's typical
/// k-distance, so DBSCAN at that reach merges almost everything. `None`
/// with fewer than 3 positive distances or when they are all equal.
pub fn kneedle_log(sorted_desc: &[f64]) -> Option<usize> {
    let m = sorted_desc.iter().take_while(|&&v| v > 0.0).count();
    if m < 3 || !sorted_desc[0].is_finite() {
        return None;
    }
    let (lo, hi) = (sorted_desc[m - 1].ln(), sorted_desc[0].ln());
    if hi <= lo {
        return None;
    }
    // Ascending index a ↔ position m − 1 − a in the descending curve.
    let mut best: Option<(usize, f64)> = None;
    for a in 0..m {
        let i = m - 1 - a;
        let xn = a as f64 / (m - 1) as f64;
        let yn = (sorted_desc[i].ln() - lo) / (hi - lo);
        let diff = yn - xn;
        if best.is_none_or(|(_, b)| diff > b) {
            best = Some((i, diff));
        }
    }
    best.map(|(i, _)| i)
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
