//! Monte Carlo envelopes and global tests of CSR, run in batches.
//!
//! # Method
//! The observed curve Ĥ (one of G, F, J, K, L, g) is compared with m curves
//! from binomial CSR patterns with the same n in the same window (Besag &
//! Diggle 1977, Applied Statistics 26:327–333). All curves share one r grid.
//!
//! * **Pointwise band**: min and max of the simulated curves at each r.
//!   Labelled "pointwise — not a test": for one pre-chosen r it has level
//!   2/(m+1), but reading it over all r is multiple testing (Loosmore &
//!   Ford 2006, Ecology 87:1925–1931; Baddeley et al. 2014 [from memory]).
//! * **Global tests** on the interval I = [r_min, r_max] (default r_min = 0,
//!   or the kernel half-width h for g), over grid values where every curve
//!   is finite, against a reference curve H₀:
//!   - MAD (Ripley 1977, 1981 [from memory]): T = max_{r∈I} |Ĥ(r) − H₀(r)|.
//!   - DCLF (Diggle 1979; Cressie 1993; Loosmore & Ford 2006 [from
//!     memory]): T = ∫_I (Ĥ(r) − H₀(r))² dr by the trapezoid rule.
//!   - p = (1 + #{j: T_j ≥ T_obs})/(m + 1) (Barnard 1963; Hope 1968;
//!     Besag & Diggle 1977), ties counted against the data (conservative).
//! * **Reference curve H₀**: the CSR curve by default (docs/methods.md#envelopes: use the
//!   theoretical value when known). Optionally the mean of all m + 1
//!   curves, data included, which keeps data and simulations exchangeable
//!   (one of the options listed by Baddeley et al. 2014, Ecol Monogr
//!   84:477–489, via docs/methods.md#envelopes).
//! * **Global band** matching the MAD test: H₀(r) ± T_(k), T_(k) the k-th
//!   largest simulated MAD statistic, k = ⌊α(m+1)⌋. The observed curve
//!   leaves this band (strictly) somewhere on I if and only if the MAD test
//!   rejects at level α (a graphical test). For K the band is dominated by
//!   large r, so L (variance-stabilised, Besag 1977) is the default.
//!
//! # Batches and seeds
//! Simulation j uses its own generator, seeded from (seed, j)
//! ([`super::csr::stream_seed`]), so the result depends only on the seed,
//! not on batch sizes. Memory: one curve per simulation (m × n_r values).

use super::binned::{Binned, STATED_FROM_CELLS, STATED_RELATIVE_ERROR};
use super::csr::stream_rng;
use super::edge::{Correction, NnCorrection};
use super::functions::{checked_region, gf_theo, j_from, l_from_k, Context, FunctionParams, Needs};
use super::verdict::{verdict_for, Verdict};
use crate::error::AnalysisError;
use crate::study::Pattern;
use crate::window::Window;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Which function to test.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SummaryFunction {
    /// G: distribution of nearest-neighbour distances.
    NearestNeighbour,
    /// F: distribution of distances from a location to the nearest event.
    EmptySpace,
    /// J = (1 − G)/(1 − F).
    J,
    /// Ripley's K.
    K,
    /// Besag's L = √(K/π) (default).
    #[default]
    L,
    /// Pair correlation g.
    PairCorrelation,
}

impl SummaryFunction {
    /// Short label for axes and text.
    pub fn label(self) -> &'static str {
        match self {
            SummaryFunction::NearestNeighbour => "G(r)",
            SummaryFunction::EmptySpace => "F(r)",
            SummaryFunction::J => "J(r)",
            SummaryFunction::K => "K(r)",
            SummaryFunction::L => "L(r)",
            SummaryFunction::PairCorrelation => "g(r)",
        }
    }
    /// Whether a value above the CSR curve means clustering.
    pub fn above_means_clustered(self) -> bool {
        !matches!(self, SummaryFunction::EmptySpace | SummaryFunction::J)
    }
    pub(crate) fn needs(self) -> Needs {
        match self {
            SummaryFunction::NearestNeighbour => Needs {
                g: true,
                ..Default::default()
            },
            SummaryFunction::EmptySpace => Needs {
                f: true,
                ..Default::default()
            },
            SummaryFunction::J => Needs {
                g: true,
                f: true,
                ..Default::default()
            },
            SummaryFunction::K | SummaryFunction::L => Needs::K_ONLY,
            SummaryFunction::PairCorrelation => Needs {
                pcf: true,
                ..Default::default()
            },
        }
    }
}

/// Reference curve for the global tests.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Reference {
    /// The CSR curve (default).
    #[default]
    Theoretical,
    /// The mean of the observed and all simulated curves.
    SimulationMean,
}

/// How the pairs of K, L and g are counted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Estimator {
    /// Exact when the pair work is affordable, else the grid
    /// ([`AUTO_BINNED_PAIRS`]); default.
    #[default]
    Auto,
    /// Every pair within the largest distance.
    Exact,
    /// Counts on a fine grid, translation correction only
    /// ([`super::binned`]).
    Binned,
}

/// `auto` uses the grid estimator for K, L and g when the observed pattern
/// has more than this many pairs (unordered) within the largest distance
/// (estimated from cell counts, [`crate::index::GridIndex::estimate_pairs_within`]).
/// Chosen from measurement (README, clustering performance): at about
/// 15 ns per pair the exact curve then takes more than about 1 s per
/// pattern, several times the grid's cost.
pub const AUTO_BINNED_PAIRS: f64 = 6.0e7;

/// The estimator a run uses, after `auto` is settled, with the reason in
/// words.
#[derive(Debug, Clone)]
pub(crate) struct Choice {
    pub estimator: Estimator,
    pub reason: String,
    /// The correction the run uses (translation with the grid).
    pub correction: Correction,
}

fn binned_allowed(f: SummaryFunction) -> bool {
    matches!(
        f,
        SummaryFunction::K | SummaryFunction::L | SummaryFunction::PairCorrelation
    )
}

/// Settles `auto` (from the pairs of the observed events within r_max) and
/// checks an explicit choice.
pub(crate) fn choose(
    params: &EnvelopeParams,
    region: &Window,
    x: &[f64],
    y: &[f64],
) -> Result<Choice, AnalysisError> {
    let f = params.function;
    let c = params.functions.correction;
    let bad = |d: String| AnalysisError::BadParameter {
        name: "estimator".into(),
        detail: d,
    };
    match params.estimator {
        Estimator::Exact => Ok(Choice {
            estimator: Estimator::Exact,
            reason: "every pair (chosen)".into(),
            correction: c,
        }),
        Estimator::Binned => {
            if !binned_allowed(f) {
                return Err(bad(format!(
                    "the grid estimator computes K, L and g only (function is {})",
                    f.label()
                )));
            }
            if c != Correction::Translation {
                return Err(bad(format!(
                    "the grid estimator uses the translation correction only: set correction to translation (it is {})",
                    serde_json::to_value(c).ok().and_then(|v| v.as_str().map(String::from)).unwrap_or_default()
                )));
            }
            Ok(Choice {
                estimator: Estimator::Binned,
                reason: "counts on a fine grid (chosen)".into(),
                correction: c,
            })
        }
        Estimator::Auto => {
            let exact = |why: &str| Choice {
                estimator: Estimator::Exact,
                reason: format!("every pair (automatic: {why})"),
                correction: c,
            };
            if !binned_allowed(f) {
                return Ok(exact("G, F and J always count exactly"));
            }
            if !matches!(c, Correction::Isotropic | Correction::Translation) {
                return Ok(exact(
                    "the grid estimator has only the translation correction",
                ));
            }
            let r_max = params
                .functions
                .r_max
                .unwrap_or_else(|| super::functions::default_r_max(region).0);
            let grid = crate::index::GridIndex::with_cell(x, y, r_max / 4.0);
            let pairs = grid.estimate_pairs_within(r_max);
            if pairs <= AUTO_BINNED_PAIRS {
                return Ok(exact(&format!(
                    "about {} pairs within the largest distance, at most {}",
                    crate::params::count(pairs),
                    crate::params::count(AUTO_BINNED_PAIRS)
                )));
            }
            let switched = if c == Correction::Isotropic {
                "; the translation correction replaces the isotropic one"
            } else {
                ""
            };
            Ok(Choice {
                estimator: Estimator::Binned,
                reason: format!(
                    "counts on a fine grid (automatic: about {} pairs within the largest distance, more than {}{switched})",
                    crate::params::count(pairs),
                    crate::params::count(AUTO_BINNED_PAIRS)
                ),
                correction: Correction::Translation,
            })
        }
    }
}

/// What a helper needs to simulate for a run: the study area, the number
/// of events and the parameters (never the event locations). See
/// [`EnvelopeJob::share`] and [`EnvelopeSimulator`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SimulationShare {
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    pub n: usize,
    pub params: EnvelopeParams,
}

/// Simulates ranges of an envelope run elsewhere (another thread or Web
/// Worker): built from a [`SimulationShare`], it gives exactly the curves
/// [`EnvelopeJob::simulate_range`] would, because simulation j always uses
/// stream j of the seed.
pub struct EnvelopeSimulator {
    ctx: Context,
    needs: Needs,
    params: EnvelopeParams,
    binned: Option<Binned>,
}

impl EnvelopeSimulator {
    /// Prepares the window and distance grid of a shared run.
    pub fn new(share: &SimulationShare) -> Result<EnvelopeSimulator, AnalysisError> {
        let region = crate::window::Window::from_polygons(
            share.polygons.clone(),
            crate::window::WindowOrigin::File,
        )
        .map_err(|e| AnalysisError::BadParameter {
            name: "study area".into(),
            detail: e.to_string(),
        })?;
        check_params(&share.params)?;
        // A job's share has `auto` settled; a share from elsewhere that
        // still says `auto` is simulated exactly (it carries no events).
        let choice = if share.params.estimator == Estimator::Auto {
            Choice {
                estimator: Estimator::Exact,
                reason: String::new(),
                correction: share.params.functions.correction,
            }
        } else {
            choose(&share.params, &region, &[], &[])?
        };
        let needs = share.params.function.needs();
        let mut functions = share.params.functions.clone();
        functions.correction = choice.correction;
        let ctx = Context::new(region, share.n, &functions, needs)?;
        let binned = match choice.estimator {
            Estimator::Binned => Some(Binned::new(&ctx, needs, share.params.binned_fft_side)?),
            _ => None,
        };
        Ok(EnvelopeSimulator {
            ctx,
            needs,
            params: share.params.clone(),
            binned,
        })
    }

    /// Curves of simulations `from..to`, row after row.
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<f64> {
        simulate_curves(
            &self.ctx,
            self.binned.as_ref(),
            self.needs,
            &self.params,
            from,
            to,
        )
    }
}

fn curves_of(
    ctx: &Context,
    binned: Option<&Binned>,
    x: &[f64],
    y: &[f64],
    needs: Needs,
) -> super::functions::Curves {
    match binned {
        Some(b) => b.compute(x, y, needs),
        None => ctx.compute(x, y, needs),
    }
}

fn simulate_curves(
    ctx: &Context,
    binned: Option<&Binned>,
    needs: Needs,
    params: &EnvelopeParams,
    from: usize,
    to: usize,
) -> Vec<f64> {
    let to = to.min(params.n_sim);
    let mut out = Vec::with_capacity(to.saturating_sub(from) * ctx.r.len());
    let draw = |j: usize| {
        ctx.region
            .sample_uniform(ctx.n, &mut stream_rng(params.seed, j as u64))
    };
    let mut from = from;
    if let Some(b) = binned {
        // Two simulations per FFT; each still from its own stream, and the
        // curves are exactly those of one at a time (Binned::lag_counts).
        while from + 1 < to {
            let ((x1, y1), (x2, y2)) = (draw(from), draw(from + 1));
            let (c1, c2) = b.compute_pair((&x1, &y1), (&x2, &y2), needs);
            out.extend(select(params.function, c1));
            out.extend(select(params.function, c2));
            from += 2;
        }
    }
    for j in from..to {
        let mut rng = stream_rng(params.seed, j as u64);
        let (x, y) = ctx.region.sample_uniform(ctx.n, &mut rng);
        out.extend(select(
            params.function,
            curves_of(ctx, binned, &x, &y, needs),
        ));
    }
    out
}

fn check_params(params: &EnvelopeParams) -> Result<(), AnalysisError> {
    use crate::params::Params;
    EnvelopeOptions::from(params).validate()
}

/// The options of an envelope run as the JS API takes them (`envelopeStart`):
/// flat, with units in the names. The one home of their defaults and
/// limits; [`EnvelopeOptions::params`] gives the [`EnvelopeParams`] the
/// job runs with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct EnvelopeOptions {
    pub function: SummaryFunction,
    pub n_sim: usize,
    pub seed: u64,
    pub alpha: f64,
    pub reference: Reference,
    /// Start of the test interval, m (`None`: 0; h for g).
    pub r_min_m: Option<f64>,
    /// Largest distance, m (`None`: the rule of [`FunctionParams`]).
    pub r_max_m: Option<f64>,
    pub n_steps: usize,
    pub correction: Correction,
    pub nn_correction: NnCorrection,
    /// Kernel half-width for g, m (`None`: 0.15/√λ̂).
    pub bandwidth_m: Option<f64>,
    /// How the pairs of K, L and g are counted.
    pub estimator: Estimator,
}

impl Default for EnvelopeOptions {
    fn default() -> Self {
        EnvelopeOptions::from(&EnvelopeParams::default())
    }
}

impl From<&EnvelopeParams> for EnvelopeOptions {
    fn from(p: &EnvelopeParams) -> Self {
        EnvelopeOptions {
            function: p.function,
            n_sim: p.n_sim,
            seed: p.seed,
            alpha: p.alpha,
            reference: p.reference,
            r_min_m: p.r_min,
            r_max_m: p.functions.r_max,
            n_steps: p.functions.n_steps,
            correction: p.functions.correction,
            nn_correction: p.functions.nn_correction,
            bandwidth_m: p.functions.bandwidth,
            estimator: p.estimator,
        }
    }
}

impl EnvelopeOptions {
    /// The parameters of the run (fields not set here keep their defaults).
    pub fn params(&self) -> EnvelopeParams {
        let d = EnvelopeParams::default();
        EnvelopeParams {
            function: self.function,
            n_sim: self.n_sim,
            seed: self.seed,
            alpha: self.alpha,
            reference: self.reference,
            r_min: self.r_min_m,
            estimator: self.estimator,
            binned_fft_side: d.binned_fft_side,
            functions: FunctionParams {
                r_max: self.r_max_m,
                n_steps: self.n_steps,
                correction: self.correction,
                nn_correction: self.nn_correction,
                bandwidth: self.bandwidth_m,
                ..d.functions
            },
        }
    }
}

impl crate::params::Params for EnvelopeOptions {
    const NAME: &'static str = "envelopeStart";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::{Field, EXTENT_FACTOR};
        let mut v = vec![
            Field::choice(
                "function",
                &[
                    "nearest_neighbour",
                    "empty_space",
                    "j",
                    "k",
                    "l",
                    "pair_correlation",
                ],
                "summary function tested",
            ),
            Field::integer("n_sim", "simulations of complete spatial randomness")
                .range(1.0, 9999.0),
            Field::seed("seed of the simulations"),
            Field::number("alpha", None, "level of the global tests").above(0.0, Some(0.5)),
            Field::choice(
                "reference",
                &["theoretical", "simulation_mean"],
                "reference curve of the global tests",
            ),
        ];
        v.extend(distance_fields(
            "start of the tested distances; empty = 0 (the kernel half-width for g)",
        ));
        v.extend([
            Field::choice(
                "correction",
                &["isotropic", "translation", "border", "none"],
                "edge correction for K, L and g",
            ),
            Field::choice(
                "nn_correction",
                &["border", "none"],
                "edge correction for G, F and J",
            ),
            Field::number(
                "bandwidth_m",
                Some("m"),
                "kernel half-width for g; empty = 0.15/√(intensity)",
            )
            .scale_length(EXTENT_FACTOR)
            .optional(),
            Field::choice(
                "estimator",
                &["auto", "exact", "binned"],
                "how the pairs of K, L and g are counted: auto (every pair when affordable, else on a fine grid), exact (every pair), binned (on a fine grid; translation correction only)",
            ),
        ]);
        v
    }
    fn check(&self) -> Result<(), AnalysisError> {
        check_distance_range(self.r_min_m, self.r_max_m)?;
        if self.estimator == Estimator::Binned {
            if !binned_allowed(self.function) {
                return Err(crate::params::bad(
                    "estimator",
                    format!(
                        "binned computes K, L and g only (function is {})",
                        self.function.label()
                    ),
                ));
            }
            if self.correction != Correction::Translation {
                return Err(crate::params::bad(
                    "estimator",
                    "binned uses the translation correction only: set correction to translation",
                ));
            }
        }
        Ok(())
    }
}

/// The options `r_min_m` (described by `r_min_doc`), `r_max_m` and
/// `n_steps` of a test over a grid of distances, with their limits (shared
/// by the envelopes and the random labelling test).
pub(crate) fn distance_fields(r_min_doc: &'static str) -> [crate::params::Field; 3] {
    use crate::params::{Field, EXTENT_FACTOR};
    [
        Field::number("r_min_m", Some("m"), r_min_doc)
            .at_least(0.0)
            .extent(EXTENT_FACTOR)
            .optional(),
        Field::number(
            "r_max_m",
            Some("m"),
            "largest distance; empty = a rule from the study area's shape",
        )
        .above(0.0, None)
        .extent(EXTENT_FACTOR)
        .optional(),
        Field::integer("n_steps", "steps from 0 to the largest distance").range(2.0, 1000.0),
    ]
}

/// `r_min_m` must be below `r_max_m` when both are given.
pub(crate) fn check_distance_range(
    r_min: Option<f64>,
    r_max: Option<f64>,
) -> Result<(), AnalysisError> {
    if let (Some(a), Some(b)) = (r_min, r_max) {
        if a >= b {
            return Err(crate::params::bad(
                "r_min_m",
                format!(
                    "must be less than r_max_m ({} m; got {} m)",
                    crate::params::num(b),
                    crate::params::num(a)
                ),
            ));
        }
    }
    Ok(())
}

/// Parameters of an envelope run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct EnvelopeParams {
    pub function: SummaryFunction,
    /// Number of CSR simulations m (1 to 9999; default 199).
    pub n_sim: usize,
    pub seed: u64,
    /// Level of the global tests (default 0.05).
    pub alpha: f64,
    pub reference: Reference,
    /// Start of the test interval in m (default 0; h for g).
    pub r_min: Option<f64>,
    /// How the pairs of K, L and g are counted (default auto).
    pub estimator: Estimator,
    /// Padded FFT side of the grid estimator (default
    /// [`super::binned::FFT_SIDE`]; a power of two from 64 to 4096). Not
    /// a JS option: the page always uses the default; tests and
    /// benchmarks use smaller grids to stay quick.
    pub binned_fft_side: usize,
    pub functions: FunctionParams,
}

impl Default for EnvelopeParams {
    fn default() -> Self {
        EnvelopeParams {
            function: SummaryFunction::L,
            n_sim: 199,
            seed: 1,
            alpha: 0.05,
            reference: Reference::Theoretical,
            r_min: None,
            estimator: Estimator::Auto,
            binned_fft_side: super::binned::FFT_SIDE,
            functions: FunctionParams::default(),
        }
    }
}

/// A global test: statistic, p-value and critical value.
#[derive(Debug, Clone, Serialize)]
pub struct GlobalTest {
    pub statistic: f64,
    pub p_value: f64,
    /// Number of simulated statistics ≥ the observed one.
    pub at_least_as_extreme: usize,
    /// k-th largest simulated statistic (k = ⌊α(m+1)⌋).
    pub critical: f64,
    pub rejects: bool,
}

/// Result of an envelope run. Curves are on `r`; NaN (null in JSON) where
/// undefined.
#[derive(Debug, Clone, Serialize)]
pub struct EnvelopeResult {
    pub function: SummaryFunction,
    pub label: String,
    pub r: Vec<f64>,
    pub observed: Vec<f64>,
    pub theoretical: Vec<f64>,
    pub reference: Reference,
    /// Curve the deviations are measured from.
    pub reference_curve: Vec<f64>,
    pub sim_mean: Vec<f64>,
    pub pointwise_lo: Vec<f64>,
    pub pointwise_hi: Vec<f64>,
    pub pointwise_label: String,
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
    pub n: usize,
    pub correction: Correction,
    pub nn_correction: NnCorrection,
    pub r_max_rule: String,
    pub bandwidth_m: f64,
    pub capped_weights: u64,
    /// `exact` or `binned` (never `auto`: the choice made).
    pub estimator: Estimator,
    /// Why, in words (the automatic rule when `auto` chose).
    pub estimator_reason: String,
    /// Grid cell side in m (binned only).
    pub cell_m: Option<f64>,
    /// The relative error of the binned K, L and g against the exact
    /// translation estimator that the tests check (binned only)...
    pub binned_relative_error: Option<f64>,
    /// ...at distances of at least this many m (binned only).
    pub binned_error_from_m: Option<f64>,
    pub warnings: Vec<String>,
    pub verdict: Verdict,
}

/// A Monte Carlo envelope run that can be advanced in batches (for a
/// worker that reports progress and can stop between batches).
///
/// # Examples
/// ```
/// # use cloister::window::Window;
/// # use cloister::distance::{simulate_csr, EnvelopeJob, EnvelopeParams};
/// # let w = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
/// let pattern = simulate_csr(&w, 60, 3).unwrap();
/// let params = EnvelopeParams { n_sim: 39, seed: 11, ..Default::default() };
/// let mut job = EnvelopeJob::new(&pattern, &w, &params).unwrap();
/// while job.run_batch(10) < job.total() {}
/// let res = job.finish();
/// assert_eq!(res.n_sim, 39);
/// assert!(res.mad.p_value > 0.0 && res.mad.p_value <= 1.0);
/// ```
pub struct EnvelopeJob {
    /// The study area, distances, estimator and settled parameters: the
    /// same state a helper's simulator holds, so both simulate alike.
    sim: EnvelopeSimulator,
    choice: Choice,
    observed: Vec<f64>,
    sims: Vec<f64>,
    done: usize,
    capped: u64,
}

impl EnvelopeJob {
    /// Validates the parameters, prepares the window and computes the
    /// observed curve.
    pub fn new(
        pattern: &Pattern,
        window: &Window,
        params: &EnvelopeParams,
    ) -> Result<EnvelopeJob, AnalysisError> {
        let region = checked_region(pattern, window)?;
        EnvelopeJob::new_in(region, pattern.x(), pattern.y(), params)
    }

    pub(crate) fn new_in(
        region: crate::window::Window,
        x: &[f64],
        y: &[f64],
        params: &EnvelopeParams,
    ) -> Result<EnvelopeJob, AnalysisError> {
        check_params(params)?;
        let choice = choose(params, &region, x, y)?;
        let needs = params.function.needs();
        let mut functions = params.functions.clone();
        functions.correction = choice.correction;
        let ctx = Context::new(region, x.len(), &functions, needs)?;
        let binned = match choice.estimator {
            Estimator::Binned => Some(Binned::new(&ctx, needs, params.binned_fft_side)?),
            _ => None,
        };
        let c = curves_of(&ctx, binned.as_ref(), x, y, needs);
        let capped = c.capped;
        let observed = select(params.function, c);
        let nr = ctx.r.len();
        // The run's parameters with `auto` settled, so shares simulate
        // with the same estimator and correction.
        let mut params = params.clone();
        params.estimator = choice.estimator;
        params.functions.correction = choice.correction;
        let sims = Vec::with_capacity(params.n_sim * nr);
        Ok(EnvelopeJob {
            sim: EnvelopeSimulator {
                ctx,
                needs,
                params,
                binned,
            },
            choice,
            observed,
            sims,
            done: 0,
            capped,
        })
    }

    /// Runs up to `k` more simulations; returns how many are done so far.
    pub fn run_batch(&mut self, k: usize) -> usize {
        let end = (self.done + k).min(self.sim.params.n_sim);
        self.sims.extend(self.sim.simulate_range(self.done, end));
        self.done = end;
        self.done
    }

    /// Like [`EnvelopeJob::run_batch`], with the `k` simulations split
    /// over `threads` native threads (contiguous ranges, joined in order),
    /// so the result is identical to a single-threaded run. Native builds
    /// only; the page uses several Web Workers for the same purpose.
    #[cfg(not(target_arch = "wasm32"))]
    pub fn run_batch_parallel(&mut self, k: usize, threads: usize) -> usize {
        let end = (self.done + k).min(self.sim.params.n_sim);
        let count = end - self.done;
        let threads = threads.clamp(1, count.max(1));
        if threads <= 1 {
            return self.run_batch(k);
        }
        let start = self.done;
        let job = &*self;
        let parts = crate::cores::each_on_a_thread(crate::cores::ranges(count, threads), |r| {
            job.simulate_range(start + r.start, start + r.end)
        });
        // A thread failed (cannot happen short of a panic): all of it on
        // this thread.
        let Some(parts) = parts else {
            return self.run_batch(k);
        };
        for part in parts {
            let from = self.done;
            if self.add_simulated(from, &part).is_err() {
                return self.run_batch(end - self.done);
            }
        }
        self.done
    }

    /// Curves of simulations `from..to` (row after row, `r().len()` values
    /// each), without changing the job. For spreading one run over several
    /// workers: each worker builds the same job (same pattern, window and
    /// parameters) and simulates its own range; the results are handed to
    /// one job with [`EnvelopeJob::add_simulated`] in order. The result is
    /// identical to a single-worker run because simulation j always uses
    /// stream j of the seed.
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<f64> {
        self.sim.simulate_range(from, to)
    }

    /// What a helper needs to simulate parts of this run (see
    /// [`EnvelopeSimulator`]): the study area, n and the parameters.
    pub fn share(&self) -> SimulationShare {
        SimulationShare {
            polygons: self.sim.ctx.region.polygons().to_vec(),
            n: self.sim.ctx.n,
            params: self.sim.params.clone(),
        }
    }

    /// Appends curves from [`EnvelopeJob::simulate_range`] that start at
    /// simulation `from`, which must equal [`EnvelopeJob::done`]. Returns
    /// the number done so far.
    pub fn add_simulated(&mut self, from: usize, curves: &[f64]) -> Result<usize, AnalysisError> {
        let rows = crate::params::piece_rows(
            "simulated curves",
            "simulation",
            (from, self.done, self.sim.params.n_sim),
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

    pub fn total(&self) -> usize {
        self.sim.params.n_sim
    }

    /// The distance grid.
    pub fn r(&self) -> &[f64] {
        &self.sim.ctx.r
    }

    /// Runs any remaining simulations and computes bands, tests and the
    /// verdict.
    pub fn finish(mut self) -> EnvelopeResult {
        let rest = self.sim.params.n_sim - self.done;
        self.run_batch(rest);
        let f = self.sim.params.function;
        let r = self.sim.ctx.r.clone();
        let nr = r.len();
        let m = self.sim.params.n_sim;
        let n = self.sim.ctx.n;
        let lambda = n as f64 / self.sim.ctx.region.area();
        let theoretical: Vec<f64> = match f {
            SummaryFunction::K => r.iter().map(|r| PI * r * r).collect(),
            SummaryFunction::L => r.clone(),
            SummaryFunction::PairCorrelation | SummaryFunction::J => vec![1.0; nr],
            SummaryFunction::NearestNeighbour | SummaryFunction::EmptySpace => gf_theo(&r, lambda),
        };
        let bands = summarise(
            &r,
            &self.observed,
            &self.sims,
            &theoretical,
            self.sim.params.reference,
            self.sim
                .params
                .r_min
                .unwrap_or(if f == SummaryFunction::PairCorrelation {
                    self.sim.ctx.bandwidth
                } else {
                    0.0
                }),
            self.sim.params.alpha,
        );
        let mut warnings = self.sim.ctx.warnings.clone();
        warnings.extend(bands.warnings.iter().cloned());
        let cell_m = self.sim.binned.as_ref().map(Binned::cell_m);
        if self.capped > 0 {
            warnings.push(format!(
                "{} pair weights of the observed pattern reached the cap of {}",
                self.capped, self.sim.ctx.cap
            ));
        }
        let verdict = verdict_for(
            f,
            &r,
            &self.observed,
            &bands.global_lo,
            &bands.global_hi,
            &bands.in_test,
            &bands.mad,
            &bands.dclf,
            self.sim.params.alpha,
            m,
        );
        EnvelopeResult {
            function: f,
            label: f.label().to_string(),
            observed: self.observed.clone(),
            theoretical,
            reference: self.sim.params.reference,
            reference_curve: bands.reference_curve,
            sim_mean: bands.sim_mean,
            pointwise_lo: bands.pointwise_lo,
            pointwise_hi: bands.pointwise_hi,
            pointwise_label: "pointwise — not a test".into(),
            global_lo: bands.global_lo,
            global_hi: bands.global_hi,
            test_r_min: bands.test_r_min,
            test_r_max: bands.test_r_max,
            mad: bands.mad,
            dclf: bands.dclf,
            alpha: self.sim.params.alpha,
            k_rank: bands.k_rank,
            n_sim: m,
            seed: self.sim.params.seed,
            n,
            correction: self.sim.ctx.correction,
            nn_correction: self.sim.ctx.nn_correction,
            r_max_rule: self.sim.ctx.r_max_rule.clone(),
            bandwidth_m: self.sim.ctx.bandwidth,
            capped_weights: self.capped,
            estimator: self.choice.estimator,
            estimator_reason: self.choice.reason.clone(),
            cell_m,
            binned_relative_error: cell_m.map(|_| STATED_RELATIVE_ERROR),
            binned_error_from_m: cell_m.map(|c| STATED_FROM_CELLS * c),
            warnings,
            verdict,
            r,
        }
    }
}

/// Runs a whole envelope at once (no progress reports).
pub fn envelope(
    pattern: &Pattern,
    window: &Window,
    params: &EnvelopeParams,
) -> Result<EnvelopeResult, AnalysisError> {
    Ok(EnvelopeJob::new(pattern, window, params)?.finish())
}

fn select(f: SummaryFunction, c: super::functions::Curves) -> Vec<f64> {
    match f {
        SummaryFunction::NearestNeighbour => c.g,
        SummaryFunction::EmptySpace => c.f,
        SummaryFunction::J => j_from(&c.g, &c.f),
        SummaryFunction::K => c.k,
        SummaryFunction::L => l_from_k(&c.k),
        SummaryFunction::PairCorrelation => c.pcf,
    }
}

/// Monte Carlo p-value (Barnard 1963; Hope 1968; Besag & Diggle 1977):
/// p = (1 + #{j: T_j ≥ T_obs})/(m + 1), ties counted (conservative).
pub fn monte_carlo_p(observed: f64, simulated: &[f64]) -> f64 {
    let ge = simulated.iter().filter(|t| **t >= observed).count();
    (1.0 + ge as f64) / (simulated.len() as f64 + 1.0)
}

/// The envelope summary of an observed curve against `m` simulated ones
/// (`sims`, m curves of `r.len()` values one after another): the pointwise
/// band, the reference curve (theoretical, or the mean of the simulations
/// and the observed curve), the two global tests (maximum absolute
/// deviation and DCLF) over the distances from `r_min` on where every curve
/// is finite, and the global band that matches the MAD test
/// (docs/methods.md#envelopes).
#[derive(Debug, Clone)]
pub(crate) struct Bands {
    pub sim_mean: Vec<f64>,
    pub pointwise_lo: Vec<f64>,
    pub pointwise_hi: Vec<f64>,
    pub reference_curve: Vec<f64>,
    pub in_test: Vec<bool>,
    pub mad: GlobalTest,
    pub dclf: GlobalTest,
    pub k_rank: usize,
    pub global_lo: Vec<f64>,
    pub global_hi: Vec<f64>,
    pub test_r_min: f64,
    pub test_r_max: f64,
    pub warnings: Vec<String>,
}

pub(crate) fn summarise(
    r: &[f64],
    observed: &[f64],
    sims: &[f64],
    theoretical: &[f64],
    reference: Reference,
    r_min: f64,
    alpha: f64,
) -> Bands {
    let nr = r.len();
    let m = sims.len().checked_div(nr).unwrap_or(0);
    let sim = |j: usize| &sims[j * nr..(j + 1) * nr];
    let mut sim_mean = vec![0.0; nr];
    let mut lo = vec![f64::INFINITY; nr];
    let mut hi = vec![f64::NEG_INFINITY; nr];
    let mut finite_all: Vec<bool> = observed.iter().map(|v| v.is_finite()).collect();
    for j in 0..m {
        for (k, v) in sim(j).iter().enumerate() {
            if v.is_finite() {
                sim_mean[k] += v;
                lo[k] = lo[k].min(*v);
                hi[k] = hi[k].max(*v);
            } else {
                finite_all[k] = false;
            }
        }
    }
    for k in 0..nr {
        if finite_all[k] {
            sim_mean[k] /= m as f64;
        } else {
            sim_mean[k] = f64::NAN;
        }
        if !lo[k].is_finite() {
            lo[k] = f64::NAN;
            hi[k] = f64::NAN;
        }
    }
    let reference_curve: Vec<f64> = match reference {
        Reference::Theoretical => theoretical.to_vec(),
        Reference::SimulationMean => (0..nr)
            .map(|k| {
                if finite_all[k] {
                    (sim_mean[k] * m as f64 + observed[k]) / (m as f64 + 1.0)
                } else {
                    f64::NAN
                }
            })
            .collect(),
    };
    let in_test: Vec<bool> = (0..nr)
        .map(|k| finite_all[k] && reference_curve[k].is_finite() && r[k] >= r_min)
        .collect();
    let mut warnings = Vec::new();
    if !in_test.iter().any(|b| *b) {
        warnings.push("no distance in the test interval has finite values for every curve: the global tests are undefined".into());
    }
    let stats = |curve: &[f64]| -> (f64, f64) {
        let mut mad: f64 = 0.0;
        let mut dclf = 0.0;
        for k in 0..nr {
            if in_test[k] {
                let dev = curve[k] - reference_curve[k];
                mad = mad.max(dev.abs());
                if k + 1 < nr && in_test[k + 1] {
                    let dev2 = curve[k + 1] - reference_curve[k + 1];
                    dclf += 0.5 * (dev * dev + dev2 * dev2) * (r[k + 1] - r[k]);
                }
            }
        }
        (mad, dclf)
    };
    let (mad_obs, dclf_obs) = stats(observed);
    let mut mads = Vec::with_capacity(m);
    let mut dclfs = Vec::with_capacity(m);
    for j in 0..m {
        let (a, b) = stats(sim(j));
        mads.push(a);
        dclfs.push(b);
    }
    let k_exact = alpha * (m as f64 + 1.0);
    let mut k_rank = k_exact.floor() as usize;
    if k_rank == 0 {
        warnings.push(format!(
            "with {m} simulations no test can reach level {}: use at least {} simulations",
            alpha,
            (1.0 / alpha).ceil() as usize - 1
        ));
        k_rank = 1;
    }
    let mad = global_test(mad_obs, &mads, k_rank, alpha);
    let dclf = global_test(dclf_obs, &dclfs, k_rank, alpha);
    let global_lo: Vec<f64> = reference_curve.iter().map(|v| v - mad.critical).collect();
    let global_hi: Vec<f64> = reference_curve.iter().map(|v| v + mad.critical).collect();
    let test_r_min = r
        .iter()
        .zip(&in_test)
        .find(|(_, b)| **b)
        .map_or(f64::NAN, |(r, _)| *r);
    let test_r_max = r
        .iter()
        .zip(&in_test)
        .rev()
        .find(|(_, b)| **b)
        .map_or(f64::NAN, |(r, _)| *r);
    Bands {
        sim_mean,
        pointwise_lo: lo,
        pointwise_hi: hi,
        reference_curve,
        in_test,
        mad,
        dclf,
        k_rank,
        global_lo,
        global_hi,
        test_r_min,
        test_r_max,
        warnings,
    }
}

fn global_test(obs: f64, sims: &[f64], k: usize, alpha: f64) -> GlobalTest {
    let ge = sims.iter().filter(|t| **t >= obs).count();
    let p = (1.0 + ge as f64) / (sims.len() as f64 + 1.0);
    let mut sorted = sims.to_vec();
    sorted.sort_by(|a, b| b.total_cmp(a));
    let critical = sorted.get(k.saturating_sub(1)).copied().unwrap_or(f64::NAN);
    GlobalTest {
        statistic: obs,
        p_value: p,
        at_least_as_extreme: ge,
        critical,
        rejects: p <= alpha,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::tests::unit_square;

    /// docs/methods.md#envelopes check values: simulated 1..99, T_obs = 100 → 0.01,
    /// 95 (a tie) → 0.06, 0.5 → 1.0.
    #[test]
    fn test_monte_carlo_p_check_values() {
        let sims: Vec<f64> = (1..=99).map(|v| v as f64).collect();
        assert!((monte_carlo_p(100.0, &sims) - 0.01).abs() < 1e-15);
        assert!((monte_carlo_p(95.0, &sims) - 0.06).abs() < 1e-15);
        assert!((monte_carlo_p(0.5, &sims) - 1.0).abs() < 1e-15);
    }

    /// Critical rank k = ⌊α(m+1)⌋ (docs/methods.md#envelopes): m = 99 → 5th largest.
    #[test]
    fn test_global_band_rank() {
        let sims: Vec<f64> = (1..=99).map(|v| v as f64).collect();
        let t = global_test(96.0, &sims, (0.05f64 * 100.0).floor() as usize, 0.05);
        assert_eq!(t.critical, 95.0);
        assert!(t.rejects); // 96 > 95: p = (1+3)/100 = 0.04
        let t = global_test(95.0, &sims, 5, 0.05);
        assert!(!t.rejects); // on the band edge: p = 0.06
    }

    /// Same seed, different batch sizes: identical results.
    #[test]
    fn test_batches_do_not_change_results() {
        let mut rng = crate::rng::rng_from_seed(4);
        let (x, y) = unit_square().sample_uniform(40, &mut rng);
        let p = EnvelopeParams {
            n_sim: 19,
            seed: 77,
            ..Default::default()
        };
        let mut a = EnvelopeJob::new_in(unit_square(), &x, &y, &p).unwrap();
        a.run_batch(19);
        let ra = a.finish();
        let mut b = EnvelopeJob::new_in(unit_square(), &x, &y, &p).unwrap();
        for _ in 0..7 {
            b.run_batch(3);
        }
        let rb = b.finish();
        // Two "workers" simulating ranges, merged in order.
        let w1 = EnvelopeJob::new_in(unit_square(), &x, &y, &p).unwrap();
        let mut c = EnvelopeJob::new_in(unit_square(), &x, &y, &p).unwrap();
        let (first, second) = (w1.simulate_range(0, 11), w1.simulate_range(11, 19));
        assert!(c.add_simulated(11, &second).is_err());
        c.add_simulated(0, &first).unwrap();
        assert_eq!(c.add_simulated(11, &second).unwrap(), 19);
        let rc = c.finish();
        // A helper built from the share (no event locations) gives the
        // same curves.
        let helper = EnvelopeSimulator::new(&w1.share()).unwrap();
        assert_eq!(helper.simulate_range(3, 9), w1.simulate_range(3, 9));
        let json = serde_json::to_string(&w1.share()).unwrap();
        let back: SimulationShare = serde_json::from_str(&json).unwrap();
        assert_eq!(back, w1.share());
        // The JSON hand-over is exact for coordinates that are not short
        // decimals (projected metres with many digits).
        let odd = SimulationShare {
            polygons: vec![vec![(0..200)
                .map(|i| {
                    let t = i as f64 * 0.031_415_926_535_897_93;
                    [
                        512_345.678_901_234_5 + 1e3 * t.cos() / 3.0,
                        4_123_456.1 + 7e2 * t.sin() / 7.0,
                    ]
                })
                .collect()]],
            n: 10,
            params: EnvelopeParams {
                seed: u64::MAX - 12_345,
                ..Default::default()
            },
        };
        let back: SimulationShare =
            serde_json::from_str(&serde_json::to_string(&odd).unwrap()).unwrap();
        assert_eq!(back, odd);
        // Native threads: 19 simulations over 3 threads, in two batches.
        let mut d = EnvelopeJob::new_in(unit_square(), &x, &y, &p).unwrap();
        assert_eq!(d.run_batch_parallel(8, 3), 8);
        assert_eq!(d.run_batch_parallel(100, 3), 19);
        let rd = d.finish();
        assert_eq!(ra.pointwise_hi, rd.pointwise_hi);
        assert_eq!(ra.pointwise_lo, rd.pointwise_lo);
        assert_eq!(ra.mad.p_value, rd.mad.p_value);
        assert_eq!(ra.pointwise_hi, rc.pointwise_hi);
        assert_eq!(ra.dclf.statistic, rc.dclf.statistic);
        assert_eq!(ra.pointwise_lo, rb.pointwise_lo);
        assert_eq!(ra.mad.statistic, rb.mad.statistic);
        assert_eq!(ra.mad.p_value, rb.mad.p_value);
        assert_eq!(ra.dclf.p_value, rb.dclf.p_value);
    }

    /// The graphical test: leaving the global band ⇔ MAD rejects.
    #[test]
    fn test_band_matches_mad_test() {
        for seed in 0..6 {
            let mut rng = crate::rng::rng_from_seed(100 + seed);
            // Half the points squeezed into a corner: sometimes rejected.
            let (mut x, mut y) = unit_square().sample_uniform(30, &mut rng);
            for i in 0..(seed as usize * 3) {
                x[i] *= 0.2;
                y[i] *= 0.2;
            }
            let p = EnvelopeParams {
                n_sim: 39,
                seed,
                ..Default::default()
            };
            let res = EnvelopeJob::new_in(unit_square(), &x, &y, &p)
                .unwrap()
                .finish();
            let leaves = (0..res.r.len()).any(|k| {
                res.r[k] >= res.test_r_min
                    && (res.observed[k] > res.global_hi[k] || res.observed[k] < res.global_lo[k])
            });
            assert_eq!(leaves, res.mad.rejects, "seed {seed}");
        }
    }

    /// Edge cases return values, never panic: all events at one place, two
    /// events, a tiny r_max, every function.
    #[test]
    fn test_degenerate_patterns() {
        let fs = [
            SummaryFunction::NearestNeighbour,
            SummaryFunction::EmptySpace,
            SummaryFunction::J,
            SummaryFunction::K,
            SummaryFunction::L,
            SummaryFunction::PairCorrelation,
        ];
        let cases: Vec<(Vec<f64>, Vec<f64>, Option<f64>)> = vec![
            (vec![0.5; 6], vec![0.5; 6], None),
            (vec![0.2, 0.8], vec![0.3, 0.7], None),
            (vec![0.2, 0.8, 0.5], vec![0.3, 0.7, 0.5], Some(1e-9)),
        ];
        for (x, y, r_max) in cases {
            for f in fs {
                let p = EnvelopeParams {
                    function: f,
                    n_sim: 9,
                    functions: FunctionParams {
                        r_max,
                        ..Default::default()
                    },
                    ..Default::default()
                };
                let res = EnvelopeJob::new_in(unit_square(), &x, &y, &p)
                    .unwrap()
                    .finish();
                assert_eq!(res.r.len(), 51);
                assert!(res.mad.p_value > 0.0 && res.mad.p_value <= 1.0);
                // 9 simulations cannot reach level 0.05: said so.
                assert!(res
                    .warnings
                    .iter()
                    .any(|w| w.contains("no test can reach level")));
                assert!(serde_json::to_string(&res).is_ok());
            }
        }
    }

    /// JavaScript may leave any parameter out (serde defaults).
    #[test]
    fn test_params_from_partial_json() {
        let p: EnvelopeParams =
            serde_json::from_str(r#"{"function":"pair_correlation","n_sim":99,"functions":{"correction":"translation"}}"#)
                .unwrap();
        assert_eq!(p.function, SummaryFunction::PairCorrelation);
        assert_eq!(p.n_sim, 99);
        assert_eq!(p.alpha, 0.05);
        assert_eq!(p.functions.correction, Correction::Translation);
        assert_eq!(p.functions.n_steps, 50);
        let d: EnvelopeParams = serde_json::from_str("{}").unwrap();
        assert_eq!(d, EnvelopeParams::default());
        assert_eq!(d.function, SummaryFunction::L);
        assert_eq!(d.n_sim, 199);
    }

    #[test]
    fn test_bad_parameters() {
        let (x, y) = (vec![0.1, 0.5, 0.9], vec![0.2, 0.4, 0.6]);
        for p in [
            EnvelopeParams {
                n_sim: 0,
                ..Default::default()
            },
            EnvelopeParams {
                n_sim: 10_000,
                ..Default::default()
            },
            EnvelopeParams {
                alpha: 0.0,
                ..Default::default()
            },
        ] {
            assert!(matches!(
                EnvelopeJob::new_in(unit_square(), &x, &y, &p),
                Err(AnalysisError::BadParameter { .. })
            ));
        }
        assert!(matches!(
            EnvelopeJob::new_in(unit_square(), &[0.5], &[0.5], &EnvelopeParams::default()),
            Err(AnalysisError::TooFewPoints { .. })
        ));
    }
}
