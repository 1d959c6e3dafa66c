//! The kernel relative-risk surface: where is the risk of being a case
//! raised or lowered compared with the population at risk?
//!
//! **References.** Bithell, J. F. (1990). "An application of density
//! estimation to geographical epidemiology". *Statistics in Medicine* 9(6),
//! 691–701. Kelsall, J. E. & Diggle, P. J. (1995). "Non-parametric
//! estimation of spatial variation in relative risk". *Statistics in
//! Medicine* 14(21–22), 2335–2342 (tolerance contours by Monte Carlo). The
//! likelihood cross-validation of the bandwidth follows Kelsall, J. E. &
//! Diggle, P. J. (1998). "Spatial variation in risk of disease: a
//! nonparametric binary regression approach". *Applied Statistics* 47(4),
//! 559–573 (reference and criterion from memory).
//!
//! **Estimator.** With `λ̂₁`, `λ̂₀` the kernel intensities of the cases and of
//! the controls (the controls' counts as weights when the population file
//! has a count column), both with the **same** Gaussian bandwidth `h` and
//! the same edge correction ([`crate::intensity`]), and
//! `f̂ = λ̂ / ∫_W λ̂` each normalised to integrate to 1 over the study area,
//! the log relative risk is `ρ̂(x) = ln f̂₁(x) − ln f̂₀(x)`: 0 where cases are
//! as common as the population predicts, `ln 2` where twice as common. With
//! the uniform correction `e_h(x)` divides both intensities and cancels in
//! the ratio except through the normalising integrals (tested).
//!
//! **Masking.** Where the control density is below `min_control_share`
//! (default 1 %, common practice with no single source) of its median over
//! the study area, the ratio rests on too few controls: such cells are
//! marked "too few controls", never given a value. Where the case density
//! is (numerically) zero the ratio is capped: `ρ̂` is clipped to
//! `±ln 1000` ([`RHO_CAP`]), in the data and in every relabelling alike.
//!
//! **Tolerance contours (pointwise).** Each of `n_sim` random labellings
//! draws `n₁` "cases" at random from all the people (each case point and,
//! with counts, each person at a control point) from its own stream
//! `stream_rng(seed, j)`, so labelling j is the same however the run is
//! split. At every cell `p(x) = (1 + #{j : ρ̂*_j(x) ≥ ρ̂(x)}) / (m + 1)`; the
//! region `p ≤ tolerance` (default 0.05) is "raised", `p ≥ 1 − tolerance`
//! "lowered". These are pointwise: under constant risk about 5 % of the area
//! is flagged by chance.
//!
//! **Global test of constant risk** (a Monte Carlo test as Kelsall & Diggle
//! 1995 propose; the statistic form is from memory): `T = ∫_W ρ̂(x)² dx`
//! over the unmasked cells (km²), with the rank p-value
//! `(1 + #{j : T*_j ≥ T}) / (m + 1)`.
//!
//! **Algorithm.** The pooled points are binned once (linear binning on the
//! grid) and convolved once. A labelling only changes which people are
//! cases: their binned counts are convolved (one convolution per
//! labelling), and the control surface is the pooled one minus the cases'
//! (the convolution is linear). Cost per labelling O(n₁ + cells · stencil).
//!
//! **Bandwidth.** `pooled_rule`: the normal-reference rule of
//! [`crate::intensity::bandwidth::normal_reference`] on the pooled
//! locations (cases and control points, each location once).
//! `likelihood_cv`: the binary regression `p(x) = λ₁/(λ₁ + λ₀)` is
//! estimated leaving each person out in turn, and
//! `Σ_cases ln p̂₋ᵢ(xᵢ) + Σ_controls ln(1 − p̂₋ᵢ(xᵢ))` is maximised over a
//! ladder of candidates (0.1 to 2 times the pooled rule, at least one grid
//! cell); without edge correction, which cancels in `p`. The leave-one-out
//! values come from the binned surfaces minus the person's own binned
//! contribution (computed exactly). `fixed`: `fixed_m` metres.
//!
//! Kernel: Gaussian only (bandwidth = SD per axis).

use crate::distance::csr::stream_rng;
use crate::error::AnalysisError;
use crate::intensity::bandwidth::{ladder, normal_reference};
use crate::intensity::fft::{convolve, Stencil};
use crate::intensity::isopleth::{contour, Contour};
use crate::intensity::{Canvas, EdgeCorrection, Grid, GridOptions, Kernel, PER_KM2};
use crate::privacy::disclosure::SurfaceDisclosure;
use crate::window::Window;
use rand::RngExt;
use serde::{Deserialize, Serialize};

/// `ρ̂` is clipped to `±RHO_CAP` (a risk ratio of 1000 either way).
pub const RHO_CAP: f64 = 6.907_755_278_982_137; // ln 1000

/// How the common bandwidth is chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RiskBandwidth {
    /// Normal-reference rule on the pooled locations.
    PooledRule,
    /// Likelihood cross-validation of the binary regression (Kelsall & Diggle 1998).
    #[default]
    LikelihoodCv,
    /// `fixed_m` metres.
    Fixed,
}

impl RiskBandwidth {
    /// Plain words for the page, with the source.
    pub fn describe(self) -> &'static str {
        match self {
            RiskBandwidth::PooledRule => {
                "rule of thumb on cases and controls together (normal reference, Scott / Silverman)"
            }
            RiskBandwidth::LikelihoodCv => {
                "cross-validation of the case share p = cases / (cases + controls) (Kelsall & Diggle 1998)"
            }
            RiskBandwidth::Fixed => "fixed by you",
        }
    }
}

/// Options of the relative-risk surface (`riskSurfaceStart` in the JS API):
/// the one home of their defaults and limits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct RiskSurfaceOptions {
    pub method: RiskBandwidth,
    /// The bandwidth (Gaussian SD) when `method` is `fixed`, metres.
    pub fixed_m: Option<f64>,
    /// Candidates tried by the cross-validation.
    pub candidates: usize,
    pub edge: EdgeCorrection,
    /// Grid cells along the longer side of the study area's bounding box.
    pub cells: usize,
    /// Random labellings for the tolerance contours and the global test.
    pub n_sim: usize,
    pub seed: u64,
    /// Pointwise level of the tolerance contours.
    pub tolerance: f64,
    /// Cells with control density below this share of its median are masked.
    pub min_control_share: f64,
}

impl Default for RiskSurfaceOptions {
    fn default() -> Self {
        RiskSurfaceOptions {
            method: RiskBandwidth::LikelihoodCv,
            fixed_m: None,
            candidates: 15,
            edge: EdgeCorrection::Uniform,
            cells: 256,
            n_sim: 99,
            seed: 0,
            tolerance: 0.05,
            min_control_share: 0.01,
        }
    }
}

impl crate::params::Params for RiskSurfaceOptions {
    const NAME: &'static str = "riskSurfaceStart";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::{Field, EXTENT_FACTOR};
        vec![
            Field::choice(
                "method",
                &["pooled_rule", "likelihood_cv", "fixed"],
                "how the common bandwidth is chosen",
            ),
            Field::number(
                "fixed_m",
                Some("m"),
                "the bandwidth (Gaussian SD) when method is fixed",
            )
            .scale_length(EXTENT_FACTOR)
            .optional(),
            Field::integer("candidates", "bandwidths tried by the cross-validation")
                .range(3.0, 60.0),
            Field::choice(
                "edge",
                &["none", "uniform", "jones_diggle"],
                "edge correction of both surfaces",
            ),
            Field::integer("cells", "grid cells along the study area's longer side")
                .range(16.0, 1024.0),
            Field::integer("n_sim", "random labellings for the tolerance contours")
                .range(1.0, 1999.0),
            Field::seed("seed of the labellings"),
            Field::number(
                "tolerance",
                None,
                "pointwise level of the tolerance contours",
            )
            .above(0.0, Some(0.25)),
            Field::number(
                "min_control_share",
                None,
                "cells with control density below this share of its median are masked",
            )
            .above(0.0, Some(0.5)),
        ]
    }
    fn check(&self) -> Result<(), AnalysisError> {
        if self.method == RiskBandwidth::Fixed && self.fixed_m.is_none() {
            return Err(crate::params::bad(
                "fixed_m",
                "a fixed bandwidth needs fixed_m (metres)",
            ));
        }
        Ok(())
    }
}

/// What a grid cell is.
pub mod class {
    /// Outside the study area.
    pub const OUTSIDE: u8 = 0;
    /// Too few controls to support a ratio (masked).
    pub const FEW_CONTROLS: u8 = 1;
    /// A ratio is estimated.
    pub const ESTIMATED: u8 = 2;
}

/// One connected raised (or lowered) region, for the verdict.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RiskRegion {
    pub area_km2: f64,
    /// Centre of the region's outer ring (mean of its vertices), metres.
    pub centre_x: f64,
    pub centre_y: f64,
    /// Largest (raised) or smallest (lowered) risk ratio inside.
    pub extreme_ratio: f64,
    /// Where it is from the study area's centre, in words.
    pub whereabouts: String,
}

/// The relative-risk surface with its tolerance contours and global test.
#[derive(Debug, Clone, Serialize)]
pub struct RiskSurfaceResult {
    pub x0: f64,
    pub y0: f64,
    pub cell_m: f64,
    pub nx: usize,
    pub ny: usize,
    /// `ρ̂` per cell (row-major, row 0 south); 0 where `class` is not
    /// [`class::ESTIMATED`] (no meaning there). The three grids are not
    /// serialised: the JS API sends them as typed arrays.
    #[serde(skip)]
    pub log_rr: Vec<f64>,
    /// [`class`] per cell.
    #[serde(skip)]
    pub class: Vec<u8>,
    /// Pointwise Monte Carlo p per cell; 1 where not estimated (no meaning).
    #[serde(skip)]
    pub p_value: Vec<f64>,
    /// Raised-risk tolerance contour (`p ≤ tolerance`), metres.
    pub raised: Contour,
    /// Lowered-risk tolerance contour (`p ≥ 1 − tolerance`), metres.
    pub lowered: Contour,
    pub raised_regions: Vec<RiskRegion>,
    pub lowered_regions: Vec<RiskRegion>,
    /// Share of the estimated area inside the raised / lowered contours (by cells).
    pub raised_share: f64,
    pub lowered_share: f64,
    pub tolerance: f64,
    pub bandwidth_m: f64,
    pub method: RiskBandwidth,
    pub method_text: &'static str,
    pub reference_m: Option<f64>,
    pub candidates_m: Vec<f64>,
    pub criterion: Vec<Option<f64>>,
    pub bandwidth_note: Option<String>,
    pub edge: EdgeCorrection,
    /// `T = ∫ ρ̂² dx` over the estimated cells, km².
    pub t_stat: f64,
    pub t_p_value: f64,
    pub t_at_least_as_large: usize,
    pub n_sim: usize,
    pub seed: u64,
    pub n_cases: usize,
    /// Control points, and people at them (= points without a count column).
    pub n_control_points: usize,
    pub controls_total: f64,
    pub weighted: bool,
    /// Estimated cells' risk-ratio range.
    pub min_ratio: f64,
    pub max_ratio: f64,
    pub masked_cells: usize,
    pub masked_share: f64,
    pub min_control_share: f64,
    pub area_km2: f64,
    pub privacy: Option<SurfaceDisclosure>,
    pub verdict: String,
    pub caveats: Vec<String>,
    pub warnings: Vec<String>,
}

/// What a helper worker needs to compute labellings of a run
/// ([`RiskSurfaceJob::share`]).
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct RiskSurfaceShare {
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    /// Pooled points, cases first.
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub n_cases: usize,
    /// People per population point, when the population file has counts.
    pub weights: Option<Vec<f64>>,
    pub options: RiskSurfaceOptions,
}

/// A relative-risk surface that runs its labellings in batches (progress
/// and Cancel between them). Labelling j depends only on the seed and j.
pub struct RiskSurfaceJob {
    /// The study area, for a helper worker to rebuild the run.
    polygons: Vec<Vec<Vec<[f64; 2]>>>,
    cv: Canvas,
    stencil: Stencil,
    /// `e_h` on the padded canvas when the uniform correction is used.
    e_uniform: Option<Vec<f64>>,
    /// Pooled points: cases first.
    px: Vec<f64>,
    py: Vec<f64>,
    /// Per-point factor (1, or 1/e_h(x_i) for Jones–Diggle).
    factor: Vec<f64>,
    /// Cumulative people per pooled point (cases 1 each).
    cum: Vec<u64>,
    n_cases: usize,
    n_control_points: usize,
    controls_total: f64,
    weighted: bool,
    pooled_conv: Vec<f64>,
    /// Padded-canvas indices of the estimated cells.
    cells: Vec<usize>,
    /// Observed ρ̂ at `cells`.
    rho: Vec<f64>,
    t_obs: f64,
    ge: Vec<u32>,
    t_sims: Vec<f64>,
    done: usize,
    opts: RiskSurfaceOptions,
    h: f64,
    choice: Choice,
    masked: usize,
    cells_in: usize,
    /// Study area bbox centre (for whereabouts).
    centre: (f64, f64),
    privacy: Option<SurfaceDisclosure>,
}

#[derive(Debug, Clone, Default)]
struct Choice {
    reference_m: Option<f64>,
    candidates_m: Vec<f64>,
    criterion: Vec<Option<f64>>,
    note: Option<String>,
}

fn bad(name: &str, detail: impl Into<String>) -> AnalysisError {
    crate::params::bad(name, detail)
}

impl RiskSurfaceJob {
    /// Sets up the surface of `cases` against `controls` (points in
    /// metres; `weights` = people per control point, whole numbers, or
    /// `None` for one person each) in `window`, computes the observed
    /// surface and the mask.
    ///
    /// # Errors
    /// `BadParameter` for bad options, weights or an unusable bandwidth;
    /// `TooFewPoints` with fewer than 2 cases or controls.
    pub fn new(
        cases: (&[f64], &[f64]),
        controls: (&[f64], &[f64]),
        weights: Option<&[f64]>,
        window: &Window,
        opts: &RiskSurfaceOptions,
    ) -> Result<RiskSurfaceJob, AnalysisError> {
        use crate::params::Params;
        opts.validate_in(None)?;
        let (n1, n0) = (cases.0.len(), controls.0.len());
        if cases.1.len() != n1 || controls.1.len() != n0 || weights.is_some_and(|w| w.len() != n0) {
            return Err(bad("points", "coordinate lists differ in length"));
        }
        if n1 < 2 || n0 < 2 {
            return Err(AnalysisError::TooFewPoints {
                needed: 2,
                found: n1.min(n0),
            });
        }
        let mut cum = Vec::with_capacity(n1 + n0);
        let mut acc: u64 = 0;
        for _ in 0..n1 {
            acc += 1;
            cum.push(acc);
        }
        let mut controls_total = 0.0;
        for i in 0..n0 {
            let w = weights.map_or(1.0, |w| w[i]);
            if !(w.is_finite() && w >= 0.0 && w.fract() == 0.0 && w < 1e9) {
                return Err(bad(
                    "weights",
                    format!(
                        "control point {} has a count that is not a whole number of people \
                         (0 or more); the relative-risk surface relabels people, so counts \
                         must be whole numbers",
                        i + 1
                    ),
                ));
            }
            controls_total += w;
            acc += w as u64;
            cum.push(acc);
        }
        if controls_total < 2.0 {
            return Err(AnalysisError::TooFewPoints {
                needed: 2,
                found: controls_total as usize,
            });
        }
        let px: Vec<f64> = cases.0.iter().chain(controls.0).copied().collect();
        let py: Vec<f64> = cases.1.iter().chain(controls.1).copied().collect();
        let grid = GridOptions {
            cells_long_side: opts.cells,
            cell_m: None,
        };
        let cv = Canvas::new(window, &grid)?;
        let reference = normal_reference(&px, &py).ok();
        let mut choice = Choice {
            reference_m: reference,
            ..Default::default()
        };
        let h = match opts.method {
            RiskBandwidth::Fixed => match opts.fixed_m {
                Some(h) if h > 0.0 && h.is_finite() => h,
                _ => {
                    return Err(bad(
                        "fixed_m",
                        "a fixed bandwidth must be a positive number of metres",
                    ))
                }
            },
            RiskBandwidth::PooledRule => normal_reference(&px, &py)?,
            RiskBandwidth::LikelihoodCv => {
                let r = normal_reference(&px, &py)?;
                let lo = (0.1 * r).max(cv.cell);
                let hi = (2.0 * r).max(2.0 * lo);
                let hs = ladder(lo, hi, opts.candidates);
                let crit =
                    crate::progress::part(0.0, 0.8, || likelihood_cv(&cv, &px, &py, &cum, n1, &hs));
                let best = crit
                    .iter()
                    .enumerate()
                    .filter_map(|(i, c)| c.map(|c| (i, c)))
                    .max_by(|a, b| a.1.total_cmp(&b.1));
                choice.candidates_m = hs.clone();
                choice.criterion = crit;
                match best {
                    Some((i, _)) => {
                        if i + 1 == hs.len() {
                            choice.note = Some(
                                "the criterion is best at the largest bandwidth tried: the data \
                                 may not support any detail; the surface is nearly flat"
                                    .into(),
                            );
                        } else if i == 0 {
                            choice.note = Some(
                                "the criterion is best at the smallest bandwidth tried (one grid \
                                 cell or a tenth of the rule of thumb): use more cells or choose \
                                 a bandwidth yourself"
                                    .into(),
                            );
                        }
                        hs[i]
                    }
                    None => {
                        return Err(bad(
                            "bandwidth",
                            "the cross-validation found no bandwidth at which every case and \
                             control has neighbours; choose a bandwidth yourself (fixed)",
                        ))
                    }
                }
            }
        };
        let stencil = Kernel::Gaussian.stencil(h, cv.cell, cv.max_r());
        let (e, factor) = crate::intensity::edge_and_event_weights(
            &cv,
            &px,
            &py,
            None,
            Kernel::Gaussian,
            h,
            opts.edge,
            &stencil,
        );
        let e_uniform = if opts.edge == EdgeCorrection::Uniform {
            e
        } else {
            None
        };
        let people = |i: usize| {
            let before = if i == 0 { 0 } else { cum[i - 1] };
            (cum[i] - before) as f64
        };
        let pooled_bins = cv.bin(&px, &py, |i| people(i) * factor[i]);
        let pooled_conv = convolve(&pooled_bins, cv.nx, cv.ny, &stencil);
        // The observed labelling, through the same path as every relabelling.
        let mut observed_counts = vec![0.0; px.len()];
        observed_counts[..n1].iter_mut().for_each(|c| *c = 1.0);
        let mut job = RiskSurfaceJob {
            cells: Vec::new(),
            rho: Vec::new(),
            t_obs: 0.0,
            ge: Vec::new(),
            t_sims: Vec::with_capacity(opts.n_sim),
            done: 0,
            polygons: window.polygons().to_vec(),
            cv,
            stencil,
            e_uniform,
            px,
            py,
            factor,
            cum,
            n_cases: n1,
            n_control_points: n0,
            controls_total,
            weighted: weights.is_some(),
            pooled_conv,
            opts: opts.clone(),
            h,
            choice,
            masked: 0,
            cells_in: 0,
            centre: {
                let b = window.bbox();
                (0.5 * (b[0] + b[2]), 0.5 * (b[1] + b[3]))
            },
            privacy: None,
        };
        let (c1, c0) = job.surfaces(&observed_counts);
        // Mask: control density below the share of its median over the area.
        let inside: Vec<usize> = (0..c0.len()).filter(|&k| job.cv.mask[k]).collect();
        let mut d0: Vec<f64> = inside.iter().map(|&k| c0[k]).collect();
        d0.sort_by(f64::total_cmp);
        let median = if d0.is_empty() { 0.0 } else { d0[d0.len() / 2] };
        let floor = opts.min_control_share * median;
        job.cells_in = inside.len();
        job.cells = inside
            .iter()
            .copied()
            .filter(|&k| c0[k] > floor && c0[k] > 0.0)
            .collect();
        job.masked = job.cells_in - job.cells.len();
        if job.cells.is_empty() {
            return Err(bad(
                "controls",
                "no part of the study area has enough controls for a ratio",
            ));
        }
        job.rho = job.log_ratio(&c1, &c0);
        job.t_obs = job.t_of(&job.rho);
        job.ge = vec![0; job.cells.len()];
        Ok(job)
    }

    /// Attaches the outcome of the surface disclosure check (of the cases).
    pub fn set_privacy(&mut self, d: SurfaceDisclosure) {
        self.privacy = Some(d);
    }

    /// The common bandwidth (Gaussian SD), metres.
    pub fn bandwidth_m(&self) -> f64 {
        self.h
    }

    pub fn total(&self) -> usize {
        self.opts.n_sim
    }

    pub fn done(&self) -> usize {
        self.done
    }

    /// Case and control intensities (up to constant factors) on the padded
    /// canvas for `counts` cases per pooled point.
    fn surfaces(&self, counts: &[f64]) -> (Vec<f64>, Vec<f64>) {
        let bins = self
            .cv
            .bin(&self.px, &self.py, |i| counts[i] * self.factor[i]);
        let mut c1 = convolve(&bins, self.cv.nx, self.cv.ny, &self.stencil);
        let mut c0: Vec<f64> = self
            .pooled_conv
            .iter()
            .zip(&c1)
            .map(|(p, c)| (p - c).max(0.0))
            .collect();
        c1.iter_mut().for_each(|v| *v = v.max(0.0));
        if let Some(e) = &self.e_uniform {
            for ((a, b), ek) in c1.iter_mut().zip(c0.iter_mut()).zip(e) {
                if *ek > 0.0 {
                    *a /= ek;
                    *b /= ek;
                } else {
                    *a = 0.0;
                    *b = 0.0;
                }
            }
        }
        (c1, c0)
    }

    /// `ρ̂` at the estimated cells (normalising over every cell in the area).
    fn log_ratio(&self, c1: &[f64], c0: &[f64]) -> Vec<f64> {
        let (mut s1, mut s0) = (0.0, 0.0);
        for k in 0..c1.len() {
            if self.cv.mask[k] {
                s1 += c1[k];
                s0 += c0[k];
            }
        }
        let shift = s0.ln() - s1.ln();
        self.cells
            .iter()
            .map(|&k| {
                let r = if c1[k] > 0.0 && c0[k] > 0.0 {
                    c1[k].ln() - c0[k].ln() + shift
                } else if c1[k] > 0.0 {
                    RHO_CAP
                } else {
                    -RHO_CAP
                };
                if r.is_nan() {
                    0.0
                } else {
                    r.clamp(-RHO_CAP, RHO_CAP)
                }
            })
            .collect()
    }

    fn t_of(&self, rho: &[f64]) -> f64 {
        let a = self.cv.cell * self.cv.cell / PER_KM2;
        rho.iter().map(|r| r * r).sum::<f64>() * a
    }

    /// People labelled cases per pooled point in labelling `j`: `n₁` people
    /// drawn without replacement from all of them (Floyd's algorithm,
    /// Bentley & Floyd 1987, Comm. ACM 30(9):754–757 \[M\]) from the stream
    /// `stream_rng(seed, j)`.
    fn labelling_counts(&self, j: usize) -> Vec<f64> {
        let total = *self.cum.last().unwrap_or(&0);
        let k = self.n_cases as u64;
        let mut rng = stream_rng(self.opts.seed, j as u64);
        let mut chosen = std::collections::HashSet::with_capacity(self.n_cases * 2);
        for t in (total - k)..total {
            let r = rng.random_range(0..=t);
            if !chosen.insert(r) {
                chosen.insert(t);
            }
        }
        let mut counts = vec![0.0; self.px.len()];
        for &person in &chosen {
            // The point holding person index `person` (0-based): first cum > person.
            let i = self.cum.partition_point(|&c| c <= person);
            counts[i] += 1.0;
        }
        counts
    }

    /// `ρ̂*_j` at the estimated cells (in the order of [`Self::estimated_cells`]).
    pub fn simulated_log_rr(&self, j: usize) -> Vec<f64> {
        let (c1, c0) = self.surfaces(&self.labelling_counts(j));
        self.log_ratio(&c1, &c0)
    }

    /// The observed `ρ̂` at the estimated cells.
    pub fn observed_log_rr(&self) -> &[f64] {
        &self.rho
    }

    /// Observed `T`.
    pub fn t_stat(&self) -> f64 {
        self.t_obs
    }

    /// Cells (inner-grid indices `j·nx + i`) that carry an estimate.
    pub fn estimated_cells(&self) -> Vec<usize> {
        let inner_nx = self.cv.inner.2;
        self.cells
            .iter()
            .map(|&k| {
                let (i, j) = (k % self.cv.nx, k / self.cv.nx);
                (j - 1) * inner_nx + (i - 1)
            })
            .collect()
    }

    /// Runs up to `k` more labellings; returns how many are done.
    pub fn run_batch(&mut self, k: usize) -> usize {
        let to = (self.done + k).min(self.opts.n_sim);
        let piece = self.simulate_range(self.done, to);
        self.add_piece(&piece);
        self.done = to;
        self.done
    }

    /// Labellings `from..to` (at most `n_sim`), the job unchanged: for each
    /// estimated cell how many had ρ̂* at least the data's, then each
    /// labelling's T, in order (`cells + (to − from)` numbers).
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<f64> {
        let to = to.min(self.opts.n_sim);
        let mut ge = vec![0.0f64; self.cells.len()];
        let mut t = Vec::with_capacity(to.saturating_sub(from));
        for j in from..to {
            let sim = self.simulated_log_rr(j);
            for ((g, s), o) in ge.iter_mut().zip(&sim).zip(&self.rho) {
                if s >= o {
                    *g += 1.0;
                }
            }
            t.push(self.t_of(&sim));
        }
        ge.extend(t);
        ge
    }

    fn add_piece(&mut self, piece: &[f64]) {
        let (ge, t) = piece.split_at(self.cells.len().min(piece.len()));
        for (g, &c) in self.ge.iter_mut().zip(ge) {
            *g += c as u32;
        }
        self.t_sims.extend_from_slice(t);
    }

    /// Adds a piece of [`Self::simulate_range`] computed elsewhere that
    /// starts at labelling `from`, which must equal [`Self::done`]. Returns
    /// the number done.
    pub fn add_simulated(&mut self, from: usize, piece: &[f64]) -> Result<usize, AnalysisError> {
        let n = piece.len().checked_sub(self.cells.len());
        match n {
            Some(n) if from == self.done && self.done + n <= self.opts.n_sim => {
                self.add_piece(piece);
                self.done += n;
                Ok(self.done)
            }
            _ => Err(bad(
                "labellings",
                format!(
                    "expected a piece starting at labelling {} with {} cell counts first",
                    self.done,
                    self.cells.len()
                ),
            )),
        }
    }

    /// What a helper worker needs to rebuild this run: the study area, the
    /// cases and population points (with their counts) and the options with
    /// the bandwidth fixed at the one chosen, so that no cross-validation is
    /// repeated and every labelling is the same wherever it is computed.
    pub fn share(&self) -> RiskSurfaceShare {
        let n1 = self.n_cases;
        let weights = self.weighted.then(|| {
            (n1..self.px.len())
                .map(|i| (self.cum[i] - self.cum[i - 1]) as f64)
                .collect()
        });
        RiskSurfaceShare {
            polygons: self.polygons.clone(),
            x: self.px.clone(),
            y: self.py.clone(),
            n_cases: n1,
            weights,
            options: RiskSurfaceOptions {
                method: RiskBandwidth::Fixed,
                fixed_m: Some(self.h),
                ..self.opts.clone()
            },
        }
    }

    /// Rebuilds a run from [`Self::share`] (in a helper worker).
    pub fn from_share(share: &RiskSurfaceShare) -> Result<RiskSurfaceJob, AnalysisError> {
        let window =
            Window::from_polygons(share.polygons.clone(), crate::window::WindowOrigin::File)
                .map_err(|e| bad("study area", e.to_string()))?;
        let n1 = share.n_cases.min(share.x.len());
        if share.y.len() != share.x.len() {
            return Err(bad("points", "coordinate lists differ in length"));
        }
        RiskSurfaceJob::new(
            (&share.x[..n1], &share.y[..n1]),
            (&share.x[n1..], &share.y[n1..]),
            share.weights.as_deref(),
            &window,
            &share.options,
        )
    }

    /// Runs what is left and summarises.
    pub fn finish(mut self) -> RiskSurfaceResult {
        let rest = self.opts.n_sim - self.done;
        self.run_batch(rest);
        let m = self.opts.n_sim;
        let (x0, y0, nx, ny) = self.cv.inner;
        let n = nx * ny;
        let mut class = vec![class::OUTSIDE; n];
        let mut log_rr = vec![0.0; n];
        let mut p_value = vec![1.0; n];
        for j in 0..ny {
            for i in 0..nx {
                if self.cv.mask[(j + 1) * self.cv.nx + i + 1] {
                    class[j * nx + i] = class::FEW_CONTROLS;
                }
            }
        }
        let cells = self.estimated_cells();
        for (c, &k) in cells.iter().enumerate() {
            class[k] = class::ESTIMATED;
            log_rr[k] = self.rho[c];
            p_value[k] = (1.0 + self.ge[c] as f64) / (m as f64 + 1.0);
        }
        let tol = self.opts.tolerance;
        let est = |k: usize| class[k] == class::ESTIMATED;
        let grid_of = |f: &dyn Fn(usize) -> f64| Grid {
            x0,
            y0,
            cell_m: self.cv.cell,
            nx,
            ny,
            values: (0..n).map(|k| if est(k) { f(k) } else { 0.0 }).collect(),
            mask: (0..n).map(est).collect(),
        };
        // Raised: 1 − p ≥ 1 − tol; lowered: p ≥ 1 − tol (regions value ≥ level).
        let up = grid_of(&|k| 1.0 - p_value[k]);
        let down = grid_of(&|k| p_value[k]);
        // A small allowance so cells exactly at the level are inside.
        let level = 1.0 - tol - 1e-9;
        // With fewer than 1/tol − 1 labellings no cell can reach p ≤ tol, and
        // p ≥ 1 − tol would only mean "every labelling at least as high", a
        // chance of 1/(m + 1) > tol: neither line is drawn (see the warning).
        let enough = ((m + 1) as f64) * tol >= 1.0 - 1e-9;
        let none = || Contour {
            level,
            percent_volume: None,
            polygons: vec![],
            area_km2: 0.0,
        };
        let raised = if enough { contour(&up, level) } else { none() };
        let lowered = if enough {
            contour(&down, level)
        } else {
            none()
        };
        let n_est = cells.len().max(1) as f64;
        let raised_share = (0..n)
            .filter(|&k| est(k) && p_value[k] <= tol + 1e-12)
            .count() as f64
            / n_est;
        let lowered_share = if enough {
            (0..n)
                .filter(|&k| est(k) && p_value[k] >= 1.0 - tol - 1e-12)
                .count() as f64
                / n_est
        } else {
            0.0
        };
        let t_ge = self.t_sims.iter().filter(|&&t| t >= self.t_obs).count();
        let t_p = (1.0 + t_ge as f64) / (m as f64 + 1.0);
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for r in &self.rho {
            lo = lo.min(*r);
            hi = hi.max(*r);
        }
        let ratio_at = |x: f64, y: f64| -> Option<f64> {
            let i = ((x - x0) / self.cv.cell).floor();
            let j = ((y - y0) / self.cv.cell).floor();
            if i < 0.0 || j < 0.0 || i >= nx as f64 || j >= ny as f64 {
                return None;
            }
            let k = j as usize * nx + i as usize;
            est(k).then(|| log_rr[k].exp())
        };
        let regions = |c: &Contour, raised: bool| -> Vec<RiskRegion> {
            let mut out: Vec<RiskRegion> = c
                .polygons
                .iter()
                .filter_map(|poly| {
                    let outer = poly.first()?;
                    let a = crate::window::signed_area2(outer).abs() * 0.5;
                    let holes: f64 = poly[1..]
                        .iter()
                        .map(|r| crate::window::signed_area2(r).abs() * 0.5)
                        .sum();
                    let pts = &outer[..outer.len().saturating_sub(1)];
                    if pts.is_empty() {
                        return None;
                    }
                    let cx = pts.iter().map(|p| p[0]).sum::<f64>() / pts.len() as f64;
                    let cy = pts.iter().map(|p| p[1]).sum::<f64>() / pts.len() as f64;
                    // Extreme ratio over estimated cells whose centre is in the ring's bbox and ring.
                    let (mut bx0, mut by0, mut bx1, mut by1) = (
                        f64::INFINITY,
                        f64::INFINITY,
                        f64::NEG_INFINITY,
                        f64::NEG_INFINITY,
                    );
                    for p in pts {
                        bx0 = bx0.min(p[0]);
                        by0 = by0.min(p[1]);
                        bx1 = bx1.max(p[0]);
                        by1 = by1.max(p[1]);
                    }
                    let mut ext: Option<f64> = None;
                    let cell = self.cv.cell;
                    let mut y = y0 + ((by0 - y0) / cell).floor().max(0.0) * cell + 0.5 * cell;
                    while y <= by1 {
                        let mut x = x0 + ((bx0 - x0) / cell).floor().max(0.0) * cell + 0.5 * cell;
                        while x <= bx1 {
                            if point_in_ring(outer, x, y) {
                                if let Some(r) = ratio_at(x, y) {
                                    ext = Some(match ext {
                                        None => r,
                                        Some(e) if raised => e.max(r),
                                        Some(e) => e.min(r),
                                    });
                                }
                            }
                            x += cell;
                        }
                        y += cell;
                    }
                    Some(RiskRegion {
                        area_km2: (a - holes) / PER_KM2,
                        centre_x: cx,
                        centre_y: cy,
                        extreme_ratio: ext.unwrap_or(1.0),
                        whereabouts: whereabouts(self.centre, cx, cy),
                    })
                })
                .collect();
            // Marching squares can leave slivers of no area: not places.
            let min_km2 = 0.25 * self.cv.cell * self.cv.cell / PER_KM2;
            out.retain(|r| r.area_km2 >= min_km2);
            out.sort_by(|a, b| b.area_km2.total_cmp(&a.area_km2));
            out
        };
        let raised_regions = regions(&raised, true);
        let lowered_regions = regions(&lowered, false);
        let area_km2 = self.cells_in as f64 * self.cv.cell * self.cv.cell / PER_KM2;
        let masked_share = self.masked as f64 / self.cells_in.max(1) as f64;
        let mut warnings = Vec::new();
        if self.h < self.cv.cell {
            warnings.push(format!(
                "the bandwidth ({:.0} m) is less than a grid cell ({:.0} m): the surface is coarse; use more cells",
                self.h, self.cv.cell
            ));
        }
        if !enough {
            warnings.push(format!(
                "with {m} random labellings the smallest possible p is {:.3}, above the level {tol}: no place can be flagged raised or lowered, and no line is drawn; use at least {} labellings",
                1.0 / (m as f64 + 1.0),
                (1.0 / tol).ceil() as usize - 1
            ));
        }
        if masked_share > 0.25 {
            warnings.push(format!(
                "{:.0} % of the study area has too few controls for a ratio (grey): the population file may not cover the whole area",
                100.0 * masked_share
            ));
        }
        if let Some(w) = self.privacy.as_ref().and_then(|p| p.warning.clone()) {
            warnings.push(w);
        }
        let verdict = verdict(t_p, m, tol, &raised_regions, &lowered_regions, raised_share);
        RiskSurfaceResult {
            x0,
            y0,
            cell_m: self.cv.cell,
            nx,
            ny,
            log_rr,
            class,
            p_value,
            raised,
            lowered,
            raised_regions,
            lowered_regions,
            raised_share,
            lowered_share,
            tolerance: tol,
            bandwidth_m: self.h,
            method: self.opts.method,
            method_text: self.opts.method.describe(),
            reference_m: self.choice.reference_m,
            candidates_m: self.choice.candidates_m,
            criterion: self.choice.criterion,
            bandwidth_note: self.choice.note,
            edge: self.opts.edge,
            t_stat: self.t_obs,
            t_p_value: t_p,
            t_at_least_as_large: t_ge,
            n_sim: m,
            seed: self.opts.seed,
            n_cases: self.n_cases,
            n_control_points: self.n_control_points,
            controls_total: self.controls_total,
            weighted: self.weighted,
            min_ratio: lo.exp(),
            max_ratio: hi.exp(),
            masked_cells: self.masked,
            masked_share,
            min_control_share: self.opts.min_control_share,
            area_km2,
            privacy: self.privacy,
            verdict,
            caveats: vec![
                "A raised risk is not a cause: it says cases are more common there than the population would predict, not why.".into(),
                format!(
                    "The contours are pointwise: each place is tested on its own, so even with no real difference about {:.0} % of the area would be flagged raised (and as much lowered) by chance. Read them together with the global test.",
                    100.0 * tol
                ),
                "The controls stand for the population at risk: if they miss part of it, or their addresses are placed differently from the cases', the map shows that difference too.".into(),
                "Grey areas have too few controls for a ratio; they are not areas of average risk.".into(),
            ],
            warnings,
        }
    }
}

/// Even-odd test of a point against a closed ring.
fn point_in_ring(r: &[[f64; 2]], x: f64, y: f64) -> bool {
    let mut inside = false;
    let n = r.len();
    if n < 3 {
        return false;
    }
    let mut j = n - 1;
    for i in 0..n {
        let (xi, yi, xj, yj) = (r[i][0], r[i][1], r[j][0], r[j][1]);
        if (yi > y) != (yj > y) && x < (xj - xi) * (y - yi) / (yj - yi) + xi {
            inside = !inside;
        }
        j = i;
    }
    inside
}

/// "1.2 km north-east of the centre of the area".
fn whereabouts(centre: (f64, f64), x: f64, y: f64) -> String {
    let (dx, dy) = (x - centre.0, y - centre.1);
    let d = (dx * dx + dy * dy).sqrt();
    if d < 300.0 {
        return "near the centre of the area".into();
    }
    let names = [
        "east",
        "north-east",
        "north",
        "north-west",
        "west",
        "south-west",
        "south",
        "south-east",
    ];
    let a = dy.atan2(dx).to_degrees().rem_euclid(360.0);
    let k = (((a + 22.5) / 45.0).floor() as usize) % 8;
    let dist = if d >= 1000.0 {
        format!("{:.1} km", d / 1000.0)
    } else {
        format!("{:.0} m", (d / 10.0).round() * 10.0)
    };
    format!("{dist} {} of the centre of the area", names[k])
}

fn verdict(
    t_p: f64,
    m: usize,
    tol: f64,
    raised: &[RiskRegion],
    lowered: &[RiskRegion],
    raised_share: f64,
) -> String {
    let p = crate::distance::verdict::fmt_p(t_p);
    let global = if t_p <= 0.05 {
        format!("The risk is not the same everywhere: the global test of constant risk gives p = {p} ({m} random labellings).")
    } else {
        format!("No clear evidence that the risk varies over the area: the global test of constant risk gives p = {p} ({m} random labellings).")
    };
    let places = |v: &[RiskRegion]| -> String {
        v.iter()
            .take(4)
            .map(|r| {
                format!(
                    "{} ({:.2} km², risk ratio up to {:.1})",
                    r.whereabouts, r.area_km2, r.extreme_ratio
                )
            })
            .collect::<Vec<_>>()
            .join("; ")
    };
    let level = 100.0 * tol;
    let raised_text = if raised.is_empty() {
        format!("No place is flagged as raised at the pointwise {level:.0} % level.")
    } else {
        let more = if raised.len() > 4 {
            let k = raised.len() - 4;
            format!(" and {k} smaller place{}", if k == 1 { "" } else { "s" })
        } else {
            String::new()
        };
        format!(
            "Raised risk (pointwise {level:.0} % level, {:.0} % of the area): {}{more}.",
            100.0 * raised_share,
            places(raised)
        )
    };
    let lowered_text = if lowered.is_empty() {
        String::new()
    } else {
        format!(
            " Lowered risk at {} place(s), the largest {}.",
            lowered.len(),
            lowered[0].whereabouts
        )
    };
    format!(
        "{global} {raised_text}{lowered_text} The contours are pointwise: about {level:.0} % of the area is flagged by chance alone. A raised risk is not a cause."
    )
}

/// Likelihood cross-validation of the case share (see the module docs):
/// the criterion at each bandwidth (`None` where some person has no
/// neighbour of the other kind within reach, so a log is infinite).
fn likelihood_cv(
    cv: &Canvas,
    px: &[f64],
    py: &[f64],
    cum: &[u64],
    n1: usize,
    hs: &[f64],
) -> Vec<Option<f64>> {
    let people = |i: usize| (cum[i] - if i == 0 { 0 } else { cum[i - 1] }) as f64;
    let case_bins = cv.bin(px, py, |i| if i < n1 { 1.0 } else { 0.0 });
    let ctrl_bins = cv.bin(px, py, |i| if i < n1 { 0.0 } else { people(i) });
    hs.iter()
        .enumerate()
        .map(|(hi, &h)| {
            crate::progress::report(hi, hs.len());
            let st = Kernel::Gaussian.stencil(h, cv.cell, cv.max_r());
            let c1 = convolve(&case_bins, cv.nx, cv.ny, &st);
            let c0 = convolve(&ctrl_bins, cv.nx, cv.ny, &st);
            let mut ll = 0.0;
            for i in 0..px.len() {
                let w = people(i);
                if w == 0.0 {
                    continue;
                }
                let own = self_contribution(cv, &st, px[i], py[i]);
                let a = cv.interpolate(&c1, px[i], py[i]);
                let b = cv.interpolate(&c0, px[i], py[i]);
                let (a, b) = if i < n1 { (a - own, b) } else { (a, b - own) };
                let (a, b) = (a.max(0.0), b.max(0.0));
                let s = a + b;
                let p = if i < n1 { a / s } else { b / s };
                if p.is_nan() || p <= 0.0 {
                    return None;
                }
                ll += w * p.ln();
            }
            ll.is_finite().then_some(ll)
        })
        .collect()
}

/// What one person at (x, y) adds to the binned, convolved surface read
/// back at (x, y): the four binning weights, each spread by the stencil,
/// interpolated with the same four weights.
fn self_contribution(cv: &Canvas, st: &Stencil, x: f64, y: f64) -> f64 {
    let (_, _, tx, ty) = cv.cell_weights(x, y);
    let w = [
        (0isize, 0isize, (1.0 - tx) * (1.0 - ty)),
        (1, 0, tx * (1.0 - ty)),
        (0, 1, (1.0 - tx) * ty),
        (1, 1, tx * ty),
    ];
    let mut s = 0.0;
    for &(ai, bi, wa) in &w {
        for &(ci, di, wc) in &w {
            s += wa * wc * st.at(ci - ai, di - bi);
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn square() -> Window {
        Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap()
    }

    fn pts(n: usize, seed: u64, cx: f64, cy: f64, s: f64) -> (Vec<f64>, Vec<f64>) {
        let mut r = crate::rng::rng_from_seed(seed);
        let mut x = Vec::new();
        let mut y = Vec::new();
        while x.len() < n {
            let a: f64 = cx + s * (r.random::<f64>() - 0.5);
            let b: f64 = cy + s * (r.random::<f64>() - 0.5);
            if (1.0..999.0).contains(&a) && (1.0..999.0).contains(&b) {
                x.push(a);
                y.push(b);
            }
        }
        (x, y)
    }

    fn opts() -> RiskSurfaceOptions {
        RiskSurfaceOptions {
            cells: 40,
            n_sim: 19,
            seed: 7,
            method: RiskBandwidth::Fixed,
            fixed_m: Some(90.0),
            ..Default::default()
        }
    }

    #[test]
    fn unknown_and_out_of_range_options_are_refused() {
        use crate::params::Params;
        let bad_n = RiskSurfaceOptions {
            n_sim: 0,
            ..Default::default()
        };
        assert!(bad_n.validate().is_err());
        let bad_tol = RiskSurfaceOptions {
            tolerance: 0.5,
            ..Default::default()
        };
        assert!(bad_tol.validate().is_err());
        let no_fixed = RiskSurfaceOptions {
            method: RiskBandwidth::Fixed,
            ..Default::default()
        };
        assert!(no_fixed.validate().is_err());
        let e = serde_json::from_str::<RiskSurfaceOptions>(r#"{"n_sims": 9}"#);
        assert!(e.is_err());
    }

    #[test]
    fn too_few_points_and_fractional_counts_are_errors() {
        let (x, y) = pts(50, 1, 500.0, 500.0, 990.0);
        let w = square();
        let one = (&x[..1], &y[..1]);
        assert!(matches!(
            RiskSurfaceJob::new(one, (&x, &y), None, &w, &opts()),
            Err(AnalysisError::TooFewPoints { .. })
        ));
        let mut wt = vec![1.0; 50];
        wt[3] = 2.5;
        let e = RiskSurfaceJob::new((&x[..10], &y[..10]), (&x, &y), Some(&wt), &w, &opts())
            .err()
            .unwrap();
        assert!(e.to_string().contains("whole number"), "{e}");
    }

    #[test]
    fn labellings_draw_exactly_n1_people_within_each_points_count() {
        let (x, y) = pts(60, 2, 500.0, 500.0, 990.0);
        let wt: Vec<f64> = (0..50).map(|i| (i % 4) as f64).collect();
        let job = RiskSurfaceJob::new(
            (&x[..10], &y[..10]),
            (&x[10..], &y[10..]),
            Some(&wt),
            &square(),
            &opts(),
        )
        .unwrap();
        for j in 0..20 {
            let c = job.labelling_counts(j);
            assert_eq!(c.iter().sum::<f64>(), 10.0);
            for (i, v) in c.iter().enumerate() {
                let cap = if i < 10 { 1.0 } else { wt[i - 10] };
                assert!(*v <= cap, "point {i}: {v} > {cap}");
            }
            assert_eq!(c, job.labelling_counts(j), "labelling {j} not reproducible");
        }
    }

    #[test]
    fn own_contribution_is_exactly_what_a_lone_point_adds_at_itself() {
        // The leave-one-out of the cross-validation subtracts this: for a
        // single binned point, the convolved surface read back at the point
        // must equal it, wherever the point sits in its cell.
        let cv = Canvas::new(
            &square(),
            &GridOptions {
                cells_long_side: 40,
                cell_m: None,
            },
        )
        .unwrap();
        for h in [30.0, 75.0, 400.0] {
            let st = Kernel::Gaussian.stencil(h, cv.cell, cv.max_r());
            for (x, y) in [(500.0, 500.0), (512.3, 488.9), (131.0, 877.7)] {
                let bins = cv.bin(&[x], &[y], |_| 1.0);
                let conv = convolve(&bins, cv.nx, cv.ny, &st);
                let back = cv.interpolate(&conv, x, y);
                let own = self_contribution(&cv, &st, x, y);
                assert!(
                    (back - own).abs() <= 1e-12 * own,
                    "h {h} at ({x}, {y}): {back} vs {own}"
                );
            }
        }
    }

    #[test]
    fn likelihood_cv_matches_exact_leave_one_out_sums() {
        // The criterion Σ_cases ln p̂₋ᵢ + Σ_controls ln(1 − p̂₋ᵢ) with
        // p̂₋ᵢ = λ̂₁₋ᵢ/(λ̂₁₋ᵢ + λ̂₀₋ᵢ), computed here by direct sums of the
        // Gaussian kernel over all other points (no grid), against the
        // binned computation; 10 m cells, bandwidths of 4 to 14 cells.
        let (mut x, mut y) = pts(60, 21, 500.0, 500.0, 980.0);
        let (bx, by) = pts(30, 22, 300.0, 700.0, 200.0);
        x.extend(bx);
        y.extend(by);
        let (cx, cy) = pts(150, 23, 500.0, 500.0, 980.0);
        let n1 = x.len();
        let px: Vec<f64> = x.iter().chain(&cx).copied().collect();
        let py: Vec<f64> = y.iter().chain(&cy).copied().collect();
        let cum: Vec<u64> = (1..=px.len() as u64).collect();
        let cv = Canvas::new(
            &square(),
            &GridOptions {
                cells_long_side: 100,
                cell_m: None,
            },
        )
        .unwrap();
        let hs = [40.0, 60.0, 90.0, 140.0];
        let ours = likelihood_cv(&cv, &px, &py, &cum, n1, &hs);
        let exact: Vec<f64> = hs
            .iter()
            .map(|&h| {
                let mut ll = 0.0;
                for i in 0..px.len() {
                    let (mut a, mut b) = (0.0, 0.0);
                    for j in 0..px.len() {
                        if j == i {
                            continue;
                        }
                        let d2 = (px[i] - px[j]).powi(2) + (py[i] - py[j]).powi(2);
                        let k = Kernel::Gaussian.value(d2, h);
                        if j < n1 {
                            a += k;
                        } else {
                            b += k;
                        }
                    }
                    ll += if i < n1 {
                        (a / (a + b)).ln()
                    } else {
                        (b / (a + b)).ln()
                    };
                }
                ll
            })
            .collect();
        // Linear binning widens each kernel by about cell²/6 in variance
        // (1 % at 4 cells), so the criterion differs a little; tolerance 2 %
        // of it, and the same best bandwidth.
        let rel: Vec<f64> = ours
            .iter()
            .zip(&exact)
            .map(|(o, e)| (o.expect("finite criterion") - e).abs() / e.abs())
            .collect();
        assert!(
            rel.iter().all(|r| *r < 0.02),
            "relative differences {rel:?}"
        );
        let arg = |v: &[f64]| {
            v.iter()
                .enumerate()
                .max_by(|a, b| a.1.total_cmp(b.1))
                .unwrap()
                .0
        };
        let o: Vec<f64> = ours.iter().map(|v| v.unwrap()).collect();
        assert_eq!(arg(&o), arg(&exact), "{o:?} vs {exact:?}");
    }

    #[test]
    fn too_few_labellings_to_flag_anything_is_said() {
        let (x, y) = pts(80, 5, 500.0, 500.0, 990.0);
        let (cx, cy) = pts(200, 6, 500.0, 500.0, 990.0);
        let o = RiskSurfaceOptions { n_sim: 9, ..opts() };
        let r = RiskSurfaceJob::new((&x, &y), (&cx, &cy), None, &square(), &o)
            .unwrap()
            .finish();
        assert!(r.raised.polygons.is_empty() && r.lowered.polygons.is_empty());
        assert!(
            r.warnings
                .iter()
                .any(|w| w.contains("no place can be flagged")
                    && w.contains("at least 19 labellings")),
            "{:?}",
            r.warnings
        );
        let o = RiskSurfaceOptions {
            n_sim: 19,
            ..opts()
        };
        let r = RiskSurfaceJob::new((&x, &y), (&cx, &cy), None, &square(), &o)
            .unwrap()
            .finish();
        assert!(!r
            .warnings
            .iter()
            .any(|w| w.contains("no place can be flagged")));
    }

    #[test]
    fn masked_cells_are_marked_never_zero_ratio() {
        // Controls only in the left half: the right half has too few.
        let (cx, cy) = pts(400, 3, 150.0, 500.0, 290.0);
        let (x, y) = pts(80, 4, 500.0, 500.0, 990.0);
        let job = RiskSurfaceJob::new((&x, &y), (&cx, &cy), None, &square(), &opts()).unwrap();
        let r = job.finish();
        let few = r
            .class
            .iter()
            .filter(|&&c| c == class::FEW_CONTROLS)
            .count();
        assert!(few > r.nx * r.ny / 4, "{few}");
        // The far right column is masked, never estimated.
        for j in 0..r.ny {
            assert_ne!(r.class[j * r.nx + r.nx - 1], class::ESTIMATED);
        }
        assert!(r.masked_share > 0.25);
        assert!(r.warnings.iter().any(|w| w.contains("too few controls")));
    }
}
