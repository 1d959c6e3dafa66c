//! The inhomogeneous K and L functions (Baddeley, Møller & Waagepetersen 2000).
//!
//! **Reference.** Baddeley, A. J., Møller, J. & Waagepetersen, R. (2000).
//! "Non- and semi-parametric estimation of interaction in inhomogeneous
//! point patterns". *Statistica Neerlandica* 54(3), 329–350.
//!
//! **Question.** Where the intensity varies (cases follow where people
//! live), do the events still sit closer together (or further apart) than
//! that varying intensity alone explains? K_inhom weights each pair by the
//! inverse of the intensity at its two points, so a pattern whose only
//! structure is its varying intensity (an inhomogeneous Poisson process)
//! has K_inhom(r) = πr² and L_inhom(r) = r at every r.
//!
//! **Estimator.**
//! K̂_inhom(r) = (1/|W|) · Σ_{i≠j} 1{d_ij ≤ r} · e_ij / (λ̂(x_i) λ̂(x_j)),
//! L̂_inhom = √(K̂_inhom/π), with the edge weights e_ij of the clustering
//! section (isotropic, translation or none; one visit of the pairs with
//! [`Context::for_each_k_pair`]). **Normalisation by |W|**, the area of the
//! study area: with the true intensity the estimator is then unbiased for
//! πr² (Campbell's theorem), and it is the form of the paper. The
//! alternative Σ_i 1/λ̂(x_i) in place of |W| corrects an intensity whose
//! overall level is off; here the level is set on purpose (scaled to the
//! number of cases, or left-one-out from the events), and the ratio
//! Σ_i 1/λ̂(x_i) / |W| is reported (`inverse_intensity_ratio`) so a level
//! that is off shows. With a constant λ̂ = n/|W|, K̂_inhom = (n − 1)/n ·
//! K̂, K̂ the crate's K estimator, which divides by n(n − 1).
//!
//! **Intensity.** λ̂ comes from the kernel estimator of [`crate::intensity`]
//! (same kernels, same edge correction), either
//! * from the **population layer**: λ̂₁(x) = (n₁/N₀) · λ̂₀(x), λ̂₀ the kernel
//!   estimate of the controls (weighted by their count when the layer has a
//!   count column), N₀ the number of controls or the total count, n₁ the
//!   number of cases. λ̂₀ does not change between simulations, so it is
//!   computed once as a surface on a grid with at least 8 cells per kernel
//!   SD (256 to 1024 cells along the longer side; binned evaluation of the
//!   intensity module) and read by bilinear interpolation at the cases and
//!   at every simulated point alike (cells outside the study area keep
//!   their value, so readings near the boundary are not pulled towards 0); or
//! * from the **events themselves**, left one out: λ̂_{−i}(x_i), summed
//!   exactly over the other events ([`PointIntensity`]); the plug-in value
//!   includes the point's own bump and is inflated, which biases K̂_inhom
//!   downward.
//!
//! Bandwidth: the normal-reference rule of the intensity module on the
//! points smoothed (the controls, or the events), or fixed metres. An
//! intensity below 1 % of the average n₁/|W| at a point (a case where the
//! population layer has almost no one, or an isolated event) is raised to
//! that floor, so one point cannot dominate the sum; how many were raised
//! is reported.
//!
//! **Test.** The null model is an inhomogeneous Poisson pattern of n₁ points
//! (the observed number, as the clustering section conditions on n) with
//! density proportional to the estimated intensity, simulated by thinning:
//! uniform proposals in the study area ([`Window::sample_one`]) kept with
//! probability λ̂(u)/λ_max, λ̂(u) read from the kernel surface on the
//! intensity grid. Simulation j uses only `stream_rng(seed, j)`. For each
//! simulated pattern λ̂ at its points is obtained **the same way as for the
//! data**: from the (fixed) population layer, or, when the intensity came
//! from the events, re-estimated from the simulated points with the same
//! bandwidth rule and left one out — an estimated intensity absorbs part
//! of any clustering and biases K̂_inhom, and only the same estimation on
//! the simulations makes the comparison like with like. Because of that
//! bias the reference curve of the global tests is the mean of the data's
//! and the simulations' L̂_inhom (keeping them exchangeable), not r; the
//! maximum-deviation and DCLF tests, rank p-values p = (1 + #{T_j ≥
//! T_obs})/(m + 1) and the global band are those of the clustering
//! envelopes ([`summarise`]).

use crate::distance::csr::stream_rng;
use crate::distance::edge::Correction;
use crate::distance::envelope::{
    check_distance_range, distance_fields, summarise, GlobalTest, Reference,
};
use crate::distance::functions::{l_from_k, Context, FunctionParams, Needs};
use crate::distance::verdict::{departures, fmt_m, fmt_p, range_list, Departure, DistanceRange};
use crate::error::AnalysisError;
use crate::intensity::at_points::{GridSurface, PointIntensity, SurfaceParts};
use crate::intensity::Kernel;
use crate::intensity::{bandwidth, BandwidthMethod, BandwidthOptions, EdgeCorrection, GridOptions};
use crate::rng::Rng;
use crate::window::Window;
use rand::RngExt;
use serde::{Deserialize, Serialize};

/// Where the intensity comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IntensitySource {
    /// The population layer (controls or counts), scaled to the cases.
    #[default]
    Population,
    /// The events themselves, left one out.
    Events,
}

/// Options of the inhomogeneous K test (`inhomKStart` in the JS API): the
/// one home of their defaults and limits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct InhomKOptions {
    pub intensity_from: IntensitySource,
    pub kernel: Kernel,
    /// `normal_reference` or `fixed` (with `bandwidth_m`).
    pub bandwidth_method: BandwidthMethod,
    /// The bandwidth when fixed, m (Gaussian: SD; quartic: radius).
    pub bandwidth_m: Option<f64>,
    /// Edge correction of the intensity estimate.
    pub intensity_edge: EdgeCorrection,
    /// Simulated inhomogeneous Poisson patterns.
    pub n_sim: usize,
    pub seed: u64,
    pub alpha: f64,
    pub r_min_m: Option<f64>,
    pub r_max_m: Option<f64>,
    pub n_steps: usize,
    /// Edge correction of K: isotropic, translation or none.
    pub correction: Correction,
}

impl Default for InhomKOptions {
    fn default() -> Self {
        InhomKOptions {
            intensity_from: IntensitySource::Population,
            kernel: Kernel::Gaussian,
            bandwidth_method: BandwidthMethod::NormalReference,
            bandwidth_m: None,
            intensity_edge: EdgeCorrection::Uniform,
            n_sim: 99,
            seed: 0,
            alpha: 0.05,
            r_min_m: None,
            r_max_m: None,
            n_steps: 50,
            correction: Correction::Isotropic,
        }
    }
}

impl crate::params::Params for InhomKOptions {
    const NAME: &'static str = "inhomKStart";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::{Field, EXTENT_FACTOR};
        let mut v = vec![
            Field::choice(
                "intensity_from",
                &["population", "events"],
                "where the intensity comes from: the population layer, or the events themselves (left one out)",
            ),
            Field::choice("kernel", &["gaussian", "quartic"], "kernel of the intensity estimate"),
            Field::choice(
                "bandwidth_method",
                &["normal_reference", "fixed"],
                "bandwidth of the intensity estimate: the rule of thumb, or bandwidth_m",
            ),
            Field::number(
                "bandwidth_m",
                Some("m"),
                "the bandwidth when bandwidth_method is fixed (Gaussian: SD; quartic: radius)",
            )
            .scale_length(EXTENT_FACTOR)
            .optional(),
            Field::choice(
                "intensity_edge",
                &["none", "uniform", "jones_diggle"],
                "edge correction of the intensity estimate",
            ),
            Field::integer("n_sim", "simulated patterns at the estimated intensity").range(1.0, 9999.0),
            Field::seed("seed of the simulations"),
            Field::number("alpha", None, "level of the global tests").above(0.0, Some(0.5)),
        ];
        v.extend(distance_fields(
            "start of the tested distances; empty = the first distance above 0",
        ));
        v.push(Field::choice(
            "correction",
            &["isotropic", "translation", "none"],
            "edge correction of K",
        ));
        v
    }
    fn check(&self) -> Result<(), AnalysisError> {
        check_distance_range(self.r_min_m, self.r_max_m)?;
        match self.bandwidth_method {
            BandwidthMethod::Fixed if self.bandwidth_m.is_none() => {
                return Err(crate::params::bad(
                    "bandwidth_m",
                    "a fixed bandwidth needs bandwidth_m (metres)",
                ))
            }
            BandwidthMethod::NormalReference | BandwidthMethod::Fixed => {}
            _ => {
                return Err(crate::params::bad(
                    "bandwidth_method",
                    "must be normal_reference or fixed (the intensity is re-estimated for every simulated pattern, so a bandwidth search per pattern is not offered)",
                ))
            }
        }
        if self.correction == Correction::Border {
            return Err(crate::params::bad(
                "correction",
                "the border correction is not available for the inhomogeneous K: use isotropic, translation or none",
            ));
        }
        Ok(())
    }
}

/// What the observed L_inhom says.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum InhomOutcome {
    /// Inside the global band: the varying intensity explains the pattern.
    ExplainedByIntensity,
    /// Above the band: closer together than the intensity explains.
    Clustered,
    /// Below the band: further apart than the intensity explains.
    Regular,
    Mixed,
}

/// Result of the inhomogeneous K test. Curves are on `r`.
#[derive(Debug, Clone, Serialize)]
pub struct InhomKResult {
    pub r: Vec<f64>,
    /// L̂_inhom(r) of the data, m.
    pub observed: Vec<f64>,
    /// K̂_inhom(r) of the data, m².
    pub k_inhom: Vec<f64>,
    /// L = r: the value under an inhomogeneous Poisson pattern with the
    /// true intensity.
    pub theoretical: Vec<f64>,
    /// Mean of the data's and the simulations' L̂_inhom: the reference of
    /// the global tests.
    pub reference_curve: Vec<f64>,
    pub sim_mean: Vec<f64>,
    pub pointwise_lo: Vec<f64>,
    pub pointwise_hi: Vec<f64>,
    pub global_lo: Vec<f64>,
    pub global_hi: Vec<f64>,
    pub test_r_min: f64,
    pub test_r_max: f64,
    pub mad: GlobalTest,
    pub dclf: GlobalTest,
    pub alpha: f64,
    pub k_rank: usize,
    pub n_sim: usize,
    pub seed: u64,
    pub n_cases: usize,
    /// Rows of the population layer (0 when the intensity is from the events).
    pub n_controls: usize,
    /// N₀: the number of controls or their total count.
    pub total_controls: f64,
    pub intensity_from: IntensitySource,
    pub kernel: Kernel,
    pub bandwidth_m: f64,
    /// How the bandwidth was chosen, in words.
    pub bandwidth_rule: String,
    pub intensity_edge: EdgeCorrection,
    pub correction: Correction,
    pub r_max_rule: String,
    /// Σ_i 1/λ̂(x_i) / |W| over the data (1 when the intensity's level fits).
    pub inverse_intensity_ratio: f64,
    /// Data points whose intensity was raised to the floor.
    pub floored_points: usize,
    pub capped_weights: u64,
    pub outcome: InhomOutcome,
    pub ranges: Vec<DistanceRange>,
    pub verdict: String,
    pub caveats: Vec<String>,
    pub warnings: Vec<String>,
}

/// Largest grid (cells along the longer side) for the population's surface.
const POPULATION_MAX_CELLS: usize = 1024;

/// How the intensity at a pattern's points is obtained.
enum Model {
    /// The population layer's surface ([`InhomKJob::sampler`]) times n₁/N₀.
    Population { scale: f64 },
    /// Re-estimated from the points themselves, left one out.
    Events,
}

/// An inhomogeneous K test that can be advanced in batches (progress and
/// Cancel between them). Simulation j depends only on the seed and j.
pub struct InhomKJob {
    sim: Simulation,
    /// Remarks about the intensity estimate for the warnings.
    notes: Vec<String>,
    k_obs: Vec<f64>,
    l_obs: Vec<f64>,
    sims: Vec<f64>,
    done: usize,
    capped: u64,
    floored: usize,
    floored_sims: usize,
    bandwidth_m: f64,
    bandwidth_rule: String,
    n_controls: usize,
    total_controls: f64,
    inverse_ratio: f64,
}

/// K̂_inhom on `ctx.r` for points (x, y) with intensity `lambda` (per m²)
/// at each; also how many pair weights reached the cap.
pub(crate) fn k_inhom(
    ctx: &Context,
    x: &[f64],
    y: &[f64],
    lambda: &[f64],
) -> Result<(Vec<f64>, u64), AnalysisError> {
    if lambda.len() != x.len() || y.len() != x.len() {
        return Err(crate::params::bad(
            "intensity",
            "one intensity value per point is needed",
        ));
    }
    if lambda.iter().any(|v| !(v.is_finite() && *v > 0.0)) {
        return Err(crate::params::bad(
            "intensity",
            "every point needs a positive intensity",
        ));
    }
    let bins = ctx.r.len();
    let mut s = vec![0.0; bins];
    let inv: Vec<f64> = lambda.iter().map(|v| 1.0 / v).collect();
    let capped = ctx.for_each_k_pair(x, y, |i, j, k, w| {
        if k < bins {
            s[k] += w * inv[i] * inv[j];
        }
    })?;
    let area = ctx.region.area();
    let mut acc = 0.0;
    Ok((
        s.iter()
            .map(|v| {
                acc += v;
                acc / area
            })
            .collect(),
        capped,
    ))
}

/// Raises intensities below `floor` (or not a number) to it; returns how many.
fn apply_floor(lambda: &mut [f64], floor: f64) -> usize {
    let mut k = 0;
    for v in lambda.iter_mut() {
        if v.is_nan() || *v < floor {
            *v = floor;
            k += 1;
        }
    }
    k
}

/// The bandwidth for points (x, y) by the options' rule, metres.
fn bandwidth_for(
    x: &[f64],
    y: &[f64],
    window: &Window,
    o: &InhomKOptions,
    grid: &GridOptions,
) -> Result<f64, AnalysisError> {
    let c = bandwidth::choose(
        x,
        y,
        window,
        o.kernel,
        o.intensity_edge,
        &BandwidthOptions {
            method: o.bandwidth_method,
            fixed_m: o.bandwidth_m,
            ..Default::default()
        },
        grid,
    )?;
    c.bandwidth_m.ok_or_else(|| {
        crate::params::bad(
            "bandwidth_m",
            c.note
                .unwrap_or_else(|| "no bandwidth could be chosen".into()),
        )
    })
}

/// `n` points of an inhomogeneous Poisson pattern (given n) with density
/// proportional to `surface`, by thinning uniform proposals in `window`.
pub(crate) fn sample_thinned(
    surface: &GridSurface,
    window: &Window,
    n: usize,
    rng: &mut Rng,
) -> Result<(Vec<f64>, Vec<f64>), AnalysisError> {
    let max = surface.max();
    if !(max.is_finite() && max > 0.0) {
        return Err(crate::params::bad(
            "intensity",
            "the estimated intensity is zero everywhere in the study area",
        ));
    }
    let (mut xs, mut ys) = (Vec::with_capacity(n), Vec::with_capacity(n));
    let limit = 20_000u64 * (n as u64 + 10);
    let mut tries = 0u64;
    while xs.len() < n {
        tries += 1;
        if tries > limit {
            return Err(crate::params::bad(
                "intensity",
                "the estimated intensity is too concentrated to simulate from (fewer than 1 in 20,000 proposals kept): use a larger bandwidth",
            ));
        }
        let (x, y) = window.sample_one(rng);
        let u: f64 = rng.random();
        if u * max < surface.at(x, y) {
            xs.push(x);
            ys.push(y);
        }
    }
    Ok((xs, ys))
}

/// What simulating needs: the study area and distances, the options, the
/// number of cases, how the intensity is obtained and the surface the
/// patterns are drawn from (never the data's locations).
struct Simulation {
    ctx: Context,
    opts: InhomKOptions,
    n: usize,
    model: Model,
    sampler: GridSurface,
    grid: GridOptions,
}

impl Simulation {
    /// The L̂_inhom curve of simulation j (from its own stream), and how
    /// many of its points had their intensity raised to the floor.
    fn simulate(&self, j: usize) -> Result<(Vec<f64>, usize), AnalysisError> {
        let mut rng = stream_rng(self.opts.seed, j as u64);
        let w = &self.ctx.region;
        let (x, y) = sample_thinned(&self.sampler, w, self.n, &mut rng)?;
        let mut lambda = match &self.model {
            Model::Population { scale } => x
                .iter()
                .zip(&y)
                .map(|(&a, &b)| self.sampler.at(a, b) * scale)
                .collect(),
            Model::Events => {
                let h = bandwidth_for(&x, &y, w, &self.opts, &self.grid)?;
                PointIntensity::new(
                    &x,
                    &y,
                    None,
                    w,
                    self.opts.kernel,
                    h,
                    self.opts.intensity_edge,
                    &self.grid,
                )?
                .leave_one_out()
            }
        };
        let floored = apply_floor(&mut lambda, 0.01 * self.n as f64 / w.area());
        let (k, _) = k_inhom(&self.ctx, &x, &y, &lambda)?;
        Ok((l_from_k(&k), floored))
    }

    /// Simulations `from..to`, row after row: each row the L̂_inhom curve
    /// followed by the number of its points raised to the floor.
    fn simulate_range(&self, from: usize, to: usize) -> Result<Vec<f64>, AnalysisError> {
        let to = to.min(self.opts.n_sim);
        let mut out = Vec::with_capacity(to.saturating_sub(from) * (self.ctx.r.len() + 1));
        for j in from..to {
            let (curve, floored) = self.simulate(j)?;
            out.extend_from_slice(&curve);
            out.push(floored as f64);
        }
        Ok(out)
    }

    /// What another worker needs to simulate for this run.
    fn share(&self) -> InhomKShare {
        InhomKShare {
            polygons: self.ctx.region.polygons().to_vec(),
            n: self.n,
            opts: self.opts.clone(),
            population_scale: match self.model {
                Model::Population { scale } => Some(scale),
                Model::Events => None,
            },
            surface: self.sampler.parts(),
        }
    }
}

/// What a helper needs to simulate parts of a run elsewhere (another
/// thread or Web Worker): the study area, the number of cases, the options,
/// how the intensity is obtained (the population's scale n₁/N₀, or from the
/// events) and the smoothed surface the patterns are drawn from; never a
/// location of the data. See [`InhomKSimulator`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InhomKShare {
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    pub n: usize,
    pub opts: InhomKOptions,
    pub population_scale: Option<f64>,
    pub surface: SurfaceParts,
}

/// Simulates ranges of a shared run: the same rows as
/// [`InhomKJob::simulate_range`], because simulation j always uses stream j
/// of the seed.
pub struct InhomKSimulator {
    sim: Simulation,
}

impl InhomKSimulator {
    pub fn new(share: &InhomKShare) -> Result<InhomKSimulator, AnalysisError> {
        use crate::params::Params;
        share.opts.validate_in(None)?;
        let region =
            Window::from_polygons(share.polygons.clone(), crate::window::WindowOrigin::File)
                .map_err(|e| crate::params::bad("study area", e.to_string()))?;
        let fp = FunctionParams {
            r_max: share.opts.r_max_m,
            n_steps: share.opts.n_steps,
            correction: share.opts.correction,
            ..Default::default()
        };
        let ctx = Context::new(region, share.n, &fp, Needs::K_ONLY)?;
        let model = match share.population_scale {
            Some(scale) if scale.is_finite() && scale > 0.0 => Model::Population { scale },
            Some(_) => {
                return Err(crate::params::bad(
                    "population_scale",
                    "must be a positive number",
                ))
            }
            None => Model::Events,
        };
        Ok(InhomKSimulator {
            sim: Simulation {
                ctx,
                opts: share.opts.clone(),
                n: share.n,
                model,
                sampler: GridSurface::from_parts(&share.surface)?,
                grid: GridOptions::default(),
            },
        })
    }

    /// Rows of simulations `from..to` (see [`InhomKJob::simulate_range`]).
    pub fn simulate_range(&self, from: usize, to: usize) -> Result<Vec<f64>, AnalysisError> {
        self.sim.simulate_range(from, to)
    }
}

impl InhomKJob {
    /// Prepares the test of the cases (x, y lists, metres) in `window`,
    /// with the intensity from `controls` (points and optional counts) or
    /// from the cases (`controls` = `None`, or `intensity_from = events`),
    /// and computes the observed curve.
    #[allow(clippy::type_complexity)]
    pub fn new(
        cases: (&[f64], &[f64]),
        controls: Option<(&[f64], &[f64], Option<&[f64]>)>,
        window: &Window,
        opts: &InhomKOptions,
    ) -> Result<InhomKJob, AnalysisError> {
        use crate::params::Params;
        opts.validate_in(None)?;
        let (x, y) = cases;
        let n = x.len();
        if n < 2 || y.len() != n {
            return Err(AnalysisError::TooFewPoints {
                needed: 2,
                found: n,
            });
        }
        let fp = FunctionParams {
            r_max: opts.r_max_m,
            n_steps: opts.n_steps,
            correction: opts.correction,
            ..Default::default()
        };
        let ctx = Context::new(window.clone(), n, &fp, Needs::K_ONLY)?;
        let grid = GridOptions::default();
        let area = window.area();
        let floor = 0.01 * n as f64 / area;
        let rule_words = |h: f64, of: &str| match opts.bandwidth_method {
            BandwidthMethod::Fixed => format!("{} (fixed by you)", fmt_m(h)),
            _ => format!("{} (rule of thumb, normal reference, on {of})", fmt_m(h)),
        };
        let mut notes = Vec::new();
        let (model, sampler, mut lambda, h, rule, n0, total0) = match opts.intensity_from {
            IntensitySource::Population => {
                let (cx, cy, cw) = controls.ok_or_else(|| {
                    crate::params::bad(
                        "intensity_from",
                        "the intensity from the population needs a population layer",
                    )
                })?;
                if cx.len() < 2 || cy.len() != cx.len() {
                    return Err(AnalysisError::TooFewPoints {
                        needed: 2,
                        found: cx.len(),
                    });
                }
                let total: f64 = cw.map_or(cx.len() as f64, |w| w.iter().sum());
                if !(total.is_finite() && total > 0.0) {
                    return Err(crate::params::bad(
                        "population",
                        "the population layer's counts add up to nothing",
                    ));
                }
                let h = bandwidth_for(cx, cy, window, opts, &grid)?;
                // The population's surface is computed once and read at
                // every point (data and simulations alike): on a grid fine
                // enough for the bandwidth (at least 8 cells per kernel SD,
                // up to POPULATION_MAX_CELLS along the longer side).
                let [bx0, by0, bx1, by1] = window.bbox();
                let long = (bx1 - bx0).max(by1 - by0);
                let cells = ((8.0 * long / opts.kernel.sd(h)).ceil() as usize)
                    .clamp(grid.cells_long_side, POPULATION_MAX_CELLS);
                let pop_grid = GridOptions {
                    cells_long_side: cells,
                    cell_m: None,
                };
                let cell = long / cells as f64;
                if opts.kernel.sd(h) < 4.0 * cell {
                    notes.push(format!(
                        "the bandwidth ({}) spans under four cells of the intensity grid ({}): the population's intensity is read from a coarse grid",
                        fmt_m(h),
                        fmt_m(cell)
                    ));
                }
                let est = PointIntensity::new(
                    cx,
                    cy,
                    cw,
                    window,
                    opts.kernel,
                    h,
                    opts.intensity_edge,
                    &pop_grid,
                )?;
                let scale = n as f64 / total;
                let sampler = est.surface();
                let lambda: Vec<f64> = x
                    .iter()
                    .zip(y)
                    .map(|(&a, &b)| sampler.at(a, b) * scale)
                    .collect();
                (
                    Model::Population { scale },
                    sampler,
                    lambda,
                    h,
                    rule_words(h, "the population layer"),
                    cx.len(),
                    total,
                )
            }
            IntensitySource::Events => {
                let h = bandwidth_for(x, y, window, opts, &grid)?;
                let est = PointIntensity::new(
                    x,
                    y,
                    None,
                    window,
                    opts.kernel,
                    h,
                    opts.intensity_edge,
                    &grid,
                )?;
                let lambda = est.leave_one_out();
                (
                    Model::Events,
                    est.surface(),
                    lambda,
                    h,
                    rule_words(h, "the events"),
                    0,
                    0.0,
                )
            }
        };
        let floored = apply_floor(&mut lambda, floor);
        let inverse_ratio = lambda.iter().map(|v| 1.0 / v).sum::<f64>() / area;
        let (k_obs, capped) = k_inhom(&ctx, x, y, &lambda)?;
        let l_obs = l_from_k(&k_obs);
        Ok(InhomKJob {
            sims: Vec::with_capacity(opts.n_sim * ctx.r.len()),
            sim: Simulation {
                ctx,
                opts: opts.clone(),
                n,
                model,
                sampler,
                grid,
            },
            notes,
            k_obs,
            l_obs,
            done: 0,
            capped,
            floored,
            floored_sims: 0,
            bandwidth_m: h,
            bandwidth_rule: rule,
            n_controls: n0,
            total_controls: total0,
            inverse_ratio,
        })
    }

    /// Runs up to `k` more simulations; returns how many are done.
    pub fn run_batch(&mut self, k: usize) -> Result<usize, AnalysisError> {
        let to = (self.done + k).min(self.sim.opts.n_sim);
        for j in self.done..to {
            let (curve, floored) = self.sim.simulate(j)?;
            self.sims.extend_from_slice(&curve);
            self.floored_sims += floored;
            self.done = j + 1;
        }
        Ok(self.done)
    }

    pub fn done(&self) -> usize {
        self.done
    }

    /// What a helper needs to simulate parts of this run ([`InhomKShare`]).
    pub fn share(&self) -> InhomKShare {
        self.sim.share()
    }

    /// Rows of simulations `from..to` (each the L̂_inhom curve and then the
    /// number of floored points), without changing the job.
    pub fn simulate_range(&self, from: usize, to: usize) -> Result<Vec<f64>, AnalysisError> {
        self.sim.simulate_range(from, to)
    }

    /// Appends rows of simulations starting at `from`, which must be the
    /// number done so far; returns the number done.
    pub fn add_simulated(&mut self, from: usize, rows: &[f64]) -> Result<usize, AnalysisError> {
        let width = self.sim.ctx.r.len() + 1;
        crate::params::piece_rows(
            "simulations",
            "simulation",
            (from, self.done, self.sim.opts.n_sim),
            rows.len(),
            width,
        )?;
        for row in rows.chunks(width) {
            let (curve, floored) = row.split_at(width - 1);
            self.sims.extend_from_slice(curve);
            self.floored_sims += floored.first().copied().unwrap_or(0.0) as usize;
            self.done += 1;
        }
        Ok(self.done)
    }

    pub fn total(&self) -> usize {
        self.sim.opts.n_sim
    }

    /// The distances of the curves, m.
    pub fn r(&self) -> &[f64] {
        &self.sim.ctx.r
    }

    /// The bandwidth of the intensity estimate of the data, m.
    pub fn bandwidth_m(&self) -> f64 {
        self.bandwidth_m
    }

    /// Finishes the remaining simulations and summarises.
    pub fn finish(mut self) -> Result<InhomKResult, AnalysisError> {
        let rest = self.sim.opts.n_sim - self.done;
        self.run_batch(rest)?;
        let r = self.sim.ctx.r.clone();
        let bands = summarise(
            &r,
            &self.l_obs,
            &self.sims,
            &r,
            Reference::SimulationMean,
            // r = 0 says nothing about interaction: tested from the first
            // positive distance unless the user says otherwise.
            self.sim.opts.r_min_m.unwrap_or(f64::MIN_POSITIVE),
            self.sim.opts.alpha,
        );
        let mut warnings = self.sim.ctx.warnings.clone();
        warnings.extend(bands.warnings.iter().cloned());
        warnings.extend(self.notes.iter().cloned());
        let what = match self.sim.opts.intensity_from {
            IntensitySource::Population => {
                "case(s) lie where the population layer has almost no one"
            }
            IntensitySource::Events => "event(s) have almost no other event within the bandwidth",
        };
        if self.floored > 0 {
            warnings.push(format!(
                "{} {what}: their estimated intensity was below 1% of the average and was raised to it, so no single point dominates K",
                self.floored
            ));
        }
        if self.floored_sims > 0 {
            warnings.push(format!(
                "in the simulations, {} point(s) in all had their intensity raised to the same floor",
                self.floored_sims
            ));
        }
        if self.capped > 0 {
            warnings.push(format!(
                "{} pair weights reached the cap of {}",
                self.capped, self.sim.ctx.cap
            ));
        }
        let ranges = departures(
            &r,
            &self.l_obs,
            &bands.global_lo,
            &bands.global_hi,
            &bands.in_test,
            true,
        );
        let above = ranges.iter().any(|g| g.departure == Departure::Clustered);
        let below = ranges.iter().any(|g| g.departure == Departure::Regular);
        let outcome = match (bands.mad.rejects, above, below) {
            (false, _, _) => InhomOutcome::ExplainedByIntensity,
            (true, true, true) => InhomOutcome::Mixed,
            (true, false, true) => InhomOutcome::Regular,
            _ => InhomOutcome::Clustered,
        };
        let verdict = self.verdict(outcome, &ranges, &bands.mad, &bands.dclf);
        let mut caveats = vec![
            format!(
                "The answer depends on how the intensity was estimated, above all on the bandwidth ({}): a smaller bandwidth lets the intensity absorb more of any clustering, a larger one less. Try another bandwidth before relying on the result.",
                fmt_m(self.bandwidth_m)
            ),
        ];
        caveats.push(match self.sim.opts.intensity_from {
            IntensitySource::Population => "The population layer stands for the population at risk: if it is from another time, or places people differently (geocoding, rounding, counts at block centres), the test measures that difference too.".into(),
            IntensitySource::Events => "With the intensity smoothed from the events themselves, clustering and a varying intensity cannot be told apart at distances near the bandwidth and beyond: only interaction at distances well below the bandwidth can show.".into(),
        });
        caveats.push("The inhomogeneous K assumes the clustering, if any, is the same everywhere once the intensity is allowed for; a departure says where pairs are closer than expected, not why, and is not one test per distance.".into());
        caveats.push("The pointwise band is not a test: a curve crossing it at some distance is expected by chance when many distances are looked at.".into());
        Ok(InhomKResult {
            observed: self.l_obs,
            k_inhom: self.k_obs,
            theoretical: r.clone(),
            reference_curve: bands.reference_curve,
            sim_mean: bands.sim_mean,
            pointwise_lo: bands.pointwise_lo,
            pointwise_hi: bands.pointwise_hi,
            global_lo: bands.global_lo,
            global_hi: bands.global_hi,
            test_r_min: bands.test_r_min,
            test_r_max: bands.test_r_max,
            mad: bands.mad,
            dclf: bands.dclf,
            alpha: self.sim.opts.alpha,
            k_rank: bands.k_rank,
            n_sim: self.sim.opts.n_sim,
            seed: self.sim.opts.seed,
            n_cases: self.sim.n,
            n_controls: self.n_controls,
            total_controls: self.total_controls,
            intensity_from: self.sim.opts.intensity_from,
            kernel: self.sim.opts.kernel,
            bandwidth_m: self.bandwidth_m,
            bandwidth_rule: self.bandwidth_rule,
            intensity_edge: self.sim.opts.intensity_edge,
            correction: self.sim.opts.correction,
            r_max_rule: self.sim.ctx.r_max_rule.clone(),
            inverse_intensity_ratio: self.inverse_ratio,
            floored_points: self.floored,
            capped_weights: self.capped,
            outcome,
            ranges,
            verdict,
            caveats,
            warnings,
            r,
        })
    }

    fn verdict(
        &self,
        outcome: InhomOutcome,
        ranges: &[DistanceRange],
        mad: &GlobalTest,
        dclf: &GlobalTest,
    ) -> String {
        let (subject, intensity, allowed) = match self.sim.opts.intensity_from {
            IntensitySource::Population => (
                "Cases",
                "the population layer",
                "the intensity from the population layer",
            ),
            IntensitySource::Events => (
                "Events",
                "their own smoothed intensity",
                "their own smoothed intensity",
            ),
        };
        let test = format!(
            "maximum-deviation test p = {}, {} simulations; DCLF test p = {}",
            fmt_p(mad.p_value),
            self.sim.opts.n_sim,
            fmt_p(dclf.p_value)
        );
        let list = |d: Departure| range_list(ranges, d);
        match outcome {
            InhomOutcome::ExplainedByIntensity => format!(
                "Explained by the varying intensity: once {allowed} is allowed for, {} are no closer together or further apart than chance; L stays inside the global {:.0}% band ({test}).",
                subject.to_lowercase(),
                100.0 * (1.0 - self.sim.opts.alpha)
            ),
            InhomOutcome::Clustered => format!(
                "{subject} cluster beyond what {intensity} explains, at distances {} ({test}).",
                list(Departure::Clustered)
            ),
            InhomOutcome::Regular => format!(
                "{subject} are further apart than {intensity} explains, at distances {} ({test}).",
                list(Departure::Regular)
            ),
            InhomOutcome::Mixed => format!(
                "{subject} cluster beyond what {intensity} explains at distances {} and are further apart at {} ({test}).",
                list(Departure::Clustered),
                list(Departure::Regular)
            ),
        }
    }
}

/// Runs a whole test at once (no progress reports).
#[allow(clippy::type_complexity)]
pub fn inhomogeneous_k(
    cases: (&[f64], &[f64]),
    controls: Option<(&[f64], &[f64], Option<&[f64]>)>,
    window: &Window,
    opts: &InhomKOptions,
) -> Result<InhomKResult, AnalysisError> {
    InhomKJob::new(cases, controls, window, opts)?.finish()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::distance::csr::poisson;
    use crate::rng::rng_from_seed;

    fn context(w: &Window, n: usize, correction: Correction, r_max: f64, steps: usize) -> Context {
        let p = FunctionParams {
            r_max: Some(r_max),
            n_steps: steps,
            correction,
            ..Default::default()
        };
        Context::new(w.clone(), n, &p, Needs::K_ONLY).unwrap()
    }

    /// An inhomogeneous Poisson pattern with λ(x, y) = 400x on the unit
    /// square: N ~ Poisson(200), points by thinning uniform proposals with
    /// λ_max = 400 (accept with probability x).
    fn poisson_400x(rng: &mut Rng) -> (Vec<f64>, Vec<f64>) {
        let w = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
        let n = poisson(rng, 200.0);
        let (mut x, mut y) = (vec![], vec![]);
        while x.len() < n {
            let (px, py) = w.sample_one(rng);
            if rng.random::<f64>() < px {
                x.push(px);
                y.push(py);
            }
        }
        (x, y)
    }

    /// Check value (docs/methods.md#inhomogeneous-k): with the true
    /// intensity λ(x, y) = 400x on the unit square and the translation
    /// correction, K̂_inhom is unbiased for πr² (Campbell's theorem, the
    /// property the estimator of Baddeley, Møller & Waagepetersen 2000 is
    /// built on). Over 300 simulated patterns the mean at r = 0.05, 0.10,
    /// 0.15 lies within 4 Monte Carlo standard errors of πr² (4 SE: common
    /// practice for a Monte Carlo mean; the SE is the simulations' own SD /
    /// √300). The reference sheet's simulation gave 0.00772, 0.03230,
    /// 0.07224 against πr² = 0.00785, 0.03142, 0.07069 (its ±2–3 %); this
    /// seed gives 0.00810, 0.03148, 0.07156 with SEs 0.00028, 0.00050,
    /// 0.00129 (0.9, 0.1 and 0.7 SE from πr²).
    #[test]
    fn true_intensity_gives_pi_r_squared_on_average() {
        let w = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
        let mut rng = rng_from_seed(2000);
        let ks: Vec<Vec<f64>> = (0..300)
            .map(|_| {
                let (x, y) = poisson_400x(&mut rng);
                let ctx = context(&w, x.len(), Correction::Translation, 0.15, 3);
                let lambda: Vec<f64> = x.iter().map(|v| 400.0 * v).collect();
                k_inhom(&ctx, &x, &y, &lambda).unwrap().0
            })
            .collect();
        for (k, r) in [(1usize, 0.05f64), (2, 0.10), (3, 0.15)] {
            let v: Vec<f64> = ks.iter().map(|c| c[k]).collect();
            let mean = v.iter().sum::<f64>() / 300.0;
            let sd = (v.iter().map(|a| (a - mean).powi(2)).sum::<f64>() / 299.0).sqrt();
            let se = sd / 300f64.sqrt();
            let want = std::f64::consts::PI * r * r;
            assert!(
                (mean - want).abs() < 4.0 * se,
                "r={r}: mean {mean} se {se} πr² {want}"
            );
            eprintln!("r={r}: mean {mean:.5} se {se:.5} πr² {want:.5}");
            // 4 SE is under 15 % of πr² at every r here, so an intensity
            // 10 % off (K off by 21 %) fails.
            assert!(4.0 * se < 0.15 * want, "r={r}: se {se}");
        }
    }

    /// With a constant intensity λ = n/|W|, K̂_inhom = |W|/n² · Σ e_ij 1{…}
    /// and the crate's K = |W|/(n(n − 1)) · Σ e_ij 1{…}: they differ by
    /// exactly (n − 1)/n, for every correction, on a window with a hole.
    #[test]
    fn constant_intensity_is_k_times_n_minus_1_over_n() {
        let w = Window::rectangle_with_hole([0.0, 0.0, 10.0, 10.0], [4.0, 4.0, 6.0, 6.0]).unwrap();
        let mut rng = rng_from_seed(9);
        let (x, y) = w.sample_uniform(120, &mut rng);
        let n = x.len() as f64;
        let lambda = vec![n / w.area(); x.len()];
        for corr in [
            Correction::Isotropic,
            Correction::Translation,
            Correction::None,
        ] {
            let ctx = context(&w, x.len(), corr, 2.0, 20);
            let k = ctx.compute(&x, &y, Needs::K_ONLY).k;
            let (ki, _) = k_inhom(&ctx, &x, &y, &lambda).unwrap();
            assert!(k[20] > 0.0);
            for i in 0..k.len() {
                let want = k[i] * (n - 1.0) / n;
                assert!(
                    (ki[i] - want).abs() <= 1e-12 * (1.0 + want.abs()),
                    "{corr:?} r={}: {} vs {want}",
                    ctx.r[i],
                    ki[i]
                );
            }
        }
    }

    /// The observed curve with the intensity from the events, end to end,
    /// against a brute-force computation: a double loop over all ordered
    /// pairs, λ̂_{−i}(x_i) = Σ_{j≠i} k_h(x_i − x_j) by another double loop
    /// (no edge correction of the intensity, none for K), floor at 1 % of
    /// n/|W| as documented. A version that forgot to leave the point out
    /// (its own bump k_h(0) = 1/(2πh²) added) gives a clearly smaller K.
    #[test]
    fn events_intensity_is_left_one_out_end_to_end() {
        let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
        let mut rng = rng_from_seed(17);
        let (x, y) = w.sample_uniform(80, &mut rng);
        let h = 120.0;
        let opts = InhomKOptions {
            intensity_from: IntensitySource::Events,
            bandwidth_method: BandwidthMethod::Fixed,
            bandwidth_m: Some(h),
            intensity_edge: EdgeCorrection::None,
            correction: Correction::None,
            r_max_m: Some(200.0),
            n_steps: 4,
            n_sim: 1,
            ..Default::default()
        };
        let job = InhomKJob::new((&x, &y), None, &w, &opts).unwrap();
        let n = x.len();
        let floor = 0.01 * n as f64 / w.area();
        let kern = |d2: f64| Kernel::Gaussian.value(d2, h);
        let d2 = |i: usize, j: usize| (x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2);
        let loo: Vec<f64> = (0..n)
            .map(|i| {
                (0..n)
                    .filter(|&j| j != i)
                    .map(|j| kern(d2(i, j)))
                    .sum::<f64>()
                    .max(floor)
            })
            .collect();
        let brute = |lam: &[f64], r: f64| {
            let mut s = 0.0;
            for i in 0..n {
                for j in 0..n {
                    if i != j && d2(i, j).sqrt() <= r {
                        s += 1.0 / (lam[i] * lam[j]);
                    }
                }
            }
            s / w.area()
        };
        let plug_in: Vec<f64> = loo.iter().map(|v| v + kern(0.0)).collect();
        for (k, &r) in job.r().iter().enumerate() {
            let want = brute(&loo, r);
            assert!(
                (job.k_obs[k] - want).abs() <= 1e-9 * want.max(1e-300),
                "r={r}: {} vs {want}",
                job.k_obs[k]
            );
            if r > 0.0 {
                assert!(brute(&plug_in, r) < 0.8 * want, "r={r}");
            }
        }
    }

    /// Thinning draws points with density proportional to the surface:
    /// population points with density ∝ x on the unit square (mean x =
    /// 2/3 exactly), smoothed with a small bandwidth; 4000 simulated points
    /// have mean x within 0.02 of 2/3 (smoothing with the uniform edge
    /// correction moves the mean by less than that; the Monte Carlo SE is
    /// about 0.004).
    #[test]
    fn thinning_follows_the_surface() {
        let w = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
        let mut rng = rng_from_seed(3);
        let (mut cx, mut cy) = (vec![], vec![]);
        while cx.len() < 3000 {
            let (px, py) = w.sample_one(&mut rng);
            if rng.random::<f64>() < px {
                cx.push(px);
                cy.push(py);
            }
        }
        let est = PointIntensity::new(
            &cx,
            &cy,
            None,
            &w,
            Kernel::Gaussian,
            0.04,
            EdgeCorrection::Uniform,
            &GridOptions::default(),
        )
        .unwrap();
        let (sx, _) = sample_thinned(&est.surface(), &w, 4000, &mut rng).unwrap();
        let mean = sx.iter().sum::<f64>() / 4000.0;
        assert!((mean - 2.0 / 3.0).abs() < 0.02, "{mean}");
    }

    /// Cases: an inhomogeneous Poisson pattern following the population
    /// plus planted clumps; controls: the population. The test finds the
    /// clumps at short distances; the same cases without the clumps are
    /// explained by the intensity. Both use the population layer as counts
    /// at points too (each control twice as heavy: same intensity after
    /// scaling to n₁, so the same curves).
    #[allow(clippy::type_complexity)]
    fn population_and_cases(clumps: bool) -> (Window, (Vec<f64>, Vec<f64>), (Vec<f64>, Vec<f64>)) {
        let w = Window::rectangle(0.0, 0.0, 2000.0, 1000.0).unwrap();
        let mut rng = rng_from_seed(71);
        // Density ∝ x: twice as many people on the right as in the middle.
        let draw = |n: usize, rng: &mut Rng| {
            let (mut x, mut y) = (vec![], vec![]);
            while x.len() < n {
                let (px, py) = w.sample_one(rng);
                if rng.random::<f64>() < px / 2000.0 {
                    x.push(px);
                    y.push(py);
                }
            }
            (x, y)
        };
        let controls = draw(1500, &mut rng);
        let (mut x, mut y) = draw(if clumps { 150 } else { 250 }, &mut rng);
        if clumps {
            for c in 0..100 {
                let (cx, cy) = [(500.0, 300.0), (1500.0, 700.0)][c % 2];
                x.push(cx + 40.0 * (rng.random::<f64>() - 0.5));
                y.push(cy + 40.0 * (rng.random::<f64>() - 0.5));
            }
        }
        (w, (x, y), controls)
    }

    #[test]
    fn planted_clumps_beyond_the_population_are_found() {
        let (w, (x, y), (cx, cy)) = population_and_cases(true);
        let opts = InhomKOptions {
            n_sim: 39,
            seed: 5,
            r_max_m: Some(250.0),
            n_steps: 25,
            ..Default::default()
        };
        let res = inhomogeneous_k((&x, &y), Some((&cx, &cy, None)), &w, &opts).unwrap();
        assert_eq!(res.outcome, InhomOutcome::Clustered, "{}", res.verdict);
        assert!(res
            .verdict
            .starts_with("Cases cluster beyond what the population layer explains"));
        assert!((res.mad.p_value - 1.0 / 40.0).abs() < 1e-12);
        assert!(res.ranges[0].from_m <= 50.0, "{:?}", res.ranges);
        assert_eq!((res.n_cases, res.n_controls), (250, 1500));
        assert!(res.caveats[0].contains("bandwidth"));
        // Counts at points: every control counted twice gives the same
        // intensity once scaled to the cases, so the same observed curve.
        let twos = vec![2.0; cx.len()];
        let counted = InhomKJob::new((&x, &y), Some((&cx, &cy, Some(&twos))), &w, &opts).unwrap();
        assert_eq!(counted.total_controls, 3000.0);
        let plain = InhomKJob::new((&x, &y), Some((&cx, &cy, None)), &w, &opts).unwrap();
        for (a, b) in counted.l_obs.iter().zip(&plain.l_obs) {
            assert!((a - b).abs() <= 1e-9 * (1.0 + b.abs()));
        }
    }

    #[test]
    fn cases_following_the_population_are_explained() {
        let (w, (x, y), (cx, cy)) = population_and_cases(false);
        let opts = InhomKOptions {
            n_sim: 39,
            seed: 6,
            r_max_m: Some(250.0),
            n_steps: 25,
            ..Default::default()
        };
        let res = inhomogeneous_k((&x, &y), Some((&cx, &cy, None)), &w, &opts).unwrap();
        assert_eq!(
            res.outcome,
            InhomOutcome::ExplainedByIntensity,
            "{}",
            res.verdict
        );
        assert!(res
            .verdict
            .starts_with("Explained by the varying intensity"));
        assert!(
            (res.inverse_intensity_ratio - 1.0).abs() < 0.15,
            "{}",
            res.inverse_intensity_ratio
        );
    }

    /// Simulation j depends only on the seed and j: batches of any size
    /// give the same result as one run; another seed gives other
    /// simulations; for both intensity sources.
    #[test]
    fn reproducible_by_seed_whatever_the_batches() {
        let (w, (x, y), (cx, cy)) = population_and_cases(true);
        for from in [IntensitySource::Population, IntensitySource::Events] {
            let opts = InhomKOptions {
                intensity_from: from,
                n_sim: 12,
                seed: 44,
                r_max_m: Some(200.0),
                n_steps: 10,
                ..Default::default()
            };
            let ctl = Some((&cx[..], &cy[..], None));
            let once = inhomogeneous_k((&x, &y), ctl, &w, &opts).unwrap();
            let mut job = InhomKJob::new((&x, &y), ctl, &w, &opts).unwrap();
            for k in [1, 5, 2, 10] {
                job.run_batch(k).unwrap();
            }
            assert_eq!(job.done(), 12);
            let batched = job.finish().unwrap();
            assert_eq!(once.sim_mean, batched.sim_mean, "{from:?}");
            assert_eq!(once.pointwise_hi, batched.pointwise_hi);
            assert_eq!(once.mad.statistic, batched.mad.statistic);
            let other = inhomogeneous_k(
                (&x, &y),
                ctl,
                &w,
                &InhomKOptions {
                    seed: 45,
                    ..opts.clone()
                },
            )
            .unwrap();
            assert_eq!(other.observed, once.observed);
            assert_ne!(other.sim_mean, once.sim_mean);
        }
    }

    /// A helper built from the share (through JSON, as the page's workers
    /// pass it) simulates exactly the rows the job itself would, and the
    /// job fed those rows in pieces finishes with the same result as one
    /// that ran them; for both intensity sources.
    #[test]
    fn shared_simulations_equal_the_jobs_own() {
        let (w, (x, y), (cx, cy)) = population_and_cases(true);
        for from in [IntensitySource::Population, IntensitySource::Events] {
            let opts = InhomKOptions {
                intensity_from: from,
                n_sim: 9,
                seed: 21,
                r_max_m: Some(200.0),
                n_steps: 10,
                ..Default::default()
            };
            let ctl = Some((&cx[..], &cy[..], None));
            let job = InhomKJob::new((&x, &y), ctl, &w, &opts).unwrap();
            let json = serde_json::to_string(&job.share()).unwrap();
            assert!(
                !json.contains(&format!("{}", x[0])),
                "no case location in the share"
            );
            let helper = InhomKSimulator::new(&serde_json::from_str(&json).unwrap()).unwrap();
            let rows = helper.simulate_range(3, 7).unwrap();
            assert_eq!(rows, job.simulate_range(3, 7).unwrap(), "{from:?}");
            assert_eq!(rows.len(), 4 * (job.r().len() + 1));
            let mut fed = InhomKJob::new((&x, &y), ctl, &w, &opts).unwrap();
            assert_eq!(fed.run_batch(3).unwrap(), 3);
            assert!(fed.add_simulated(4, &rows).is_err(), "rows must follow on");
            assert_eq!(fed.add_simulated(3, &rows).unwrap(), 7);
            let rest = helper.simulate_range(7, 9).unwrap();
            assert_eq!(fed.add_simulated(7, &rest).unwrap(), 9);
            let fed = fed.finish().unwrap();
            let own = job.finish().unwrap();
            assert_eq!(fed.sim_mean, own.sim_mean);
            assert_eq!(fed.mad.p_value, own.mad.p_value);
            assert_eq!(fed.warnings, own.warnings);
        }
    }

    #[test]
    fn bad_options_and_missing_population_are_refused() {
        let (w, (x, y), (cx, cy)) = population_and_cases(false);
        let ctl = Some((&cx[..], &cy[..], None));
        for bad in [
            InhomKOptions {
                correction: Correction::Border,
                ..Default::default()
            },
            InhomKOptions {
                bandwidth_method: BandwidthMethod::Fixed,
                ..Default::default()
            },
            InhomKOptions {
                bandwidth_method: BandwidthMethod::LikelihoodCv,
                ..Default::default()
            },
        ] {
            assert!(matches!(
                InhomKJob::new((&x, &y), ctl, &w, &bad),
                Err(AnalysisError::BadParameter { .. })
            ));
        }
        assert!(InhomKJob::new((&x, &y), None, &w, &InhomKOptions::default()).is_err());
        assert!(matches!(
            InhomKJob::new((&x[..1], &y[..1]), ctl, &w, &InhomKOptions::default()),
            Err(AnalysisError::TooFewPoints { .. })
        ));
        let zeros = vec![0.0; cx.len()];
        assert!(InhomKJob::new(
            (&x, &y),
            Some((&cx, &cy, Some(&zeros))),
            &w,
            &InhomKOptions::default()
        )
        .is_err());
        let ctx = context(&w, x.len(), Correction::None, 100.0, 4);
        let mut lam = vec![1e-6; x.len()];
        lam[3] = 0.0;
        assert!(k_inhom(&ctx, &x, &y, &lam).is_err());
    }
}
