//! Complete spatial randomness (CSR) and the point-process models used to
//! check the tests: seeded simulation inside the real study area.
//!
//! Tests of CSR condition on the observed number of events: the null
//! patterns are **binomial** processes (n independent uniform points in the
//! window), which makes the Monte Carlo test exact with no nuisance
//! parameter (Besag & Diggle 1977, Applied Statistics 26:327–333;
//! docs/methods.md#csr). Points are drawn by rejection from the bounding box with an
//! even–odd point-in-polygon test, so holes are excluded.
//!
//! Every simulation `j` of a run gets its own generator, seeded from the run
//! seed and `j` by [`stream_seed`], so results do not depend on how the work
//! is split into batches.

use crate::error::AnalysisError;
use crate::rng::{rng_from_seed, Rng};
use crate::study::Pattern;
use crate::window::Window;
use rand::RngExt;

/// SplitMix64 finaliser (Steele, Lea & Flood 2014, OOPSLA), used to derive
/// well-spread per-simulation seeds.
fn splitmix64(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// Seed of stream `index` of a run with seed `seed`.
pub fn stream_seed(seed: u64, index: u64) -> u64 {
    splitmix64(splitmix64(seed) ^ index.wrapping_mul(0xD1B5_4A32_D192_ED03))
}

/// The generator of stream `index` of a run with seed `seed`.
pub fn stream_rng(seed: u64, index: u64) -> Rng {
    rng_from_seed(stream_seed(seed, index))
}

/// The study area an analysis owns (a copy of the loaded window; every
/// [`Window`] is valid by construction).
pub(crate) fn prepare(window: &Window) -> Result<Window, AnalysisError> {
    Ok(window.clone())
}

/// `n` independent uniform points in the window (binomial CSR), seeded.
///
/// # Examples
/// ```
/// # use cloister::window::Window;
/// # use cloister::distance::simulate_csr;
/// # let w = Window::rectangle(0.0, 0.0, 10.0, 10.0).unwrap();
/// let p = simulate_csr(&w, 50, 7).unwrap();
/// assert_eq!(p.len(), 50);
/// assert_eq!(p, simulate_csr(&w, 50, 7).unwrap()); // same seed, same points
/// ```
pub fn simulate_csr(window: &Window, n: usize, seed: u64) -> Result<Pattern, AnalysisError> {
    let region = prepare(window)?;
    let mut rng = rng_from_seed(seed);
    let (x, y) = region.sample_uniform(n, &mut rng);
    Ok(Pattern::from_xy(x, y).unwrap_or_default())
}

/// A standard normal draw (Box–Muller; one of the pair is discarded).
pub(crate) fn normal(rng: &mut Rng) -> f64 {
    let u1 = 1.0 - rng.random::<f64>(); // (0, 1]
    let u2 = rng.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
}

/// A Poisson draw with mean `mu`: counts unit-rate exponential arrivals
/// before `mu` (exact; O(mu) time, fine for the moderate means used here).
pub(crate) fn poisson(rng: &mut Rng, mu: f64) -> usize {
    let mut t = 0.0;
    let mut k = 0usize;
    loop {
        t += -(1.0 - rng.random::<f64>()).ln();
        if t > mu {
            return k;
        }
        k += 1;
    }
}

/// Parameters of a Thomas cluster process (Thomas 1949, Biometrika
/// 36:18–25): parents Poisson(κ), each with Poisson(μ) offspring displaced
/// by independent N(0, σ²) in each coordinate.
#[derive(Debug, Clone, Copy)]
pub struct ThomasParams {
    /// Parent intensity κ per m².
    pub kappa: f64,
    /// Mean offspring per parent μ.
    pub mu: f64,
    /// Displacement standard deviation σ per axis, in m.
    pub sigma: f64,
}

/// Simulates a Thomas process in a region, seeded. Parents are simulated in
/// the bounding box enlarged by 4σ on every side, so clusters centred just
/// outside still send offspring in (the missed fraction is below 1e-4);
/// offspring outside the region are dropped.
pub(crate) fn thomas_in(region: &Window, p: ThomasParams, rng: &mut Rng) -> (Vec<f64>, Vec<f64>) {
    let pad = 4.0 * p.sigma;
    let [x0, y0, x1, y1] = region.bbox();
    let (ex0, ey0, ex1, ey1) = (x0 - pad, y0 - pad, x1 + pad, y1 + pad);
    let parents = poisson(rng, p.kappa * (ex1 - ex0) * (ey1 - ey0));
    let (mut xs, mut ys) = (Vec::new(), Vec::new());
    for _ in 0..parents {
        let px = ex0 + (ex1 - ex0) * rng.random::<f64>();
        let py = ey0 + (ey1 - ey0) * rng.random::<f64>();
        let m = poisson(rng, p.mu);
        for _ in 0..m {
            let x = px + p.sigma * normal(rng);
            let y = py + p.sigma * normal(rng);
            if region.contains(x, y) {
                xs.push(x);
                ys.push(y);
            }
        }
    }
    (xs, ys)
}

/// A seeded Thomas process in the window (see [`ThomasParams`]).
pub fn simulate_thomas(
    window: &Window,
    params: ThomasParams,
    seed: u64,
) -> Result<Pattern, AnalysisError> {
    let region = prepare(window)?;
    let (x, y) = thomas_in(&region, params, &mut rng_from_seed(seed));
    Ok(Pattern::from_xy(x, y).unwrap_or_default())
}

/// Matérn's model II hard-core process (Matérn 1960/1986, *Spatial
/// Variation* [from memory]): a Poisson(`lambda_parent`) pattern in the
/// region enlarged by the hard-core distance, each point with an
/// independent uniform mark; a point is deleted if another point within
/// `hard_core` has a smaller mark. Retained points outside the region are
/// dropped. Intensity: (1 − exp(−λ_p π δ²))/(π δ²).
pub(crate) fn matern2_in(
    region: &Window,
    lambda_parent: f64,
    hard_core: f64,
    rng: &mut Rng,
) -> (Vec<f64>, Vec<f64>) {
    let [x0, y0, x1, y1] = region.bbox();
    let (ex0, ey0, ex1, ey1) = (
        x0 - hard_core,
        y0 - hard_core,
        x1 + hard_core,
        y1 + hard_core,
    );
    let n = poisson(rng, lambda_parent * (ex1 - ex0) * (ey1 - ey0));
    let mut px = Vec::with_capacity(n);
    let mut py = Vec::with_capacity(n);
    let mut mark = Vec::with_capacity(n);
    for _ in 0..n {
        px.push(ex0 + (ex1 - ex0) * rng.random::<f64>());
        py.push(ey0 + (ey1 - ey0) * rng.random::<f64>());
        mark.push(rng.random::<f64>());
    }
    let grid = crate::index::GridIndex::with_cell(&px, &py, hard_core);
    let mut deleted = vec![false; n];
    grid.for_each_slot_pair(hard_core, |a, b, _| {
        let (i, j) = (grid.id[a] as usize, grid.id[b] as usize);
        if mark[i] < mark[j] {
            deleted[j] = true;
        } else {
            deleted[i] = true;
        }
    });
    let (mut xs, mut ys) = (Vec::new(), Vec::new());
    for i in 0..n {
        if !deleted[i] && region.contains(px[i], py[i]) {
            xs.push(px[i]);
            ys.push(py[i]);
        }
    }
    (xs, ys)
}

/// A seeded Matérn II hard-core pattern in the window (see [`matern2_in`]).
pub fn simulate_matern2(
    window: &Window,
    lambda_parent: f64,
    hard_core: f64,
    seed: u64,
) -> Result<Pattern, AnalysisError> {
    let region = prepare(window)?;
    let (x, y) = matern2_in(&region, lambda_parent, hard_core, &mut rng_from_seed(seed));
    Ok(Pattern::from_xy(x, y).unwrap_or_default())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::tests::wh;

    /// docs/methods.md#csr check values for WH: mean (5, 5), nothing in the hole,
    /// P(x < 2) = 20/96; tolerance 4 standard errors (2×10⁵ draws).
    #[test]
    fn test_csr_in_window_with_hole() {
        let w = wh();
        let mut rng = rng_from_seed(2024);
        let (x, y) = w.sample_uniform(200_000, &mut rng);
        let n = x.len() as f64;
        let mx = x.iter().sum::<f64>() / n;
        let my = y.iter().sum::<f64>() / n;
        // SD of x for this window is below 3, so SE < 3/sqrt(n).
        let se = 3.0 / n.sqrt();
        assert!(
            (mx - 5.0).abs() < 4.0 * se && (my - 5.0).abs() < 4.0 * se,
            "{mx} {my}"
        );
        let in_hole = x
            .iter()
            .zip(&y)
            .filter(|(a, b)| **a > 4.0 && **a < 6.0 && **b > 4.0 && **b < 6.0)
            .count();
        assert_eq!(in_hole, 0);
        let p = 20.0 / 96.0;
        let frac = x.iter().filter(|a| **a < 2.0).count() as f64 / n;
        assert!(
            (frac - p).abs() < 4.0 * (p * (1.0 - p) / n).sqrt(),
            "{frac}"
        );
    }

    #[test]
    fn test_streams_differ_and_repeat() {
        assert_eq!(stream_seed(1, 0), stream_seed(1, 0));
        assert_ne!(stream_seed(1, 0), stream_seed(1, 1));
        assert_ne!(stream_seed(1, 0), stream_seed(2, 0));
    }

    /// Poisson draws: mean and variance both μ (tolerance 4 SE).
    #[test]
    fn test_poisson_and_normal_moments() {
        let mut rng = rng_from_seed(9);
        let m = 20_000;
        let v: Vec<f64> = (0..m).map(|_| poisson(&mut rng, 7.5) as f64).collect();
        let mean = v.iter().sum::<f64>() / m as f64;
        assert!(
            (mean - 7.5).abs() < 4.0 * (7.5f64 / m as f64).sqrt(),
            "{mean}"
        );
        let z: Vec<f64> = (0..m).map(|_| normal(&mut rng)).collect();
        let zm = z.iter().sum::<f64>() / m as f64;
        let zv = z.iter().map(|a| a * a).sum::<f64>() / m as f64;
        assert!(zm.abs() < 4.0 / (m as f64).sqrt());
        assert!((zv - 1.0).abs() < 4.0 * (2.0 / m as f64).sqrt());
    }
}
