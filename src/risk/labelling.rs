//! The random labelling test (Diggle & Chetwynd 1991).
//!
//! **Reference.** Diggle, P. J. & Chetwynd, A. G. (1991). "Second-order
//! analysis of spatial clustering for inhomogeneous populations".
//! *Biometrics* 47(3), 1155–1163.
//!
//! **Null hypothesis.** Given the pooled locations of the n₁ cases and n₀
//! controls, which of them are cases is a random choice of n₁ (random
//! labelling). Under it, cases cluster exactly as much as the population
//! the controls stand for, and D(r) = K₁₁(r) − K₀₀(r) has mean 0 at every r.
//! D above 0 says cases cluster beyond the population at that distance.
//!
//! **Estimator.** K₁₁ and K₀₀ are the K estimator of
//! [`crate::distance`] applied to the cases alone and to the controls alone,
//! in the same study area, on the same r grid, with the same edge correction
//! (none, isotropic or translation): K(r) = |W| / (n(n − 1)) · Σ_{i≠j}
//! e_ij · 1{d_ij ≤ r}. The weights e_ij depend only on the two locations and
//! the study area, never on the other points, so one visit of the pooled
//! pairs serves every labelling.
//!
//! **Algorithm.** One pass over the pooled pairs within r_max serves a whole
//! batch of labellings (up to a few hundred), with no pair stored:
//! * the labellings are bit columns: bit s of point i says whether i is in
//!   the smaller group (cases or controls, whichever is fewer) in labelling s;
//! * a pair adds its weight to "both in the smaller group" for every s where
//!   both bits are set (a bitwise AND; expected (m · p²) additions, p the
//!   smaller group's share);
//! * the pair also adds its weight to its two points' row sums R_i(bin) and
//!   to the total T(bin);
//! * afterwards, for labelling s, "both in the larger group" is
//!   T − Σ_{i in the smaller group} R_i + (both in the smaller group), since
//!   1{neither} = 1 − 1{i} − 1{j} + 1{both}.
//!
//! **Test.** The spread of D(r) under random labelling grows with r (K
//! itself grows like r²), so an unscaled maximum deviation would hear only
//! the largest distances. Each distance's deviation is therefore divided by
//! the standard deviation of the relabelled D at that distance (a
//! studentised global envelope test; Myllymäki, Mrkvička, Grabarnik, Seijo &
//! Hahn 2017, "Global envelope tests for spatial processes", *Journal of the
//! Royal Statistical Society B* 79(2), 381–404 — reference from memory),
//! then the maximum-deviation and DCLF tests of the clustering envelopes are
//! applied with rank p-values; the global band is ± the critical studentised
//! deviation times that standard deviation. Diggle & Chetwynd (1991) scale
//! by the analytic variance of D instead; the simulated one serves the same
//! purpose.
//!
//! Cost per batch: one enumeration of the pairs plus O(pairs · m · p²)
//! additions; memory O(n · bins + m · bins), whatever the number of pairs.
//! The border correction is not offered: its weights depend on which points
//! are the centres, so they differ between the two groups' estimates.

use crate::distance::csr::stream_rng;
use crate::distance::edge::Correction;
use crate::distance::envelope::{
    check_distance_range, distance_fields, summarise, Bands, GlobalTest, Reference,
};
use crate::distance::functions::{Context, FunctionParams, Needs};
use crate::distance::verdict::{departures, fmt_p, range_list, Departure, DistanceRange};
use crate::error::AnalysisError;
use crate::window::Window;
use rand::RngExt;
use serde::{Deserialize, Serialize};

/// Options of the random labelling test (`labellingStart` in the JS API):
/// the one home of their defaults and limits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct LabellingOptions {
    /// Random relabellings.
    pub n_sim: usize,
    pub seed: u64,
    /// Level of the global tests.
    pub alpha: f64,
    /// Start of the tested distances, m (`None`: 0).
    pub r_min_m: Option<f64>,
    /// Largest distance, m (`None`: the rule of the clustering section).
    pub r_max_m: Option<f64>,
    pub n_steps: usize,
    /// Isotropic, translation or none (not border: see the module docs).
    pub correction: Correction,
    /// What is compared with the relabellings: D(r) or the cross-type L.
    pub statistic: LabellingStatistic,
    /// Compare two categories of the events instead of events and
    /// controls: the events of this category are the "cases" …
    pub cases_category: Option<String>,
    /// … and those of this one the "controls" (`None`: all other categories).
    pub controls_category: Option<String>,
}

impl Default for LabellingOptions {
    fn default() -> Self {
        LabellingOptions {
            n_sim: 199,
            seed: 0,
            alpha: 0.05,
            r_min_m: None,
            r_max_m: None,
            n_steps: 50,
            correction: Correction::Isotropic,
            statistic: LabellingStatistic::Difference,
            cases_category: None,
            controls_category: None,
        }
    }
}

impl crate::params::Params for LabellingOptions {
    const NAME: &'static str = "labellingStart";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::Field;
        let mut v = vec![
            Field::integer("n_sim", "random relabellings of cases and controls").range(1.0, 9999.0),
            Field::seed("seed of the relabellings"),
            Field::number("alpha", None, "level of the global tests").above(0.0, Some(0.5)),
        ];
        v.extend(distance_fields(
            "start of the tested distances; empty = the first distance above 0",
        ));
        v.push(Field::choice(
            "correction",
            &["isotropic", "translation", "none"],
            "edge correction of both K estimates",
        ));
        v.push(Field::choice(
            "statistic",
            &["difference", "cross_l"],
            "difference: D(r) = K of the cases − K of the controls; cross_l: the cross-type L of cases and controls",
        ));
        v.push(
            Field::text(
                "cases_category",
                "compare two categories of the events: this one as the cases; empty = the events against the population file",
            )
            .optional(),
        );
        v.push(
            Field::text(
                "controls_category",
                "with cases_category: this category as the controls; empty = all other categories",
            )
            .optional(),
        );
        v
    }
    fn check(&self) -> Result<(), AnalysisError> {
        check_distance_range(self.r_min_m, self.r_max_m)?;
        if self.cases_category.is_none() && self.controls_category.is_some() {
            return Err(crate::params::bad(
                "controls_category",
                "needs cases_category (the category compared with it)",
            ));
        }
        if self.cases_category.is_some() && self.cases_category == self.controls_category {
            return Err(crate::params::bad(
                "controls_category",
                "must differ from cases_category",
            ));
        }
        if self.correction == Correction::Border {
            return Err(crate::params::bad(
                "correction",
                "the border correction is not available for D(r): use isotropic, translation or none",
            ));
        }
        Ok(())
    }
}

/// The curve compared with its relabellings.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LabellingStatistic {
    /// D(r) = K_cases(r) − K_controls(r) (Diggle & Chetwynd 1991).
    #[default]
    Difference,
    /// The cross-type L(r) = √(K₁₀(r)/π): how many controls lie within r of
    /// a case (and cases of a control), the two directions averaged.
    CrossL,
}

/// What the observed curve says, in the page's words.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum LabellingOutcome {
    /// D inside the global band: cases cluster as the population does.
    ConsistentWithPopulation,
    /// D above the band somewhere: cases cluster beyond the population.
    BeyondPopulation,
    /// D below the band: cases are more spread out than the population.
    MoreSpreadOut,
    /// Both, at different distances.
    Mixed,
    /// Cross-type L below the band: cases lie farther from the controls
    /// than random labels would put them (cases apart from the population).
    ApartFromControls,
    /// Cross-type L above the band: cases lie closer to the controls than
    /// random labels would put them.
    CloserToControls,
}

/// Result of the random labelling test. Curves are on `r`.
#[derive(Debug, Clone, Serialize)]
pub struct LabellingResult {
    pub r: Vec<f64>,
    /// The curve tested: D(r) = K_cases(r) − K_controls(r) (m²), or the
    /// cross-type L (m), as `statistic` says.
    pub observed: Vec<f64>,
    pub statistic: LabellingStatistic,
    /// What deviations are measured from: 0 for D; the mean of the observed
    /// and relabelled curves for the cross-type L.
    pub reference: Vec<f64>,
    pub k_cases: Vec<f64>,
    pub k_controls: Vec<f64>,
    /// The cross-type K of cases and controls (m²), both directions averaged.
    pub k_cross: Vec<f64>,
    /// Mean of the relabelled curves.
    pub sim_mean: Vec<f64>,
    pub pointwise_lo: Vec<f64>,
    pub pointwise_hi: Vec<f64>,
    /// The band of the maximum-deviation test around 0.
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
    pub n_controls: usize,
    pub correction: Correction,
    pub r_max_rule: String,
    pub capped_weights: u64,
    pub outcome: LabellingOutcome,
    /// Distance ranges where D leaves the global band.
    pub ranges: Vec<DistanceRange>,
    pub verdict: String,
    pub caveats: Vec<String>,
    pub warnings: Vec<String>,
}

/// Relabellings done per pass over the pooled pairs.
const PER_PASS: usize = 256;

/// What another thread or Web Worker needs to compute relabellings of a
/// run: the study area, the pooled points (cases first) and the options.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct LabellingShare {
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub n_cases: usize,
    pub options: LabellingOptions,
}

/// Computes relabellings of a run, here or elsewhere: relabelling j depends
/// only on the seed and j, so a range computed by a [`LabellingSimulator`]
/// built from [`LabellingJob::share`] equals the job's own.
pub struct LabellingSimulator {
    ctx: Context,
    x: Vec<f64>,
    y: Vec<f64>,
    n_cases: usize,
    /// Size of the smaller group and whether it is the cases.
    k_small: usize,
    cases_smaller: bool,
    opts: LabellingOptions,
}

impl LabellingSimulator {
    /// Prepares the r grid and edge correction of the pooled points
    /// (`x`, `y`: the `n_cases` cases first) in `window`.
    fn build(
        x: Vec<f64>,
        y: Vec<f64>,
        n_cases: usize,
        window: &Window,
        opts: &LabellingOptions,
    ) -> Result<LabellingSimulator, AnalysisError> {
        use crate::params::Params;
        opts.validate_in(None)?;
        let n = x.len();
        if y.len() != n || n_cases > n {
            return Err(AnalysisError::BadParameter {
                name: "points".into(),
                detail: "coordinate lists and group sizes do not match".into(),
            });
        }
        let (n1, n0) = (n_cases, n - n_cases);
        if n1 < 2 || n0 < 2 {
            return Err(AnalysisError::TooFewPoints {
                needed: 2,
                found: n1.min(n0),
            });
        }
        let fp = FunctionParams {
            r_max: opts.r_max_m,
            n_steps: opts.n_steps,
            correction: opts.correction,
            ..Default::default()
        };
        let ctx = Context::new(window.clone(), n, &fp, Needs::K_ONLY)?;
        Ok(LabellingSimulator {
            ctx,
            x,
            y,
            n_cases,
            k_small: n1.min(n0),
            cases_smaller: n1 <= n0,
            opts: opts.clone(),
        })
    }

    /// Rebuilds the simulator of a shared run (in a helper worker).
    pub fn new(share: &LabellingShare) -> Result<LabellingSimulator, AnalysisError> {
        let window =
            Window::from_polygons(share.polygons.clone(), crate::window::WindowOrigin::File)
                .map_err(|e| AnalysisError::BadParameter {
                    name: "study area".into(),
                    detail: e.to_string(),
                })?;
        LabellingSimulator::build(
            share.x.clone(),
            share.y.clone(),
            share.n_cases,
            &window,
            &share.options,
        )
    }

    /// The D curves of relabellings `from..to` (at most `n_sim`), one after
    /// another, each on the r grid.
    pub fn simulate_range(&self, from: usize, to: usize) -> Result<Vec<f64>, AnalysisError> {
        let to = to.min(self.opts.n_sim);
        let mut out = Vec::with_capacity(to.saturating_sub(from) * self.ctx.r.len());
        let mut start = from;
        while start < to {
            let end = (start + PER_PASS).min(to);
            let sets = LabelSets::random(self.x.len(), self.k_small, self.opts.seed, start, end);
            let (curves, _) = d_curves(&self.ctx, &self.x, &self.y, &sets, self.cases_smaller)?;
            for c in curves {
                out.extend_from_slice(&c.statistic(self.opts.statistic));
            }
            start = end;
        }
        Ok(out)
    }
}

/// A random labelling test that can be advanced in batches (progress and
/// Cancel between them), or whose relabellings are computed elsewhere
/// ([`LabellingJob::share`], [`LabellingJob::add_simulated`]). Relabelling
/// j depends only on the seed and j.
pub struct LabellingJob {
    sim: LabellingSimulator,
    observed: LabelCurves,
    sims: Vec<f64>,
    done: usize,
    capped: u64,
    /// How the verdict names the two groups.
    names: (String, String),
}

impl LabellingJob {
    /// Names the two groups in the verdict (default "cases" and "the
    /// population"), e.g. `("events of \"enteric\"", "the other categories")`.
    pub fn name_groups(&mut self, cases: &str, controls: &str) {
        self.names = (cases.to_string(), controls.to_string());
    }

    /// Pools `cases` and `controls` (points as (x, y) lists, metres) in
    /// `window` and computes the observed D.
    pub fn new(
        cases: (&[f64], &[f64]),
        controls: (&[f64], &[f64]),
        window: &Window,
        opts: &LabellingOptions,
    ) -> Result<LabellingJob, AnalysisError> {
        if cases.0.len() != cases.1.len() || controls.0.len() != controls.1.len() {
            return Err(AnalysisError::BadParameter {
                name: "points".into(),
                detail: "x and y lists differ in length".into(),
            });
        }
        let n1 = cases.0.len();
        let x: Vec<f64> = cases.0.iter().chain(controls.0).copied().collect();
        let y: Vec<f64> = cases.1.iter().chain(controls.1).copied().collect();
        let sim = LabellingSimulator::build(x, y, n1, window, opts)?;
        let in_small: Vec<bool> = (0..sim.x.len())
            .map(|i| (i < n1) == sim.cases_smaller)
            .collect();
        let (mut obs, capped) = d_curves(
            &sim.ctx,
            &sim.x,
            &sim.y,
            &LabelSets::observed(&in_small),
            sim.cases_smaller,
        )?;
        let observed = obs.remove(0);
        Ok(LabellingJob {
            sims: Vec::with_capacity(opts.n_sim * sim.ctx.r.len()),
            sim,
            observed,
            done: 0,
            capped,
            names: ("cases".into(), "the population".into()),
        })
    }

    /// Runs up to `k` more relabellings; returns how many are done.
    pub fn run_batch(&mut self, k: usize) -> Result<usize, AnalysisError> {
        let to = (self.done + k).min(self.sim.opts.n_sim);
        let curves = self.sim.simulate_range(self.done, to)?;
        self.sims.extend_from_slice(&curves);
        self.done = to;
        Ok(self.done)
    }

    /// The D curves of relabellings `from..to`, as
    /// [`LabellingSimulator::simulate_range`]; the job is not changed.
    pub fn simulate_range(&self, from: usize, to: usize) -> Result<Vec<f64>, AnalysisError> {
        self.sim.simulate_range(from, to)
    }

    /// What a [`LabellingSimulator`] elsewhere needs.
    pub fn share(&self) -> LabellingShare {
        LabellingShare {
            polygons: self.sim.ctx.region.polygons().to_vec(),
            x: self.sim.x.clone(),
            y: self.sim.y.clone(),
            n_cases: self.sim.n_cases,
            options: self.sim.opts.clone(),
        }
    }

    /// Appends D curves computed elsewhere that start at relabelling
    /// `from`, which must equal [`LabellingJob::done`]. Returns the number
    /// done so far.
    pub fn add_simulated(&mut self, from: usize, curves: &[f64]) -> Result<usize, AnalysisError> {
        let rows = crate::params::piece_rows(
            "relabelled curves",
            "relabelling",
            (from, self.done, self.sim.opts.n_sim),
            curves.len(),
            self.sim.ctx.r.len(),
        )?;
        self.sims.extend_from_slice(curves);
        self.done += rows;
        Ok(self.done)
    }

    pub fn done(&self) -> usize {
        self.done
    }

    /// The distances of the curves, m.
    pub fn r(&self) -> &[f64] {
        &self.sim.ctx.r
    }

    pub fn total(&self) -> usize {
        self.sim.opts.n_sim
    }

    /// Finishes the remaining relabellings and summarises.
    pub fn finish(mut self) -> Result<LabellingResult, AnalysisError> {
        let rest = self.sim.opts.n_sim - self.done;
        self.run_batch(rest)?;
        let r = self.sim.ctx.r.clone();
        let nr = r.len();
        let m = self.sim.opts.n_sim;
        let zero = vec![0.0; nr];
        let statistic = self.sim.opts.statistic;
        let obs = self.observed.statistic(statistic);
        let bands = if statistic == LabellingStatistic::CrossL {
            // The cross-type L under random labelling follows the pooled
            // pattern, not πr²: deviations from the mean of the observed
            // and relabelled curves, unscaled as for L in the clustering
            // section (L's spread hardly changes with r).
            summarise(
                &r,
                &obs,
                &self.sims,
                &zero,
                Reference::SimulationMean,
                self.sim.opts.r_min_m.unwrap_or(f64::MIN_POSITIVE),
                self.sim.opts.alpha,
            )
        } else {
            // Studentised: each distance's deviations are divided by the spread
            // of the relabelled D there (see the module docs).
            let mean: Vec<f64> = (0..nr)
                .map(|k| (0..m).map(|j| self.sims[j * nr + k]).sum::<f64>() / m as f64)
                .collect();
            let sd: Vec<f64> = (0..nr)
                .map(|k| {
                    if m < 2 {
                        return f64::NAN;
                    }
                    let ss: f64 = (0..m)
                        .map(|j| (self.sims[j * nr + k] - mean[k]).powi(2))
                        .sum();
                    (ss / (m - 1) as f64).sqrt()
                })
                .collect();
            let scale = |v: f64, k: usize| if sd[k] > 0.0 { v / sd[k] } else { f64::NAN };
            let d_scaled: Vec<f64> = obs.iter().enumerate().map(|(k, &v)| scale(v, k)).collect();
            let sims_scaled: Vec<f64> = self
                .sims
                .iter()
                .enumerate()
                .map(|(i, &v)| scale(v, i % nr))
                .collect();
            let mut bands = summarise(
                &r,
                &d_scaled,
                &sims_scaled,
                &zero,
                Reference::Theoretical,
                // r = 0 says nothing about clustering (D(0) is 0 but for
                // coincident points): tested from the first positive distance.
                self.sim.opts.r_min_m.unwrap_or(f64::MIN_POSITIVE),
                self.sim.opts.alpha,
            );
            // Back on D's own scale: the pointwise band and mean of the raw
            // curves, the global band as ± the critical deviation times the spread.
            let raw = summarise(
                &r,
                &obs,
                &self.sims,
                &zero,
                Reference::Theoretical,
                0.0,
                self.sim.opts.alpha,
            );
            bands.sim_mean = raw.sim_mean;
            bands.pointwise_lo = raw.pointwise_lo;
            bands.pointwise_hi = raw.pointwise_hi;
            bands.reference_curve = zero.clone();
            let crit = bands.mad.critical;
            bands.global_lo = (0..nr)
                .map(|k| {
                    if bands.in_test[k] {
                        -crit * sd[k]
                    } else {
                        f64::NAN
                    }
                })
                .collect();
            bands.global_hi = (0..nr)
                .map(|k| {
                    if bands.in_test[k] {
                        crit * sd[k]
                    } else {
                        f64::NAN
                    }
                })
                .collect();
            bands
        };
        let mut warnings = self.sim.ctx.warnings.clone();
        warnings.extend(bands.warnings.iter().cloned());
        if self.capped > 0 {
            warnings.push(format!(
                "{} pair weights reached the cap of {}",
                self.capped, self.sim.ctx.cap
            ));
        }
        let (outcome, ranges, verdict) = verdict(
            &r,
            &obs,
            statistic,
            &bands,
            self.sim.opts.alpha,
            self.sim.opts.n_sim,
            (&self.names.0, &self.names.1),
        );
        let n1 = if self.sim.cases_smaller {
            self.sim.k_small
        } else {
            self.sim.x.len() - self.sim.k_small
        };
        let caveats = if statistic == LabellingStatistic::CrossL {
            vec![
                "The controls stand for the population at risk: if they were sampled from a different population, or their addresses are placed differently (geocoding, rounding), the cross-type L measures that difference too.".into(),
                "The cross-type L counts controls around cases; under random labelling it follows the pooled points, so the reference is the mean of the relabelled curves, not a straight line.".into(),
                "The pointwise band is not a test: a curve crossing it at some distance is expected by chance when many distances are looked at.".into(),
            ]
        } else {
            vec![
                "The controls stand for the population at risk: if they were sampled from a different population, or their addresses are placed differently (geocoding, rounding), D measures that difference too.".into(),
                "A raised D says cases sit closer together than the population does at those distances; it does not say why, and it is not one test per distance.".into(),
                "The pointwise band is not a test: a curve crossing it at some distance is expected by chance when many distances are looked at.".into(),
            ]
        };
        Ok(LabellingResult {
            observed: obs,
            statistic,
            reference: bands.reference_curve,
            k_cases: self.observed.k_cases,
            k_controls: self.observed.k_controls,
            k_cross: self.observed.k_cross,
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
            n_cases: n1,
            n_controls: self.sim.x.len() - n1,
            correction: self.sim.opts.correction,
            r_max_rule: self.sim.ctx.r_max_rule.clone(),
            capped_weights: self.capped,
            outcome,
            ranges,
            verdict,
            caveats,
            warnings,
            r,
        })
    }
}

/// Runs a whole random labelling test at once (no progress reports).
pub fn random_labelling(
    cases: (&[f64], &[f64]),
    controls: (&[f64], &[f64]),
    window: &Window,
    opts: &LabellingOptions,
) -> Result<LabellingResult, AnalysisError> {
    LabellingJob::new(cases, controls, window, opts)?.finish()
}

/// The plain-words verdict: where the observed D leaves the global band.
fn verdict(
    r: &[f64],
    d: &[f64],
    statistic: LabellingStatistic,
    b: &Bands,
    alpha: f64,
    m: usize,
    (cases, controls): (&str, &str),
) -> (LabellingOutcome, Vec<DistanceRange>, String) {
    let mut first = cases.chars();
    #[allow(non_snake_case)]
    let Cases: String = first
        .next()
        .map(|c| c.to_uppercase().chain(first).collect())
        .unwrap_or_default();
    let ranges = departures(r, d, &b.global_lo, &b.global_hi, &b.in_test, true);
    let above = ranges.iter().any(|g| g.departure == Departure::Clustered);
    let below = ranges.iter().any(|g| g.departure == Departure::Regular);
    let cross = statistic == LabellingStatistic::CrossL;
    let outcome = match (b.mad.rejects, above, below) {
        (false, _, _) => LabellingOutcome::ConsistentWithPopulation,
        (true, true, true) => LabellingOutcome::Mixed,
        (true, false, true) if cross => LabellingOutcome::ApartFromControls,
        (true, _, _) if cross => LabellingOutcome::CloserToControls,
        (true, false, true) => LabellingOutcome::MoreSpreadOut,
        _ => LabellingOutcome::BeyondPopulation,
    };
    let list = |dep: Departure| range_list(&ranges, dep);
    let test = format!(
        "maximum-deviation test p = {}, {m} relabellings; DCLF test p = {}",
        fmt_p(b.mad.p_value),
        fmt_p(b.dclf.p_value)
    );
    let text = match outcome {
        LabellingOutcome::ConsistentWithPopulation if cross => format!(
            "Consistent with {controls}: {cases} lie as close to {controls} as random labels would put them; the cross-type L stays inside the global {:.0}% band ({test}).",
            100.0 * (1.0 - alpha)
        ),
        LabellingOutcome::ConsistentWithPopulation => format!(
            "Consistent with {controls}: {cases} cluster no more than {controls}; D stays inside the global {:.0}% band ({test}).",
            100.0 * (1.0 - alpha)
        ),
        LabellingOutcome::ApartFromControls => format!(
            "{Cases} lie farther from {controls} than random labels would put them at distances {}: they keep apart from {controls} ({test}).",
            list(Departure::Regular)
        ),
        LabellingOutcome::CloserToControls => format!(
            "{Cases} lie closer to {controls} than random labels would put them at distances {} ({test}).",
            list(Departure::Clustered)
        ),
        LabellingOutcome::Mixed if cross => format!(
            "{Cases} lie closer to {controls} than random labels would put them at distances {} and farther at {} ({test}).",
            list(Departure::Clustered),
            list(Departure::Regular)
        ),
        LabellingOutcome::BeyondPopulation => format!(
            "{Cases} cluster beyond {controls} at distances {} ({test}).",
            list(Departure::Clustered)
        ),
        LabellingOutcome::MoreSpreadOut => format!(
            "{Cases} are more spread out than {controls} at distances {} ({test}).",
            list(Departure::Regular)
        ),
        LabellingOutcome::Mixed => format!(
            "{Cases} cluster beyond {controls} at distances {} and are more spread out at {} ({test}).",
            list(Departure::Clustered),
            list(Departure::Regular)
        ),
    };
    (outcome, ranges, text)
}

/// Which points are in the smaller group, for a batch of labellings.
#[derive(Debug, Clone, PartialEq)]
pub struct LabelSets {
    /// Number of points.
    pub n: usize,
    /// Indices of the smaller group's points, one list per labelling.
    pub sets: Vec<Vec<u32>>,
}

impl LabelSets {
    /// The labelling given by `in_group` (true = in the smaller group).
    pub fn observed(in_group: &[bool]) -> LabelSets {
        LabelSets {
            n: in_group.len(),
            sets: vec![in_group
                .iter()
                .enumerate()
                .filter(|(_, &b)| b)
                .map(|(i, _)| i as u32)
                .collect()],
        }
    }

    /// Random labellings `from..to` of `k` points in the smaller group out
    /// of `n`: labelling j is a uniform random choice of k (a partial
    /// Fisher–Yates shuffle) from its own stream `stream_rng(seed, j)`, so
    /// it does not depend on how the labellings are split into batches.
    pub fn random(n: usize, k: usize, seed: u64, from: usize, to: usize) -> LabelSets {
        let mut perm: Vec<u32> = (0..n as u32).collect();
        let sets = (from..to)
            .map(|j| {
                perm.iter_mut().enumerate().for_each(|(i, v)| *v = i as u32);
                let mut rng = stream_rng(seed, j as u64);
                for i in 0..k.min(n) {
                    let r = rng.random_range(i..n);
                    perm.swap(i, r);
                }
                let mut s = perm[..k.min(n)].to_vec();
                s.sort_unstable();
                s
            })
            .collect();
        LabelSets { n, sets }
    }
}

/// Pair-weight sums of [`pair_sums`]: small, large, cross, capped.
type PairSums = (Vec<f64>, Vec<f64>, Vec<f64>, u64);

/// For each labelling of `sets`: the pair-weight sums, per r bin (not
/// cumulative), of pairs with both points in the smaller group and of pairs
/// with both points in the larger group, and of pairs with one point in
/// each, as `(small[s][k], large[s][k], cross[s][k])` flattened labelling
/// by labelling (`s · bins + k`, `bins` = r grid length). Also returns how
/// many weights reached the cap.
fn pair_sums(
    ctx: &Context,
    x: &[f64],
    y: &[f64],
    sets: &LabelSets,
) -> Result<PairSums, AnalysisError> {
    let n = x.len();
    let bins = ctx.r.len();
    let m = sets.sets.len();
    let words = m.div_ceil(64).max(1);
    let mut bits = vec![0u64; n * words];
    for (s, set) in sets.sets.iter().enumerate() {
        for &i in set {
            bits[i as usize * words + s / 64] |= 1u64 << (s % 64);
        }
    }
    // Row sums per point and bin (bin == bins: beyond r_max, unused).
    let mut row = vec![0.0f64; n * bins];
    let mut total = vec![0.0f64; bins];
    let mut small = vec![0.0f64; bins * m];
    let capped = ctx.for_each_k_pair(x, y, |i, j, k, w| {
        if k >= bins {
            return;
        }
        row[i * bins + k] += w;
        row[j * bins + k] += w;
        total[k] += w;
        let (bi, bj) = (
            &bits[i * words..(i + 1) * words],
            &bits[j * words..(j + 1) * words],
        );
        for (wd, (a, b)) in bi.iter().zip(bj).enumerate() {
            let mut both = a & b;
            while both != 0 {
                let s = wd * 64 + both.trailing_zeros() as usize;
                small[k * m + s] += w;
                both &= both - 1;
            }
        }
    })?;
    let mut small_out = vec![0.0f64; m * bins];
    let mut large_out = vec![0.0f64; m * bins];
    let mut cross_out = vec![0.0f64; m * bins];
    for (s, set) in sets.sets.iter().enumerate() {
        for k in 0..bins {
            // a = Σ over pairs of (1{i} + 1{j}) · w for the smaller group:
            // pairs with both in it count twice, pairs with one once.
            let a: f64 = set.iter().map(|&i| row[i as usize * bins + k]).sum();
            let sm = small[k * m + s];
            small_out[s * bins + k] = sm;
            large_out[s * bins + k] = total[k] - a + sm;
            cross_out[s * bins + k] = a - 2.0 * sm;
        }
    }
    Ok((small_out, large_out, cross_out, capped))
}

/// The curves of one labelling, each on `ctx.r`.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct LabelCurves {
    /// D(r) = K_cases(r) − K_controls(r).
    pub d: Vec<f64>,
    pub k_cases: Vec<f64>,
    pub k_controls: Vec<f64>,
    /// The cross-type K of cases and controls, both directions averaged:
    /// |W| / (2 n₁ n₀) · Σ over case–control pairs within r of the pair
    /// weight (which is the sum of the two points' own weights).
    pub k_cross: Vec<f64>,
}

impl LabelCurves {
    /// The curve of `statistic`: D, or the cross-type L = √(K_cross/π).
    pub fn statistic(&self, statistic: LabellingStatistic) -> Vec<f64> {
        match statistic {
            LabellingStatistic::Difference => self.d.clone(),
            LabellingStatistic::CrossL => self
                .k_cross
                .iter()
                .map(|&k| (k.max(0.0) / std::f64::consts::PI).sqrt())
                .collect(),
        }
    }
}

/// The curves of each labelling of `sets` (see [`LabelCurves`]). `sets`
/// lists the members of the smaller group; `cases_are_smaller` says
/// whether that group is the cases. The group sizes are taken from the
/// first labelling.
pub(crate) fn d_curves(
    ctx: &Context,
    x: &[f64],
    y: &[f64],
    sets: &LabelSets,
    cases_are_smaller: bool,
) -> Result<(Vec<LabelCurves>, u64), AnalysisError> {
    let n = x.len();
    if y.len() != n || sets.n != n {
        return Err(AnalysisError::BadParameter {
            name: "points".into(),
            detail: "coordinate lists and labels differ in length".into(),
        });
    }
    let k_small = sets.sets.first().map_or(0, |s| s.len());
    let k_large = n - k_small;
    if k_small < 2 || k_large < 2 {
        return Err(AnalysisError::TooFewPoints {
            needed: 2,
            found: k_small.min(k_large),
        });
    }
    let bins = ctx.r.len();
    let (small, large, cross, capped) = pair_sums(ctx, x, y, sets)?;
    let area = ctx.region.area();
    let k_of = |sums: &[f64], norm: f64| -> Vec<f64> {
        let mut acc = 0.0;
        sums.iter()
            .map(|v| {
                acc += v;
                norm * acc
            })
            .collect()
    };
    let within = |size: usize| area / (size as f64 * (size as f64 - 1.0));
    let between = area / (2.0 * k_small as f64 * k_large as f64);
    let out = (0..sets.sets.len())
        .map(|s| {
            let part = |v: &[f64]| v[s * bins..(s + 1) * bins].to_vec();
            let ks = k_of(&part(&small), within(k_small));
            let kl = k_of(&part(&large), within(k_large));
            let k_cross = k_of(&part(&cross), between);
            let (k_cases, k_controls) = if cases_are_smaller {
                (ks, kl)
            } else {
                (kl, ks)
            };
            let d = k_cases
                .iter()
                .zip(&k_controls)
                .map(|(a, b)| a - b)
                .collect();
            LabelCurves {
                d,
                k_cases,
                k_controls,
                k_cross,
            }
        })
        .collect();
    Ok((out, capped))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rng::rng_from_seed;

    fn context(w: &Window, n: usize, correction: Correction, r_max: f64) -> Context {
        let p = FunctionParams {
            r_max: Some(r_max),
            n_steps: 20,
            correction,
            ..Default::default()
        };
        Context::new(w.clone(), n, &p, Needs::K_ONLY).unwrap()
    }

    /// A clustered pooled pattern in a rectangle with a hole: 60 cases in
    /// two clumps, 140 controls spread at random.
    fn pooled() -> (Window, Vec<f64>, Vec<f64>, Vec<bool>) {
        let w =
            Window::rectangle_with_hole([0.0, 0.0, 1000.0, 600.0], [400.0, 200.0, 600.0, 400.0])
                .unwrap();
        let mut rng = rng_from_seed(21);
        let (mut x, mut y, mut case) = (vec![], vec![], vec![]);
        while x.len() < 200 {
            let c = x.len() < 60;
            let (px, py) = if c {
                let (cx, cy) = if x.len() % 2 == 0 {
                    (150.0, 150.0)
                } else {
                    (850.0, 450.0)
                };
                (
                    cx + 60.0 * (rng.random::<f64>() - 0.5),
                    cy + 60.0 * (rng.random::<f64>() - 0.5),
                )
            } else {
                (1000.0 * rng.random::<f64>(), 600.0 * rng.random::<f64>())
            };
            if w.contains(px, py) {
                x.push(px);
                y.push(py);
                case.push(c);
            }
        }
        (w, x, y, case)
    }

    /// D equals K of the cases minus K of the controls, each computed on its
    /// own by the crate's K estimator (same window, grid and correction), to
    /// rounding; for both which-group-is-smaller arrangements.
    #[test]
    fn d_is_k_cases_minus_k_controls_computed_apart() {
        let (w, x, y, case) = pooled();
        for corr in [
            Correction::Isotropic,
            Correction::Translation,
            Correction::None,
        ] {
            let ctx = context(&w, x.len(), corr, 150.0);
            let pick = |want: bool| -> (Vec<f64>, Vec<f64>) {
                let idx: Vec<usize> = (0..x.len()).filter(|&i| case[i] == want).collect();
                (
                    idx.iter().map(|&i| x[i]).collect(),
                    idx.iter().map(|&i| y[i]).collect(),
                )
            };
            let k_alone = |want: bool| {
                let (px, py) = pick(want);
                let c = context(&w, px.len(), corr, 150.0);
                c.compute(&px, &py, Needs::K_ONLY).k
            };
            let (kc, k0) = (k_alone(true), k_alone(false));
            for cases_smaller in [true, false] {
                let in_small: Vec<bool> = case.iter().map(|&c| c == cases_smaller).collect();
                let (curves, _) =
                    d_curves(&ctx, &x, &y, &LabelSets::observed(&in_small), cases_smaller).unwrap();
                let (d, got_c, got_0) = (&curves[0].d, &curves[0].k_cases, &curves[0].k_controls);
                for k in 0..ctx.r.len() {
                    let tol = 1e-9 * (1.0 + kc[k].abs() + k0[k].abs());
                    assert!(
                        (got_c[k] - kc[k]).abs() <= tol,
                        "{corr:?} cases r={} {} {}",
                        ctx.r[k],
                        got_c[k],
                        kc[k]
                    );
                    assert!(
                        (got_0[k] - k0[k]).abs() <= tol,
                        "{corr:?} controls r={}",
                        ctx.r[k]
                    );
                    assert!((d[k] - (kc[k] - k0[k])).abs() <= 2.0 * tol);
                }
            }
            // The planted clumps: D clearly above 0 at 50 m.
            let in_small: Vec<bool> = case.clone();
            let (curves, _) =
                d_curves(&ctx, &x, &y, &LabelSets::observed(&in_small), true).unwrap();
            let k50 = ctx.r.iter().position(|&r| r >= 50.0).unwrap();
            assert!(curves[0].d[k50] > 0.0);
        }
    }

    /// A batch of relabellings gives each labelling the same curves as
    /// computing it alone (the bit columns do not mix labellings), and a
    /// labelling does not depend on the batch it is in.
    #[test]
    fn batches_give_each_labelling_its_own_curves() {
        let (w, x, y, _) = pooled();
        let ctx = context(&w, x.len(), Correction::Isotropic, 120.0);
        let all = LabelSets::random(x.len(), 60, 77, 0, 70);
        let (batch, _) = d_curves(&ctx, &x, &y, &all, true).unwrap();
        for s in [0usize, 1, 63, 64, 69] {
            let one = LabelSets {
                n: x.len(),
                sets: vec![all.sets[s].clone()],
            };
            let (alone, _) = d_curves(&ctx, &x, &y, &one, true).unwrap();
            for (a, b) in batch[s].d.iter().zip(&alone[0].d) {
                assert!((a - b).abs() <= 1e-9 * (1.0 + a.abs()), "labelling {s}");
            }
        }
        let later = LabelSets::random(x.len(), 60, 77, 64, 70);
        assert_eq!(later.sets[..], all.sets[64..70]);
        assert!(all
            .sets
            .iter()
            .all(|s| s.len() == 60 && s.windows(2).all(|p| p[0] < p[1])));
    }

    /// Under random labelling E[D(r)] = 0 (Diggle & Chetwynd 1991): over 400
    /// relabellings of a pattern, the mean of D at each r lies within four
    /// standard errors of 0 (common practice for a Monte Carlo mean; the
    /// standard error is the relabellings' own SD / √400).
    #[test]
    fn relabelled_d_has_mean_zero() {
        let (w, x, y, _) = pooled();
        let ctx = context(&w, x.len(), Correction::Translation, 150.0);
        let sets = LabelSets::random(x.len(), 60, 5, 0, 400);
        let (curves, _) = d_curves(&ctx, &x, &y, &sets, true).unwrap();
        for k in 1..ctx.r.len() {
            let v: Vec<f64> = curves.iter().map(|c| c.d[k]).collect();
            let mean = v.iter().sum::<f64>() / v.len() as f64;
            let sd =
                (v.iter().map(|d| (d - mean).powi(2)).sum::<f64>() / (v.len() - 1) as f64).sqrt();
            assert!(sd > 0.0);
            assert!(
                mean.abs() < 4.0 * sd / 20.0,
                "r={} mean {mean} sd {sd}",
                ctx.r[k]
            );
        }
    }

    fn split(x: &[f64], y: &[f64], case: &[bool]) -> [(Vec<f64>, Vec<f64>); 2] {
        let pick = |want: bool| {
            let idx: Vec<usize> = (0..x.len()).filter(|&i| case[i] == want).collect();
            (
                idx.iter().map(|&i| x[i]).collect::<Vec<f64>>(),
                idx.iter().map(|&i| y[i]).collect::<Vec<f64>>(),
            )
        };
        [pick(true), pick(false)]
    }

    /// The planted clumps of cases: the test rejects, says "beyond the
    /// population" at short distances, and the job's batches give the same
    /// result as one run (relabelling j depends only on the seed and j).
    #[test]
    fn planted_case_clumps_are_found_beyond_the_population() {
        let (w, x, y, case) = pooled();
        let [(cx, cy), (kx, ky)] = split(&x, &y, &case);
        let opts = LabellingOptions {
            n_sim: 99,
            seed: 3,
            r_max_m: Some(150.0),
            ..Default::default()
        };
        let res = random_labelling((&cx, &cy), (&kx, &ky), &w, &opts).unwrap();
        assert_eq!((res.n_cases, res.n_controls), (60, 140));
        assert_eq!(
            res.outcome,
            LabellingOutcome::BeyondPopulation,
            "{}",
            res.verdict
        );
        assert!(
            (res.mad.p_value - 0.01).abs() < 1e-12,
            "{}",
            res.mad.p_value
        );
        assert!(res
            .verdict
            .starts_with("Cases cluster beyond the population at distances"));
        assert!(res.ranges[0].from_m <= 30.0, "{:?}", res.ranges);
        let mut job = LabellingJob::new((&cx, &cy), (&kx, &ky), &w, &opts).unwrap();
        for _ in 0..10 {
            job.run_batch(7).unwrap();
        }
        let batched = job.finish().unwrap();
        assert_eq!(batched.observed, res.observed);
        assert_eq!(batched.sim_mean, res.sim_mean);
        assert_eq!(batched.mad.statistic, res.mad.statistic);
        // Cases and controls swapped: D changes sign, the band with it.
        let swapped = random_labelling((&kx, &ky), (&cx, &cy), &w, &opts).unwrap();
        for k in 0..res.r.len() {
            assert!(
                (swapped.observed[k] + res.observed[k]).abs()
                    <= 1e-9 * (1.0 + res.observed[k].abs())
            );
        }
        assert_eq!(
            swapped.outcome,
            LabellingOutcome::MoreSpreadOut,
            "{}",
            swapped.verdict
        );
    }

    /// Level: cases drawn at random from the pooled points (the null
    /// hypothesis itself), 200 seeded datasets, 39 relabellings each, α =
    /// 0.05: the number of rejections by the maximum-deviation test lies in
    /// the binomial 99 % interval [3, 19] for 200 trials at p = 0.05
    /// (scipy.stats.binom.interval(0.99, 200, 0.05)).
    #[test]
    fn level_under_random_labelling() {
        let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
        let mut rejections = [0usize; 2];
        for d in 0..200u64 {
            let mut rng = rng_from_seed(1000 + d);
            // An uneven population: a third of the points in one corner.
            let (mut x, mut y) = (vec![], vec![]);
            for i in 0..90 {
                let s = if i % 3 == 0 { 300.0 } else { 1000.0 };
                x.push(s * rng.random::<f64>());
                y.push(s * rng.random::<f64>());
            }
            let sets = LabelSets::random(90, 30, 77 + d, 0, 1);
            let mut case = vec![false; 90];
            for &i in &sets.sets[0] {
                case[i as usize] = true;
            }
            let [(cx, cy), (kx, ky)] = split(&x, &y, &case);
            for (s, statistic) in [LabellingStatistic::Difference, LabellingStatistic::CrossL]
                .into_iter()
                .enumerate()
            {
                let opts = LabellingOptions {
                    n_sim: 39,
                    seed: d,
                    r_max_m: Some(250.0),
                    n_steps: 20,
                    statistic,
                    ..Default::default()
                };
                if random_labelling((&cx, &cy), (&kx, &ky), &w, &opts)
                    .unwrap()
                    .mad
                    .rejects
                {
                    rejections[s] += 1;
                }
            }
        }
        // Both curves: D and the cross-type L.
        for r in rejections {
            assert!((3..=19).contains(&r), "{rejections:?} of 200 rejected");
        }
    }

    /// Power against a stated alternative: an uneven population of 90
    /// points (a third of them in one corner), 30 cases of which 12 are
    /// extra cases placed in a 40 m disc around a random spot (an excess
    /// the population does not have), 39 relabellings, α = 0.05. Over 100
    /// seeded datasets the maximum-deviation test rejects at least 90 times
    /// (the requirement; the threshold is a requirement, not a
    /// published value).
    #[test]
    fn power_against_a_planted_excess() {
        let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
        let mut rejections = 0;
        for d in 0..100u64 {
            let mut rng = rng_from_seed(5000 + d);
            let (mut x, mut y, mut case) = (vec![], vec![], vec![]);
            for i in 0..78 {
                let s = if i % 3 == 0 { 300.0 } else { 1000.0 };
                x.push(s * rng.random::<f64>());
                y.push(s * rng.random::<f64>());
                case.push(i < 18);
            }
            let (hx, hy) = (
                100.0 + 800.0 * rng.random::<f64>(),
                100.0 + 800.0 * rng.random::<f64>(),
            );
            while x.len() < 90 {
                let (a, b) = (rng.random::<f64>(), rng.random::<f64>());
                let rad = 40.0 * a.sqrt();
                let t = std::f64::consts::TAU * b;
                x.push(hx + rad * t.cos());
                y.push(hy + rad * t.sin());
                case.push(true);
            }
            let [(cx, cy), (kx, ky)] = split(&x, &y, &case);
            let opts = LabellingOptions {
                n_sim: 39,
                seed: d,
                r_max_m: Some(250.0),
                n_steps: 20,
                ..Default::default()
            };
            if random_labelling((&cx, &cy), (&kx, &ky), &w, &opts)
                .unwrap()
                .mad
                .rejects
            {
                rejections += 1;
            }
        }
        assert!(rejections >= 90, "{rejections} of 100 rejected");
    }

    /// The cross-type K: with no edge correction it is |W| / (n₁ n₀) times
    /// the number of case–control pairs within r (counted by brute force
    /// here); with every correction the pooled K splits exactly into the
    /// three kinds of pair: n(n−1) K = n₁(n₁−1) K₁₁ + n₀(n₀−1) K₀₀ + 2 n₁ n₀ K₁₀
    /// (each pair is of one kind; Lotwick & Silverman 1982 average the two
    /// directions of the cross-type estimate in the same spirit — reference
    /// from memory).
    #[test]
    fn cross_k_counts_case_control_pairs() {
        let (w, x, y, case) = pooled();
        let n = x.len();
        let n1 = case.iter().filter(|&&c| c).count();
        let n0 = n - n1;
        for corr in [
            Correction::None,
            Correction::Isotropic,
            Correction::Translation,
        ] {
            let ctx = context(&w, n, corr, 150.0);
            let (curves, _) = d_curves(&ctx, &x, &y, &LabelSets::observed(&case), true).unwrap();
            let c = &curves[0];
            let pooled = ctx.compute(&x, &y, Needs::K_ONLY).k;
            for (k, &pk) in pooled.iter().enumerate() {
                let whole = (n * (n - 1)) as f64 * pk;
                let parts = (n1 * (n1 - 1)) as f64 * c.k_cases[k]
                    + (n0 * (n0 - 1)) as f64 * c.k_controls[k]
                    + 2.0 * (n1 * n0) as f64 * c.k_cross[k];
                assert!(
                    (whole - parts).abs() <= 1e-9 * whole.abs().max(1.0),
                    "{corr:?} r={} {whole} {parts}",
                    ctx.r[k]
                );
            }
            if corr == Correction::None {
                for (k, &r) in ctx.r.iter().enumerate() {
                    let mut count = 0usize;
                    for i in 0..n {
                        for j in 0..n {
                            if case[i] && !case[j] && (x[i] - x[j]).hypot(y[i] - y[j]) <= r {
                                count += 1;
                            }
                        }
                    }
                    let want = w.area() / (n1 * n0) as f64 * count as f64;
                    assert!(
                        (c.k_cross[k] - want).abs() <= 1e-9 * want.max(1.0),
                        "r={r} {} {want}",
                        c.k_cross[k]
                    );
                }
            }
        }
    }

    /// The cross-type L test: the planted case clumps keep apart from the
    /// controls (L below the band at short distances), and random labels
    /// (cases a random subset) are mostly consistent.
    #[test]
    fn cross_l_sees_cases_apart_from_the_population() {
        let (w, x, y, case) = pooled();
        let [(cx, cy), (kx, ky)] = split(&x, &y, &case);
        let opts = LabellingOptions {
            n_sim: 99,
            seed: 4,
            r_max_m: Some(150.0),
            statistic: LabellingStatistic::CrossL,
            ..Default::default()
        };
        let res = random_labelling((&cx, &cy), (&kx, &ky), &w, &opts).unwrap();
        assert_eq!(res.statistic, LabellingStatistic::CrossL);
        assert_eq!(
            res.outcome,
            LabellingOutcome::ApartFromControls,
            "{}",
            res.verdict
        );
        assert!(res.verdict.contains("keep apart from the population"));
        for k in 0..res.r.len() {
            let l = (res.k_cross[k] / std::f64::consts::PI).sqrt();
            assert!((res.observed[k] - l).abs() <= 1e-12 * (1.0 + l));
        }
        let sets = LabelSets::random(x.len(), 60, 9, 0, 1);
        let mut random = vec![false; x.len()];
        for &i in &sets.sets[0] {
            random[i as usize] = true;
        }
        let [(cx, cy), (kx, ky)] = split(&x, &y, &random);
        let null = random_labelling((&cx, &cy), (&kx, &ky), &w, &opts).unwrap();
        assert_eq!(
            null.outcome,
            LabellingOutcome::ConsistentWithPopulation,
            "{}",
            null.verdict
        );
    }

    /// Relabellings computed elsewhere from the shared run (as a helper
    /// worker does) equal the job's own, piece by piece, and a job fed
    /// them finishes with the same result; a piece out of order is refused.
    #[test]
    fn shared_runs_give_the_same_relabellings() {
        let (w, x, y, case) = pooled();
        let [(cx, cy), (kx, ky)] = split(&x, &y, &case);
        let opts = LabellingOptions {
            n_sim: 99,
            seed: 11,
            r_max_m: Some(150.0),
            ..Default::default()
        };
        let whole = random_labelling((&cx, &cy), (&kx, &ky), &w, &opts).unwrap();
        let mut job = LabellingJob::new((&cx, &cy), (&kx, &ky), &w, &opts).unwrap();
        let share: LabellingShare =
            serde_json::from_str(&serde_json::to_string(&job.share()).unwrap()).unwrap();
        let helper = LabellingSimulator::new(&share).unwrap();
        let a = helper.simulate_range(0, 40).unwrap();
        assert_eq!(a, job.simulate_range(0, 40).unwrap());
        assert!(job.add_simulated(40, &a).is_err());
        assert_eq!(job.add_simulated(0, &a).unwrap(), 40);
        let b = helper.simulate_range(40, 99).unwrap();
        assert_eq!(job.add_simulated(40, &b).unwrap(), 99);
        let fed = job.finish().unwrap();
        assert_eq!(fed.sim_mean, whole.sim_mean);
        assert_eq!(fed.mad.p_value, whole.mad.p_value);
        assert_eq!(fed.dclf.statistic, whole.dclf.statistic);
    }

    #[test]
    fn border_correction_and_tiny_groups_are_refused() {
        let (w, x, y, case) = pooled();
        let [(cx, cy), (kx, ky)] = split(&x, &y, &case);
        let opts = LabellingOptions {
            correction: Correction::Border,
            ..Default::default()
        };
        assert!(random_labelling((&cx, &cy), (&kx, &ky), &w, &opts).is_err());
        let (w, x, y, case) = pooled();
        let ctx = context(&w, x.len(), Correction::Border, 100.0);
        assert!(d_curves(&ctx, &x, &y, &LabelSets::observed(&case), true).is_err());
        let ctx = context(&w, x.len(), Correction::Isotropic, 100.0);
        let mut one = vec![false; x.len()];
        one[3] = true;
        assert!(matches!(
            d_curves(&ctx, &x, &y, &LabelSets::observed(&one), true),
            Err(AnalysisError::TooFewPoints { .. })
        ));
    }
}
