//! The Clark–Evans aggregation index R.
//!
//! # Method
//! Clark & Evans (1954), Ecology 35:445–453: r̄_A = mean nearest-neighbour
//! distance; under CSR r̄_E = 1/(2√λ) with λ = n/|W|; R = r̄_A/r̄_E;
//! SE = 0.26136/√(nλ), where 0.26136 = √((4 − π)/(4π)); z = (r̄_A − r̄_E)/SE
//! with normal p-values. R < 1: clustered; R > 1: regular.
//!
//! **Donnelly (1978)** edge-corrected mean and variance for a window of
//! area A and perimeter P (holes included) [constants from memory,
//! docs/methods.md#clark-evans; checked there by simulation in the unit square]:
//! E[r̄] = 0.5·√(A/n) + (0.0514 + 0.041/√n)·P/n,
//! Var[r̄] = 0.0703·A/n² + 0.037·P·√(A/n⁵).
//! Donnelly simulated rectangles; for other polygons it is an extrapolation
//! (a warning says so).
//!
//! **Monte Carlo p-value** in the actual window: m seeded binomial CSR
//! patterns with the same n give mean NN distances T_j (no edge correction,
//! like the observed one, so edge effects cancel). Clustered side:
//! (1 + #{T_j ≤ T_obs})/(m + 1); regular side: (1 + #{T_j ≥ T_obs})/(m + 1);
//! two-sided = min(1, 2·min of the two) [our definition, the usual doubling
//! of the smaller one-sided p].

use super::csr::stream_rng;
use super::functions::checked_region;
use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::study::Pattern;
use crate::window::Window;
use serde::{Deserialize, Serialize};
use statrs::distribution::{ContinuousCDF, Normal};

/// √((4 − π)/(4π)) to 5 decimals, as in Clark & Evans (1954).
pub const CLARK_EVANS_SE: f64 = 0.26136;

/// Parameters of the Clark–Evans test.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct ClarkEvansParams {
    /// Simulations for the Monte Carlo p-value (0 to 9999; default 999).
    pub n_sim: usize,
    pub seed: u64,
}

impl Default for ClarkEvansParams {
    fn default() -> Self {
        ClarkEvansParams {
            n_sim: 999,
            seed: 1,
        }
    }
}

impl crate::params::Params for ClarkEvansParams {
    const NAME: &'static str = "clarkEvans";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::Field;
        vec![
            Field::integer(
                "n_sim",
                "simulations for the Monte Carlo p-value (0 = none)",
            )
            .range(0.0, 9999.0),
            Field::seed("seed of the simulations"),
        ]
    }
}

/// R, z and normal p-values against one expectation.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ClarkEvansStats {
    pub expected_m: f64,
    pub se_m: f64,
    pub r: f64,
    pub z: f64,
    pub p_two_sided: f64,
    /// P(Z ≤ z): small when clustered.
    pub p_clustered: f64,
    /// P(Z ≥ z): small when regular.
    pub p_regular: f64,
}

/// Result of the Clark–Evans test.
#[derive(Debug, Clone, Serialize)]
pub struct ClarkEvansResult {
    pub n: usize,
    pub area_m2: f64,
    pub perimeter_m: f64,
    pub mean_nn_m: f64,
    /// Clark & Evans (1954), no edge correction.
    pub naive: ClarkEvansStats,
    /// Donnelly (1978) edge-corrected expectation and variance.
    pub donnelly: ClarkEvansStats,
    pub p_mc_two_sided: Option<f64>,
    pub p_mc_clustered: Option<f64>,
    pub p_mc_regular: Option<f64>,
    pub n_sim: usize,
    pub seed: u64,
    /// Events whose nearest neighbour is at distance 0.
    pub coincident_events: usize,
    pub warnings: Vec<String>,
}

fn stats(mean: f64, expected: f64, se: f64) -> ClarkEvansStats {
    let z = (mean - expected) / se;
    let nd = Normal::standard();
    let p_clustered = nd.cdf(z);
    let p_regular = nd.sf(z);
    ClarkEvansStats {
        expected_m: expected,
        se_m: se,
        r: mean / expected,
        z,
        p_two_sided: (2.0 * p_clustered.min(p_regular)).min(1.0),
        p_clustered,
        p_regular,
    }
}

/// Clark–Evans statistics from a mean NN distance, n, area and perimeter:
/// (naive, Donnelly).
///
/// # Examples
/// docs/methods.md#clark-evans: n = 100, A = 1, P = 4, r̄_A = 0.04 → R = 0.8, z = −3.8261.
/// ```
/// # use cloister::distance::clark_evans_from_mean;
/// let (naive, donnelly) = clark_evans_from_mean(0.04, 100, 1.0, 4.0);
/// assert!((naive.r - 0.8).abs() < 1e-12);
/// assert!((naive.z + 3.8261).abs() < 1e-4);
/// assert!((donnelly.expected_m - 0.052220).abs() < 1e-6);
/// ```
pub fn clark_evans_from_mean(
    mean_nn: f64,
    n: usize,
    area: f64,
    perimeter: f64,
) -> (ClarkEvansStats, ClarkEvansStats) {
    let nf = n as f64;
    let lambda = nf / area;
    let naive = stats(
        mean_nn,
        0.5 / lambda.sqrt(),
        CLARK_EVANS_SE / (nf * lambda).sqrt(),
    );
    let e_d = 0.5 * (area / nf).sqrt() + (0.0514 + 0.041 / nf.sqrt()) * perimeter / nf;
    let var_d = 0.0703 * area / (nf * nf) + 0.037 * perimeter * (area / nf.powi(5)).sqrt();
    let donnelly = stats(mean_nn, e_d, var_d.sqrt());
    (naive, donnelly)
}

/// Nearest-neighbour distance of every event, in input order (infinite
/// when there is no other event).
fn nn_distances(x: &[f64], y: &[f64]) -> Vec<f64> {
    GridIndex::new(x, y)
        .nn_distances()
        .unwrap_or_else(|| vec![f64::INFINITY; x.len()])
}

/// Clark–Evans test for a pattern in its study area (see module docs).
pub fn clark_evans(
    pattern: &Pattern,
    window: &Window,
    params: &ClarkEvansParams,
) -> Result<ClarkEvansResult, AnalysisError> {
    let region = checked_region(pattern, window)?;
    crate::params::Params::validate(params)?;
    let (x, y) = (pattern.x(), pattern.y());
    let n = x.len();
    let nn = nn_distances(x, y);
    let mean = nn.iter().sum::<f64>() / n as f64;
    let coincident = nn.iter().filter(|d| **d == 0.0).count();
    let (naive, donnelly) = clark_evans_from_mean(mean, n, region.area(), region.perimeter());
    let mut warnings = Vec::new();
    if coincident > 0 {
        warnings.push(format!("{coincident} events share their location with another event (distance 0), which pulls R down"));
    }
    if region.axis_rectangle().is_none() {
        warnings.push("Donnelly's correction was derived for rectangles; for this study area it is an approximation".into());
    }
    let (mut pc, mut pr, mut p2) = (None, None, None);
    if params.n_sim > 0 {
        let (mut le, mut ge) = (0usize, 0usize);
        for j in 0..params.n_sim {
            crate::progress::report(j, params.n_sim);
            let mut rng = stream_rng(params.seed, j as u64);
            let (sx, sy) = region.sample_uniform(n, &mut rng);
            let t = nn_distances(&sx, &sy).iter().sum::<f64>() / n as f64;
            if t <= mean {
                le += 1;
            }
            if t >= mean {
                ge += 1;
            }
        }
        let m1 = params.n_sim as f64 + 1.0;
        let c = (1.0 + le as f64) / m1;
        let r = (1.0 + ge as f64) / m1;
        pc = Some(c);
        pr = Some(r);
        p2 = Some((2.0 * c.min(r)).min(1.0));
    }
    Ok(ClarkEvansResult {
        n,
        area_m2: region.area(),
        perimeter_m: region.perimeter(),
        mean_nn_m: mean,
        naive,
        donnelly,
        p_mc_two_sided: p2,
        p_mc_clustered: pc,
        p_mc_regular: pr,
        n_sim: params.n_sim,
        seed: params.seed,
        coincident_events: coincident,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// 0.26136 = √((4 − π)/(4π)) = 0.2613616 (docs/methods.md#clark-evans) and the CSR mean
    /// 1/(2√λ) has constant 0.5.
    #[test]
    fn test_constants() {
        let exact = ((4.0 - std::f64::consts::PI) / (4.0 * std::f64::consts::PI)).sqrt();
        assert!((exact - 0.2613616).abs() < 1e-7);
        assert!((CLARK_EVANS_SE - exact).abs() < 5e-6);
        let (naive, _) = clark_evans_from_mean(0.05, 100, 1.0, 4.0);
        assert!((naive.expected_m - 0.5 / 100f64.sqrt()).abs() < 1e-15);
    }

    /// docs/methods.md#clark-evans check values: n = 100, A = 1, P = 4, r̄_A = 0.04.
    #[test]
    fn test_check_values() {
        let (naive, don) = clark_evans_from_mean(0.04, 100, 1.0, 4.0);
        assert!((naive.expected_m - 0.05).abs() < 1e-15);
        assert!((naive.se_m - 0.0026136).abs() < 1e-10);
        assert!((naive.r - 0.8).abs() < 1e-12);
        assert!((naive.z + 3.8261).abs() < 5e-5);
        assert!((naive.p_two_sided - 1.3e-4).abs() < 5e-6);
        assert!((don.expected_m - 0.052220).abs() < 5e-7);
        assert!((don.se_m - 0.0029172).abs() < 5e-8);
        assert!((don.r - 0.76599).abs() < 5e-6);
        assert!((don.z + 4.1890).abs() < 5e-5);
    }

    /// F12 (docs/methods.md#fixtures): mean NN = 0.158227, naive R = 1.096229.
    #[test]
    fn test_f12_mean_nn() {
        let (x, y) = crate::distance::functions::tests::f12();
        let nn = nn_distances(&x, &y);
        let mean = nn.iter().sum::<f64>() / 12.0;
        assert!((mean - 0.158227).abs() < 5e-7);
        let (naive, _) = clark_evans_from_mean(mean, 12, 1.0, 4.0);
        assert!((naive.r - 1.096229).abs() < 5e-7);
    }
}
