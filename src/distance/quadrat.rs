//! Quadrat counts and the χ² test of CSR, clipped to the study area.
//!
//! # Method (docs/methods.md#quadrat; Greig-Smith 1952, Cressie 1993 [from memory];
//! Diggle 2013)
//! A grid of nx × ny equal rectangles covers the bounding box of the study
//! area. Each cell Q_i is clipped to the area: a_i = |Q_i ∩ W| is computed
//! exactly by clipping every ring (outer rings and holes) against the cell
//! rectangle (Sutherland–Hodgman, exact because the cell is convex) and
//! adding signed ring areas, so holes subtract. Cells with zero window area
//! are dropped. With n events, E_i = n·a_i/|W| and
//! X² = Σ (n_i − E_i)²/E_i on k − 1 degrees of freedom (λ estimated
//! through n). Clustering makes X² large (upper tail), regularity small
//! (lower tail); two-sided p = min(1, 2·min(upper, lower)) [common practice].
//!
//! The **Monte Carlo p-value** uses m seeded CSR patterns with the same n:
//! given n, CSR cell counts are multinomial with probabilities a_i/|W|, so
//! counts are drawn directly from that multinomial (equivalent to dropping n
//! uniform points in W and counting, but much faster). Upper:
//! (1 + #{X²_j ≥ X²})/(m + 1); lower: (1 + #{X²_j ≤ X²})/(m + 1)
//! (Besag & Diggle 1977); two-sided = min(1, 2·min).
//!
//! **Index of dispersion** I = s²/x̄ of the counts (k − 1 denominator;
//! Fisher's index); (k − 1)·I = X² exactly for equal-area cells, and it is
//! not meaningful when cells differ in area (a warning says so).
//!
//! **Cochran's rule** [common practice]: the χ² approximation wants every
//! E_i ≥ 5; otherwise a warning points to the Monte Carlo p-value.
//!
//! **Automatic grid** (our rule, no source): square-ish cells of side
//! √(10·|W|/n), so a full cell expects about 10 events, with 1 to 20
//! cells a side.

use super::csr::stream_rng;
use super::functions::checked_region;
use crate::error::AnalysisError;
use crate::study::Pattern;
use crate::window::Window;
use rand::RngExt;
use serde::{Deserialize, Serialize};
use statrs::distribution::{ChiSquared, ContinuousCDF};

/// Parameters of the quadrat test.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct QuadratParams {
    /// Columns (automatic when absent).
    pub nx: Option<usize>,
    /// Rows (automatic when absent).
    pub ny: Option<usize>,
    /// Simulations for the Monte Carlo p-value (0 to 9999; default 999).
    pub n_sim: usize,
    pub seed: u64,
}

impl Default for QuadratParams {
    fn default() -> Self {
        QuadratParams {
            nx: None,
            ny: None,
            n_sim: 999,
            seed: 1,
        }
    }
}

impl crate::params::Params for QuadratParams {
    const NAME: &'static str = "quadratTest";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::Field;
        vec![
            Field::integer("nx", "columns of the grid; empty = automatic")
                .range(1.0, 100.0)
                .optional(),
            Field::integer("ny", "rows of the grid; empty = automatic")
                .range(1.0, 100.0)
                .optional(),
            Field::integer(
                "n_sim",
                "simulations for the Monte Carlo p-value (0 = none)",
            )
            .range(0.0, 9999.0),
            Field::seed("seed of the simulations"),
        ]
    }
}

/// One cell of the grid (kept only when it overlaps the study area).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct QuadratCell {
    pub ix: usize,
    pub iy: usize,
    /// [min_x, min_y, max_x, max_y] of the full cell.
    pub bounds: [f64; 4],
    /// Area of the cell inside the study area, m².
    pub area_m2: f64,
    pub count: u64,
    pub expected: f64,
}

/// The χ² statistics of a set of counts and areas.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct QuadratStats {
    pub chi_square: f64,
    pub df: usize,
    pub p_upper: f64,
    pub p_lower: f64,
    pub p_two_sided: f64,
    pub expected: Vec<f64>,
    pub dispersion_index: f64,
    pub cells_below_5: usize,
}

/// Result of the quadrat test.
#[derive(Debug, Clone, Serialize)]
pub struct QuadratResult {
    pub nx: usize,
    pub ny: usize,
    pub cell_width_m: f64,
    pub cell_height_m: f64,
    pub cells: Vec<QuadratCell>,
    pub n: usize,
    pub stats: QuadratStats,
    pub p_mc_upper: Option<f64>,
    pub p_mc_lower: Option<f64>,
    pub p_mc_two_sided: Option<f64>,
    pub n_sim: usize,
    pub seed: u64,
    pub warnings: Vec<String>,
}

fn bad(name: &str, detail: &str) -> AnalysisError {
    AnalysisError::BadParameter {
        name: name.into(),
        detail: detail.into(),
    }
}

fn chi_square(counts: &[f64], expected: &[f64]) -> f64 {
    counts
        .iter()
        .zip(expected)
        .map(|(o, e)| (o - e) * (o - e) / e)
        .sum()
}

/// χ² test from counts and cell areas (areas in any unit; only their
/// proportions matter). Cells with zero area are not allowed here.
///
/// # Examples
/// The 3×3 example of docs/methods.md#quadrat (X² = 13.6 on 8 df, upper p = 0.09281):
/// ```
/// # use cloister::distance::quadrat_from_counts;
/// let s = quadrat_from_counts(&[3, 5, 2, 8, 7, 5, 1, 4, 10], &[1.0; 9]).unwrap();
/// assert!((s.chi_square - 13.6).abs() < 1e-12);
/// assert!((s.p_upper - 0.09281).abs() < 1e-5);
/// ```
pub fn quadrat_from_counts(counts: &[u64], areas: &[f64]) -> Result<QuadratStats, AnalysisError> {
    if counts.len() != areas.len() || counts.len() < 2 {
        return Err(bad(
            "cells",
            "need at least two cells, with one area per count",
        ));
    }
    if areas.iter().any(|a| !(a.is_finite() && *a > 0.0)) {
        return Err(bad("cells", "every cell area must be a positive number"));
    }
    let n: u64 = counts.iter().sum();
    if n == 0 {
        return Err(AnalysisError::TooFewPoints {
            needed: 1,
            found: 0,
        });
    }
    let total: f64 = areas.iter().sum();
    let expected: Vec<f64> = areas.iter().map(|a| n as f64 * a / total).collect();
    let obs: Vec<f64> = counts.iter().map(|c| *c as f64).collect();
    let x2 = chi_square(&obs, &expected);
    let df = counts.len() - 1;
    let dist = ChiSquared::new(df as f64).map_err(|_| bad("df", "invalid degrees of freedom"))?;
    let p_upper = dist.sf(x2);
    let p_lower = dist.cdf(x2);
    let k = obs.len() as f64;
    let mean = obs.iter().sum::<f64>() / k;
    let var = obs.iter().map(|o| (o - mean) * (o - mean)).sum::<f64>() / (k - 1.0);
    Ok(QuadratStats {
        chi_square: x2,
        df,
        p_upper,
        p_lower,
        p_two_sided: (2.0 * p_upper.min(p_lower)).min(1.0),
        cells_below_5: expected.iter().filter(|e| **e < 5.0).count(),
        dispersion_index: var / mean,
        expected,
    })
}

/// Automatic grid: cells of side √(10·|W|/n), 1 to 20 a side.
/// Walker's alias table for drawing an index with probability proportional
/// to its weight in O(1) (Walker 1977, "An efficient method for generating
/// discrete random variables with general distributions", ACM Transactions
/// on Mathematical Software 3(3); built here by Vose's 1991 stable method).
pub(crate) struct Alias {
    /// Probability of keeping column `i` (else take `alias[i]`).
    keep: Vec<f64>,
    alias: Vec<usize>,
}

impl Alias {
    /// `weights` must be non-negative with a positive sum.
    pub(crate) fn new(weights: &[f64]) -> Alias {
        let k = weights.len();
        let total: f64 = weights.iter().sum();
        let mut scaled: Vec<f64> = weights.iter().map(|w| w * k as f64 / total).collect();
        let mut keep = vec![1.0; k];
        let mut alias: Vec<usize> = (0..k).collect();
        let (mut small, mut large): (Vec<usize>, Vec<usize>) =
            (0..k).partition(|&i| scaled[i] < 1.0);
        while let (Some(&s), Some(&l)) = (small.last(), large.last()) {
            small.pop();
            keep[s] = scaled[s];
            alias[s] = l;
            scaled[l] -= 1.0 - scaled[s];
            if scaled[l] < 1.0 {
                large.pop();
                small.push(l);
            }
        }
        // What is left has probability 1 up to rounding.
        for i in small.into_iter().chain(large) {
            keep[i] = 1.0;
        }
        Alias { keep, alias }
    }

    /// The index for one uniform `u` in [0, 1).
    pub(crate) fn draw(&self, u: f64) -> usize {
        let k = self.keep.len();
        let v = u * k as f64;
        let i = (v as usize).min(k - 1);
        if v - (i as f64) < self.keep[i] {
            i
        } else {
            self.alias[i]
        }
    }
}

fn auto_grid(region: &Window, n: usize) -> (usize, usize) {
    let [x0, y0, x1, y1] = region.bbox();
    let side = (10.0 * region.area() / n.max(1) as f64).sqrt();
    let nx = ((x1 - x0) / side).round().clamp(1.0, 20.0) as usize;
    let ny = ((y1 - y0) / side).round().clamp(1.0, 20.0) as usize;
    if nx * ny < 2 {
        if x1 - x0 >= y1 - y0 {
            (2, 1)
        } else {
            (1, 2)
        }
    } else {
        (nx, ny)
    }
}

/// Quadrat test of CSR for a pattern in its study area (see module docs).
pub fn quadrat_test(
    pattern: &Pattern,
    window: &Window,
    params: &QuadratParams,
) -> Result<QuadratResult, AnalysisError> {
    let region = super::csr::prepare(window)?;
    if pattern.is_empty() {
        return Err(AnalysisError::TooFewPoints {
            needed: 1,
            found: 0,
        });
    }
    let _ = checked_region; // (pattern size checks differ here: one event suffices)
    quadrat_in(&region, pattern.x(), pattern.y(), params)
}

pub(crate) fn quadrat_in(
    region: &Window,
    x: &[f64],
    y: &[f64],
    params: &QuadratParams,
) -> Result<QuadratResult, AnalysisError> {
    crate::params::Params::validate(params)?;
    let n = x.len();
    let (anx, any) = auto_grid(region, n);
    let nx = params.nx.unwrap_or(anx);
    let ny = params.ny.unwrap_or(any);
    if nx == 0 || ny == 0 || nx * ny > 10_000 {
        return Err(bad(
            "grid",
            "columns and rows must be at least 1, with at most 10000 cells",
        ));
    }
    let [bx0, by0, bx1, by1] = region.bbox();
    let cw = (bx1 - bx0) / nx as f64;
    let ch = (by1 - by0) / ny as f64;
    let mut counts = vec![0u64; nx * ny];
    for i in 0..n {
        let ix = (((x[i] - bx0) / cw).floor().max(0.0) as usize).min(nx - 1);
        let iy = (((y[i] - by0) / ch).floor().max(0.0) as usize).min(ny - 1);
        counts[iy * nx + ix] += 1;
    }
    let mut cells = Vec::new();
    for iy in 0..ny {
        for ix in 0..nx {
            let b = [
                bx0 + ix as f64 * cw,
                by0 + iy as f64 * ch,
                bx0 + (ix + 1) as f64 * cw,
                by0 + (iy + 1) as f64 * ch,
            ];
            let a = region.rect_intersection_area(b);
            // Drop slivers below 1e-12 of the area (rounding noise).
            if a > 1e-12 * region.area() {
                cells.push(QuadratCell {
                    ix,
                    iy,
                    bounds: b,
                    area_m2: a,
                    count: counts[iy * nx + ix],
                    expected: 0.0,
                });
            }
        }
    }
    let used: u64 = cells.iter().map(|c| c.count).sum();
    let mut warnings = Vec::new();
    if used as usize != n {
        warnings.push(format!(
            "{} events fall in cells with no study area (outside the area?) and were not counted",
            n as u64 - used
        ));
    }
    let areas: Vec<f64> = cells.iter().map(|c| c.area_m2).collect();
    let cnt: Vec<u64> = cells.iter().map(|c| c.count).collect();
    let stats = quadrat_from_counts(&cnt, &areas)?;
    for (c, e) in cells.iter_mut().zip(&stats.expected) {
        c.expected = *e;
    }
    if stats.cells_below_5 > 0 {
        warnings.push(format!(
            "{} of {} cells expect fewer than 5 events (Cochran's rule): the χ² p-value is approximate; prefer the Monte Carlo p-value or fewer cells",
            stats.cells_below_5,
            cells.len()
        ));
    }
    let amax = areas.iter().cloned().fold(0.0, f64::max);
    let amin = areas.iter().cloned().fold(f64::INFINITY, f64::min);
    if amax - amin > 1e-9 * amax {
        warnings.push("cells differ in area (clipped at the study-area edge): the index of dispersion is only a rough guide; the χ² test accounts for the areas".into());
    }
    let (mut p_mc_upper, mut p_mc_lower, mut p_mc_two_sided) = (None, None, None);
    if params.n_sim > 0 {
        // Under CSR with n fixed the counts are multinomial with the cells'
        // shares of the area: each simulated event picks a cell by Walker's
        // alias method (one uniform, O(1) per event).
        let alias = Alias::new(&areas);
        let nu = used as usize;
        let mut sim_counts = vec![0f64; areas.len()];
        let (mut ge, mut le) = (0usize, 0usize);
        for j in 0..params.n_sim {
            crate::progress::report(j, params.n_sim);
            let mut rng = stream_rng(params.seed, j as u64);
            sim_counts.iter_mut().for_each(|c| *c = 0.0);
            for _ in 0..nu {
                sim_counts[alias.draw(rng.random::<f64>())] += 1.0;
            }
            let x2 = chi_square(&sim_counts, &stats.expected);
            if x2 >= stats.chi_square {
                ge += 1;
            }
            if x2 <= stats.chi_square {
                le += 1;
            }
        }
        let m1 = params.n_sim as f64 + 1.0;
        let up = (1.0 + ge as f64) / m1;
        let lo = (1.0 + le as f64) / m1;
        p_mc_upper = Some(up);
        p_mc_lower = Some(lo);
        p_mc_two_sided = Some((2.0 * up.min(lo)).min(1.0));
    }
    Ok(QuadratResult {
        nx,
        ny,
        cell_width_m: cw,
        cell_height_m: ch,
        cells,
        n,
        stats,
        p_mc_upper,
        p_mc_lower,
        p_mc_two_sided,
        n_sim: params.n_sim,
        seed: params.seed,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::tests::wh;

    /// Q9 (docs/methods.md#quadrat, #fixtures; scipy.stats.chisquare): X² = 13.6,
    /// df = 8, upper 0.09281, lower 0.90719, two-sided 0.18561, VMR 1.7.
    #[test]
    fn test_q9_check_values() {
        let s = quadrat_from_counts(&[3, 5, 2, 8, 7, 5, 1, 4, 10], &[1.0; 9]).unwrap();
        assert!((s.chi_square - 13.6).abs() < 1e-12);
        assert_eq!(s.df, 8);
        assert!((s.p_upper - 0.09281).abs() < 5e-6);
        assert!((s.p_lower - 0.90719).abs() < 5e-6);
        assert!((s.p_two_sided - 0.18561).abs() < 5e-6);
        assert!((s.dispersion_index - 1.7).abs() < 1e-12);
        assert!((8.0 * s.dispersion_index - s.chi_square).abs() < 1e-12);
    }

    /// Unequal areas (docs/methods.md#quadrat): a = (1,2,3,4), counts (4,6,5,15):
    /// E = (3,6,9,12), X² = 2.8611, df = 3, p = 0.41354.
    #[test]
    fn test_unequal_areas_check_values() {
        let s = quadrat_from_counts(&[4, 6, 5, 15], &[1.0, 2.0, 3.0, 4.0]).unwrap();
        assert_eq!(s.expected, vec![3.0, 6.0, 9.0, 12.0]);
        assert!((s.chi_square - 2.8611).abs() < 5e-5);
        assert!((s.p_upper - 0.41354).abs() < 5e-6);
        assert_eq!(s.cells_below_5, 1);
    }

    /// WH with a 5×5 grid: the centre cell [4,6]² is the hole and is dropped;
    /// cell areas add up to |W| = 96.
    #[test]
    fn test_cells_clipped_to_window_with_hole() {
        let w = wh();
        let mut rng = crate::rng::rng_from_seed(8);
        let (x, y) = w.sample_uniform(300, &mut rng);
        let r = quadrat_in(
            &w,
            &x,
            &y,
            &QuadratParams {
                nx: Some(5),
                ny: Some(5),
                n_sim: 99,
                seed: 3,
            },
        )
        .unwrap();
        assert_eq!(r.cells.len(), 24);
        assert!((r.cells.iter().map(|c| c.area_m2).sum::<f64>() - 96.0).abs() < 1e-9);
        assert_eq!(r.cells.iter().map(|c| c.count).sum::<u64>(), 300);
        let p = r.p_mc_upper.unwrap();
        assert!(p > 0.0 && p <= 1.0);
    }

    /// Under binomial CSR with equal cells E[X²] = k − 1 exactly (docs/methods.md#quadrat
    /// [derived; checked there by simulation]); the Monte Carlo draws
    /// must reproduce it. Mean over 4000 draws within 4 SE (Var X² ≈ 2(k−1)).
    #[test]
    fn test_mc_mean_chi_square() {
        let w = crate::window::tests::unit_square();
        let mut total = 0.0;
        let m = 4000;
        for j in 0..m {
            let mut rng = stream_rng(99, j);
            let (x, y) = w.sample_uniform(45, &mut rng);
            let r = quadrat_in(
                &w,
                &x,
                &y,
                &QuadratParams {
                    nx: Some(3),
                    ny: Some(3),
                    n_sim: 0,
                    seed: 0,
                },
            )
            .unwrap();
            total += r.stats.chi_square;
        }
        let mean = total / m as f64;
        assert!(
            (mean - 8.0).abs() < 4.0 * (16.0f64 / m as f64).sqrt(),
            "{mean}"
        );
    }

    /// The alias table gives each index its exact share: the probability of
    /// index i summed over all columns, computed from the table, equals
    /// w_i / Σw; and 200,000 draws match the shares (χ² well inside its
    /// 99.9 % range for 6 degrees of freedom, 22.46 from scipy.stats.chi2.ppf).
    #[test]
    fn alias_table_draws_each_cell_by_its_share() {
        let w = [1.0, 0.0, 3.5, 0.25, 2.0, 2.0, 7.0];
        let a = Alias::new(&w);
        let k = w.len() as f64;
        let total: f64 = w.iter().sum();
        for (i, wi) in w.iter().enumerate() {
            let mut p = a.keep[i] / k;
            for c in 0..w.len() {
                if a.alias[c] == i && c != i {
                    p += (1.0 - a.keep[c]) / k;
                }
            }
            assert!((p - wi / total).abs() < 1e-12, "{i}: {p}");
        }
        let mut rng = crate::rng::rng_from_seed(3);
        let mut counts = [0f64; 7];
        let n = 200_000;
        for _ in 0..n {
            counts[a.draw(rng.random::<f64>())] += 1.0;
        }
        assert_eq!(counts[1], 0.0, "a cell of weight 0 is never drawn");
        let x2: f64 = w
            .iter()
            .zip(&counts)
            .filter(|(w, _)| **w > 0.0)
            .map(|(w, c)| {
                let e = n as f64 * w / total;
                (c - e).powi(2) / e
            })
            .sum();
        assert!(x2 < 22.46, "chi-square {x2}");
    }

    #[test]
    fn test_quadrat_edge_cases() {
        assert!(quadrat_from_counts(&[1], &[1.0]).is_err());
        assert!(quadrat_from_counts(&[0, 0], &[1.0, 1.0]).is_err());
        assert!(quadrat_from_counts(&[1, 2], &[1.0, 0.0]).is_err());
    }
}
