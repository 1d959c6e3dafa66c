//! Choosing the bandwidth.
//!
//! Every bandwidth here is in metres and in the kernel's own unit (Gaussian:
//! SD per axis; quartic: support radius, see [`super::kernel`]). Rules:
//! * **Normal reference** (Scott 1992, *Multivariate Density Estimation*,
//!   Wiley; Silverman 1986, *Density Estimation for Statistics and Data
//!   Analysis*, Chapman & Hall — the two coincide in two dimensions):
//!   `σ = σ̂·n^(−1/6)` with the single isotropic scale
//!   `σ̂ = √((s_x² + s_y²)/2)` (sample variances, divisor n − 1;
//!   docs/methods.md#kernel \[CP\]). For the quartic kernel the radius with the same spread,
//!   `2√2·σ`, is returned.
//! * **Likelihood cross-validation** (Loader 1999, *Local Regression and
//!   Likelihood*, Springer \[M\]): maximise
//!   `LCV(h) = Σ_i log λ̂_{−i}(x_i) − ∫_W λ̂` over a ladder of candidates. The
//!   leave-one-out sums are exact pair sums (Gaussian cut at 6 SD) for
//!   bandwidths under two grid cells, and for wider ones the binned surface at
//!   each event minus the event's own binned contribution (exact sums again
//!   for events whose neighbours contribute less than twice their own binned
//!   term). An event with no neighbour within 6 SD contributes
//!   `ln k_h(d_nn)` (its nearest neighbour alone) rather than `ln 0`; with the
//!   Jones–Diggle correction `∫_W λ̂ = n` (docs/methods.md#kernel \[D\]); with none it is
//!   `Σ_j e_h(x_j)`; with the uniform correction it is the grid integral of
//!   the corrected surface.
//! * **Diggle (1985) / Berman & Diggle (1989) MSE criterion** (JRSS-B
//!   51:81–92 \[M\]), in the form of docs/methods.md#kernel for a Gaussian kernel of SD σ:
//!   `M̂(σ) = |W|/(4πσ²n) + |W|/(n(n−1))·Σ_{i≠j} e_ij[φ_{√2σ}(d_ij) − 2φ_σ(d_ij)]`
//!   with the translation edge weight `e_ij = |W|/|W ∩ (W + x_i − x_j)|`, the
//!   denominator taken from the set covariance of the grid mask (by FFT).
//!   Pairs are summed exactly for σ under two grid cells; for wider σ the
//!   pair differences are binned (autocorrelation of the linearly binned
//!   counts by FFT, each event's pairing with itself removed exactly) and
//!   summed lag by lag, O(cells·log cells) instead of O(n²).
//!   Minimised over the ladder. Under complete spatial randomness the
//!   criterion keeps falling as σ grows, so when the minimum is at the
//!   largest candidate this returns **no finite optimum** (as docs/methods.md#kernel says)
//!   instead of the end of the ladder. For the quartic kernel the optimum σ
//!   is converted to the radius `2√2·σ`.
//! * **Fixed**: the caller's value.
//!
//! Bandwidth selection ignores event weights.

use super::edge::EdgeCorrection;
use super::fft::autocorrelation;
use super::grid::GridOptions;
use super::kernel::{Kernel, QUARTIC_PER_GAUSS_SD};
use super::{surface_on_canvas, Canvas, Evaluation};
use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::window::Window;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// How to choose the bandwidth.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BandwidthMethod {
    /// σ̂·n^(−1/6) (Scott / Silverman, d = 2).
    #[default]
    NormalReference,
    /// Likelihood cross-validation (Loader 1999).
    LikelihoodCv,
    /// Diggle (1985) / Berman–Diggle (1989) mean-square-error criterion.
    DiggleMse,
    /// `fixed_m` metres.
    Fixed,
}

impl BandwidthMethod {
    /// Plain words for the page, with the method's source.
    pub fn describe(self) -> &'static str {
        match self {
            BandwidthMethod::NormalReference => {
                "rule of thumb (normal reference, Scott / Silverman)"
            }
            BandwidthMethod::LikelihoodCv => "likelihood cross-validation (Loader 1999)",
            BandwidthMethod::DiggleMse => {
                "mean-square-error criterion (Diggle 1985; Berman & Diggle 1989)"
            }
            BandwidthMethod::Fixed => "fixed by you",
        }
    }
}

/// Options for choosing the bandwidth.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct BandwidthOptions {
    pub method: BandwidthMethod,
    /// The bandwidth for [`BandwidthMethod::Fixed`], metres.
    pub fixed_m: Option<f64>,
    /// Number of candidates tried by the criteria (default 20).
    pub candidates: usize,
    /// Candidates run geometrically from `min_factor` to `max_factor` times
    /// the normal-reference bandwidth (defaults 0.1 and 2).
    pub min_factor: f64,
    pub max_factor: f64,
}

impl Default for BandwidthOptions {
    fn default() -> Self {
        BandwidthOptions {
            method: BandwidthMethod::NormalReference,
            fixed_m: None,
            candidates: 20,
            min_factor: 0.1,
            max_factor: 2.0,
        }
    }
}

/// The chosen bandwidth, with the evidence.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BandwidthChoice {
    pub method: BandwidthMethod,
    /// Metres, in the kernel's unit; `None` when the criterion has no
    /// finite optimum (see `note`).
    pub bandwidth_m: Option<f64>,
    /// The normal-reference bandwidth (same unit), when it could be computed.
    pub reference_m: Option<f64>,
    /// Candidates tried (empty for the rules), metres.
    pub candidates_m: Vec<f64>,
    /// Criterion at each candidate (LCV: higher is better; MSE: lower is
    /// better); `None` where it is not finite (LCV with an isolated event).
    pub criterion: Vec<Option<f64>>,
    /// Plain-words remark (optimum at the end of the range, no optimum ...).
    pub note: Option<String>,
}

fn bad(detail: impl Into<String>) -> AnalysisError {
    AnalysisError::BadParameter {
        name: "bandwidth".into(),
        detail: detail.into(),
    }
}

/// Normal-reference Gaussian SD, `σ̂·n^(−1/6)`, metres.
pub fn normal_reference(x: &[f64], y: &[f64]) -> Result<f64, AnalysisError> {
    let n = x.len();
    if n < 2 {
        return Err(AnalysisError::TooFewPoints {
            needed: 2,
            found: n,
        });
    }
    let nf = n as f64;
    let mx = x.iter().sum::<f64>() / nf;
    let my = y.iter().sum::<f64>() / nf;
    let sxx = x.iter().map(|v| (v - mx).powi(2)).sum::<f64>() / (nf - 1.0);
    let syy = y.iter().map(|v| (v - my).powi(2)).sum::<f64>() / (nf - 1.0);
    let s = ((sxx + syy) / 2.0).sqrt();
    if !(s > 0.0 && s.is_finite()) {
        return Err(bad(
            "all events are at the same place, so no bandwidth can be derived from their spread",
        ));
    }
    Ok(s * nf.powf(-1.0 / 6.0))
}

fn to_kernel_unit(kernel: Kernel, sd: f64) -> f64 {
    match kernel {
        Kernel::Gaussian => sd,
        Kernel::Quartic => sd * QUARTIC_PER_GAUSS_SD,
    }
}

/// Geometric ladder from `lo` to `hi` with `k` values.
pub fn ladder(lo: f64, hi: f64, k: usize) -> Vec<f64> {
    if k <= 1 {
        return vec![lo];
    }
    (0..k)
        .map(|i| lo * (hi / lo).powf(i as f64 / (k - 1) as f64))
        .collect()
}

/// Chooses the bandwidth as the options say.
pub fn choose(
    x: &[f64],
    y: &[f64],
    region: &Window,
    kernel: Kernel,
    edge: EdgeCorrection,
    o: &BandwidthOptions,
    grid: &GridOptions,
) -> Result<BandwidthChoice, AnalysisError> {
    let reference = normal_reference(x, y)
        .ok()
        .map(|s| to_kernel_unit(kernel, s));
    let rule = |h: f64| BandwidthChoice {
        method: o.method,
        bandwidth_m: Some(h),
        reference_m: reference,
        candidates_m: vec![],
        criterion: vec![],
        note: None,
    };
    match o.method {
        BandwidthMethod::Fixed => match o.fixed_m {
            Some(h) if h > 0.0 && h.is_finite() => Ok(rule(h)),
            _ => Err(bad("a fixed bandwidth must be a positive number of metres")),
        },
        BandwidthMethod::NormalReference => {
            Ok(rule(to_kernel_unit(kernel, normal_reference(x, y)?)))
        }
        BandwidthMethod::LikelihoodCv | BandwidthMethod::DiggleMse => {
            let h_ref = normal_reference(x, y)?;
            if !(o.min_factor > 0.0 && o.max_factor > o.min_factor && o.candidates >= 3) {
                return Err(bad(
                    "the candidate range needs 0 < min_factor < max_factor and 3 or more candidates",
                ));
            }
            let sds = ladder(h_ref * o.min_factor, h_ref * o.max_factor, o.candidates);
            let mut c = if o.method == BandwidthMethod::LikelihoodCv {
                let hs: Vec<f64> = sds.iter().map(|&s| to_kernel_unit(kernel, s)).collect();
                likelihood_cv(x, y, region, kernel, edge, &hs, grid)?
            } else {
                let mut c = diggle_mse(x, y, region, &sds, grid)?;
                c.candidates_m = sds.iter().map(|&s| to_kernel_unit(kernel, s)).collect();
                c.bandwidth_m = c.bandwidth_m.map(|s| to_kernel_unit(kernel, s));
                c
            };
            c.reference_m = reference;
            Ok(c)
        }
    }
}

/// Likelihood cross-validation over the candidate bandwidths `hs` (kernel
/// unit, ascending). See the module docs for the criterion.
pub fn likelihood_cv(
    x: &[f64],
    y: &[f64],
    region: &Window,
    kernel: Kernel,
    edge: EdgeCorrection,
    hs: &[f64],
    grid: &GridOptions,
) -> Result<BandwidthChoice, AnalysisError> {
    let n = x.len();
    if n < 2 {
        return Err(AnalysisError::TooFewPoints {
            needed: 2,
            found: n,
        });
    }
    let cv = Canvas::new(region, grid)?;
    let k = hs.len();
    // Per candidate: 1/e_h(x_j) (Jones–Diggle) or 1, and the integral term.
    let mut inv_e = vec![vec![1.0; n]; k];
    let mut integral = vec![n as f64; k];
    use crate::progress::report_in;
    for (c, &h) in hs.iter().enumerate() {
        report_in(0.0, 0.1, c, k);
        match edge {
            EdgeCorrection::JonesDiggle | EdgeCorrection::None => {
                let stencil = kernel.stencil(h, cv.cell, cv.max_r());
                let e = super::edge::edge_mass(
                    &cv.mask,
                    cv.nx,
                    cv.ny,
                    &stencil,
                    kernel.lattice_mass(h, cv.cell),
                );
                let ex: Vec<f64> = (0..n).map(|i| cv.interpolate(&e, x[i], y[i])).collect();
                if edge == EdgeCorrection::JonesDiggle {
                    inv_e[c] = ex
                        .iter()
                        .map(|&v| if v > 0.0 { 1.0 / v } else { 0.0 })
                        .collect();
                } else {
                    integral[c] = ex.iter().sum();
                }
            }
            EdgeCorrection::Uniform => {
                let (v, _) =
                    surface_on_canvas(&cv, x, y, None, kernel, h, edge, Evaluation::Binned);
                integral[c] = v
                    .iter()
                    .zip(&cv.mask)
                    .filter(|(_, &m)| m)
                    .map(|(v, _)| v)
                    .sum::<f64>()
                    * cv.cell
                    * cv.cell;
            }
        }
    }
    // Leave-one-out sums. Bandwidths whose kernel SD is at least two cells
    // use the binned surface (linear binning + convolution) interpolated at
    // each event, minus that event's own binned contribution computed exactly
    // from the same weights; smaller ones use exact pair sums (Gaussian cut
    // at 6 SD). Binned sums cost O(cells·log cells) per candidate instead of
    // O(pairs in reach).
    let binned: Vec<bool> = hs.iter().map(|&h| kernel.sd(h) >= 2.0 * cv.cell).collect();
    let mut s = vec![0.0; k * n];
    let mut exact_refine: Vec<(usize, usize)> = Vec::new();
    let inv_a = 1.0 / (cv.cell * cv.cell);
    for c in (0..k).filter(|&c| binned[c]) {
        report_in(0.1, 0.5, c, k);
        let stencil = kernel.stencil(hs[c], cv.cell, cv.max_r());
        let counts = cv.bin(x, y, |j| inv_e[c][j]);
        let conv = super::fft::convolve(&counts, cv.nx, cv.ny, &stencil);
        // Bilinear weights of the four cells around a point.
        let quad = |tx: f64, ty: f64| {
            [
                (0isize, 0isize, (1.0 - tx) * (1.0 - ty)),
                (1, 0, tx * (1.0 - ty)),
                (0, 1, (1.0 - tx) * ty),
                (1, 1, tx * ty),
            ]
        };
        for i in 0..n {
            let (_, _, tx, ty) = cv.cell_weights(x[i], y[i]);
            let q = quad(tx, ty);
            let mut own = 0.0;
            for &(ax, ay, wa) in &q {
                for &(bx, by, wb) in &q {
                    own += wa * wb * stencil.at(ax - bx, ay - by);
                }
            }
            let full = cv.interpolate(&conv, x[i], y[i]);
            s[c * n + i] = (full - inv_e[c][i] * own) * inv_a;
            // Where the others contribute little next to the event's own
            // term, the difference is mostly binning error: sum exactly.
            if full < 3.0 * inv_e[c][i] * own {
                exact_refine.push((c, i));
            }
        }
    }
    // Exact sums for the events flagged above, candidate by candidate.
    exact_refine.sort_unstable();
    let mut q = 0;
    while q < exact_refine.len() {
        let c = exact_refine[q].0;
        let cut = kernel.cutoff(hs[c], 6.0);
        let b = GridIndex::with_cell(x, y, cut);
        while q < exact_refine.len() && exact_refine[q].0 == c {
            if q % 1024 == 0 {
                report_in(0.5, 0.7, q, exact_refine.len());
            }
            let i = exact_refine[q].1;
            let mut t = 0.0;
            b.for_each_candidate(x[i], y[i], cut, |j| {
                let d2 = (x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2);
                if j != i && d2 <= cut * cut {
                    t += kernel.value(d2, hs[c]) * inv_e[c][j];
                }
            });
            s[c * n + i] = t;
            q += 1;
        }
    }
    let exact: Vec<usize> = (0..k).filter(|&c| !binned[c]).collect();
    if !exact.is_empty() {
        let cut2: Vec<f64> = hs.iter().map(|&h| kernel.cutoff(h, 6.0).powi(2)).collect();
        let rmax = exact.iter().map(|&c| cut2[c]).fold(0.0, f64::max).sqrt();
        let b = GridIndex::with_cell(x, y, rmax);
        for i in 0..n {
            if i % 1024 == 0 {
                report_in(0.7, 0.95, i, n);
            }
            b.for_each_candidate(x[i], y[i], rmax, |j| {
                if j <= i {
                    return;
                }
                let d2 = (x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2);
                for &c in exact.iter().rev() {
                    if d2 > cut2[c] {
                        break;
                    }
                    let v = kernel.value(d2, hs[c]);
                    s[c * n + i] += v * inv_e[c][j];
                    s[c * n + j] += v * inv_e[c][i];
                }
            });
        }
    }
    // The uniform correction divides by e_h at the evaluation point x_i.
    if edge == EdgeCorrection::Uniform {
        for (c, &h) in hs.iter().enumerate() {
            let stencil = kernel.stencil(h, cv.cell, cv.max_r());
            let e = super::edge::edge_mass(
                &cv.mask,
                cv.nx,
                cv.ny,
                &stencil,
                kernel.lattice_mass(h, cv.cell),
            );
            for i in 0..n {
                let ei = cv.interpolate(&e, x[i], y[i]);
                s[c * n + i] = if ei > 0.0 { s[c * n + i] / ei } else { 0.0 };
            }
        }
    }
    // An event with no other event within 6 SD: for the Gaussian the
    // leave-one-out sum is then dominated by its nearest neighbour, and
    // ln k_h(d_nn) (computed in logs, no underflow) stands in for ln 0.
    let nn = if kernel == Kernel::Gaussian && s.iter().any(|&v| v <= 0.0) {
        Some(nearest_others(x, y))
    } else {
        None
    };
    let criterion: Vec<Option<f64>> = (0..k)
        .map(|c| {
            let mut t = 0.0;
            for i in 0..n {
                let v = s[c * n + i];
                if v > 0.0 {
                    t += v.ln();
                } else if let Some(nn) = &nn {
                    let (j, d2) = nn[i];
                    let h = hs[c];
                    let a = inv_e[c][j];
                    if a <= 0.0 {
                        return None;
                    }
                    t += -d2 / (2.0 * h * h) - (2.0 * PI * h * h).ln() + a.ln();
                } else {
                    return None;
                }
            }
            Some(t - integral[c])
        })
        .collect();
    let best = criterion
        .iter()
        .enumerate()
        .filter_map(|(c, v)| v.map(|v| (c, v)))
        .max_by(|a, b| a.1.total_cmp(&b.1));
    let (bandwidth_m, note) = match best {
        None => (
            None,
            Some("every candidate leaves some event with no neighbour in reach".to_string()),
        ),
        Some((c, _)) => (
            Some(hs[c]),
            if c == 0 || c == k - 1 {
                Some(format!(
                    "the best value is at the {} end of the range tried; widen the range",
                    if c == 0 { "lower" } else { "upper" }
                ))
            } else {
                None
            },
        ),
    };
    Ok(BandwidthChoice {
        method: BandwidthMethod::LikelihoodCv,
        bandwidth_m,
        reference_m: None,
        candidates_m: hs.to_vec(),
        criterion,
        note,
    })
}

/// Diggle / Berman–Diggle MSE criterion over Gaussian SDs `sds` (ascending).
/// See the module docs.
pub fn diggle_mse(
    x: &[f64],
    y: &[f64],
    region: &Window,
    sds: &[f64],
    grid: &GridOptions,
) -> Result<BandwidthChoice, AnalysisError> {
    let n = x.len();
    if n < 2 {
        return Err(AnalysisError::TooFewPoints {
            needed: 2,
            found: n,
        });
    }
    let cv = Canvas::new(region, grid)?;
    let (gam, px, py) = autocorrelation(&cv.mask, cv.nx, cv.ny);
    let g0 = gam[0];
    if g0 <= 0.0 {
        return Err(bad("the grid has no cell inside the study area"));
    }
    // γ at a lag in metres, bilinear over lag cells (wrapped indexing).
    let gamma = |vx: f64, vy: f64| -> f64 {
        let fx = vx / cv.cell;
        let fy = vy / cv.cell;
        let (ix, iy) = (fx.floor(), fy.floor());
        let (tx, ty) = (fx - ix, fy - iy);
        let at = |a: f64, b: f64| {
            let a = (a as isize).rem_euclid(px as isize) as usize;
            let b = (b as isize).rem_euclid(py as isize) as usize;
            gam[b * px + a]
        };
        (1.0 - ty) * ((1.0 - tx) * at(ix, iy) + tx * at(ix + 1.0, iy))
            + ty * ((1.0 - tx) * at(ix, iy + 1.0) + tx * at(ix + 1.0, iy + 1.0))
    };
    let area = region.area();
    let k = sds.len();
    let phi = |d2: f64, s: f64| (-d2 / (2.0 * s * s)).exp() / (2.0 * PI * s * s);
    let mut sum = vec![0.0; k];
    // Wide candidates (σ ≥ 2 cells): a histogram of pair differences from the
    // binned counts (their autocorrelation by FFT, minus each event's pairing
    // with itself), summed against the edge weight and kernel per lag.
    // Narrow ones: exact pairs within 6√2σ.
    let binned: Vec<bool> = sds.iter().map(|&s| s >= 2.0 * cv.cell).collect();
    if binned.iter().any(|&b| b) {
        let counts = cv.bin(x, y, |_| 1.0);
        let (mut hist, hx, hy) = super::fft::autocorrelation_of(&counts, cv.nx, cv.ny);
        debug_assert_eq!((hx, hy), (px, py));
        for i in 0..n {
            let (_, _, tx, ty) = cv.cell_weights(x[i], y[i]);
            let q = [
                (0isize, 0isize, (1.0 - tx) * (1.0 - ty)),
                (1, 0, tx * (1.0 - ty)),
                (0, 1, (1.0 - tx) * ty),
                (1, 1, tx * ty),
            ];
            for &(ax, ay, wa) in &q {
                for &(bx, by, wb) in &q {
                    let lx = (bx - ax).rem_euclid(px as isize) as usize;
                    let ly = (by - ay).rem_euclid(py as isize) as usize;
                    hist[ly * px + lx] -= wa * wb;
                }
            }
        }
        let smax = sds
            .iter()
            .zip(&binned)
            .filter(|(_, &b)| b)
            .map(|(s, _)| *s)
            .fold(0.0, f64::max);
        let reach = (6.0 * 2f64.sqrt() * smax / cv.cell).ceil() as isize;
        let reach_x = reach.min(px as isize / 2 - 1);
        let reach_y = reach.min(py as isize / 2 - 1);
        for ly in -reach_y..=reach_y {
            for lx in -reach_x..=reach_x {
                let a = lx.rem_euclid(px as isize) as usize;
                let b = ly.rem_euclid(py as isize) as usize;
                let hv = hist[b * px + a];
                let g = gam[b * px + a];
                // Empty lags carry FFT round-off only; lags where the window
                // and its shift overlap by less than one cell are skipped
                // (their edge weight is unbounded), as for exact pairs.
                if hv.abs() < 1e-6 || g < 1.0 {
                    continue;
                }
                let e = g0 / g;
                let d2 = ((lx * lx + ly * ly) as f64) * cv.cell * cv.cell;
                for c in (0..k).filter(|&c| binned[c]) {
                    let s = sds[c];
                    sum[c] += hv * e * (phi(d2, 2f64.sqrt() * s) - 2.0 * phi(d2, s));
                }
            }
        }
    }
    let exact: Vec<usize> = (0..k).filter(|&c| !binned[c]).collect();
    let cut2: Vec<f64> = sds
        .iter()
        .map(|s| (6.0 * 2f64.sqrt() * s).powi(2))
        .collect();
    let rmax = exact.iter().map(|&c| cut2[c]).fold(0.0, f64::max).sqrt();
    if !exact.is_empty() {
        let b = GridIndex::with_cell(x, y, rmax);
        for i in 0..n {
            if i % 1024 == 0 {
                crate::progress::report_in(0.1, 0.95, i, n);
            }
            b.for_each_candidate(x[i], y[i], rmax, |j| {
                if j <= i {
                    return;
                }
                let (vx, vy) = (x[j] - x[i], y[j] - y[i]);
                let d2 = vx * vx + vy * vy;
                if d2 > rmax * rmax {
                    return;
                }
                let g = gamma(vx, vy);
                if g < 1.0 {
                    return;
                }
                let e = g0 / g;
                for &c in exact.iter().rev() {
                    if d2 > cut2[c] {
                        break;
                    }
                    let s = sds[c];
                    sum[c] += 2.0 * e * (phi(d2, 2f64.sqrt() * s) - 2.0 * phi(d2, s));
                }
            });
        }
    }
    let nf = n as f64;
    let criterion: Vec<f64> = (0..k)
        .map(|c| {
            let s = sds[c];
            area / (4.0 * PI * s * s * nf) + area / (nf * (nf - 1.0)) * sum[c]
        })
        .collect();
    let (cbest, _) = criterion
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(b.1))
        .unwrap_or((0, &0.0));
    let (bandwidth_m, note) = if cbest == k - 1 {
        (
            None,
            Some(
                "no finite optimum: the criterion keeps falling up to the largest bandwidth \
                 tried, as it does when events are spread at random; choose a bandwidth \
                 another way"
                    .to_string(),
            ),
        )
    } else if cbest == 0 {
        (
            Some(sds[0]),
            Some("the best value is at the lower end of the range tried; widen the range".into()),
        )
    } else {
        (Some(sds[cbest]), None)
    };
    Ok(BandwidthChoice {
        method: BandwidthMethod::DiggleMse,
        bandwidth_m,
        reference_m: None,
        candidates_m: sds.to_vec(),
        criterion: criterion.into_iter().map(Some).collect(),
        note,
    })
}

/// Nearest other event of each event: (index, squared distance). Coincident
/// events are each other's nearest at distance 0; ties go to the lower index.
fn nearest_others(x: &[f64], y: &[f64]) -> Vec<(usize, f64)> {
    match GridIndex::new(x, y).nearest_neighbours() {
        Some(nn) => nn
            .into_iter()
            .enumerate()
            .map(|(i, (j, d))| {
                let d2 = if j == i {
                    d
                } else {
                    (x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2)
                };
                (j, d2)
            })
            .collect(),
        None => (0..x.len()).map(|i| (i, f64::INFINITY)).collect(),
    }
}
