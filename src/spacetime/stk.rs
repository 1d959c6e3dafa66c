//! The space–time K function (Diggle, Chetwynd, Häggkvist & Morris 1995).
//!
//! **Reference.** Diggle, P. J., Chetwynd, A. G., Häggkvist, R. &
//! Morris, S. E. (1995). "Second-order analysis of space–time clustering".
//! *Statistical Methods in Medical Research* 4(2), 124–136.
//!
//! **Estimator.** For n events in a study area of area |A| observed over
//! T = t_last − t_first days,
//!
//!   K̂(s, t) = |A|·T/(n(n−1)) · Σ_{i≠j} w_ij·v_ij·1{d_ij ≤ s}·1{u_ij ≤ t},
//!
//! with u_ij = |t_i − t_j|, w_ij Ripley's isotropic edge weight of the
//! clustering section (the circle about event i through event j, capped at
//! the same weight as there; [`crate::distance::edge`]) and v_ij the
//! temporal edge weight: 1 when both t_i − u_ij and t_i + u_ij lie in
//! [t_first, t_last], else 2. K̂_s(s) = |A|/(n(n−1))·Σ w_ij 1{d_ij ≤ s} is
//! the spatial K and K̂_t(t) = T/(n(n−1))·Σ v_ij 1{u_ij ≤ t} the temporal
//! one. Without interaction K(s, t) = K_s(s)·K_t(t) (for a Poisson process
//! in space and time, 2πs²t), so the statistic is
//!
//!   D̂(s, t) = K̂(s, t) − K̂_s(s)·K̂_t(t).
//!
//! The normalisation n(n−1) (rather than n²) is ours.
//!
//! **Test.** The times are permuted among the locations
//! ([`super::permutation`]). K̂_s and K̂_t do not change; K̂(s, t) does.
//! Over all permutations the mean of K̂(s, t) is exactly K̂_s(s)·K̂_t(t),
//! so D̂ has permutation mean 0 (checked by enumeration in the tests). Per
//! grid cell the mean and SD of D̂ over the m permutations give the
//! standardised residuals R(s, t) = (D̂ − mean)/SD that the grid shows. The
//! global statistic is the sum of the residuals over the grid (as the
//! source suggests), standardised for the test with the mean and SD over
//! the permutations *and the data* (so that the data and the permutations
//! are exchangeable and the rank p is exact), with the rank p
//! (1 + #{ΣR* ≥ ΣR})/(m + 1). Cells whose D̂ never varies have no R and
//! are left out of the sum. A pointwise envelope (smallest and largest D̂*
//! of the permutations) is reported per cell; being pointwise, it is not a
//! test over the grid.
//!
//! **Grid.** s_k = k·s_max/n_s (k = 1 … n_s) and t_k = k·t_max/n_t. Default
//! s_max: the clustering section's rule ([`crate::distance`]'s default
//! largest distance); default t_max: a quarter of the span of the times
//! (the same idea in time; our choice).
//!
//! **Cost.** The pairs within s_max are found once with the neighbour index
//! ([`GridIndex::for_each_pair_within`]), each with its spatial band and
//! both edge weights; a permutation then only re-bins their times:
//! O(#pairs) per permutation, with a batch of them per pass. Runs with more
//! than [`MAX_PAIRS`] pairs within s_max are refused.

use crate::distance::verdict::fmt_p;
use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::params::{Field, Params};
use crate::spacetime::{permuted_times_batch, time_fields, TimedEvents, UncertainTimes};
use crate::window::Window;
use serde::{Deserialize, Serialize};

/// Largest number of pairs within s_max kept (memory about 18 bytes each).
pub const MAX_PAIRS: usize = 4_000_000;
/// Permutations per pass over the pairs.
pub const BATCH: usize = 16;
/// Largest number of steps of either axis of the grid.
pub const MAX_STEPS: usize = 30;

/// Options of the space–time K function (`spaceTimeKStart` in the JS API).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SpaceTimeKOptions {
    /// Largest distance (m); `None`: the clustering section's default.
    pub s_max_m: Option<f64>,
    /// Largest time difference (days); `None`: a quarter of the time span.
    pub t_max_days: Option<f64>,
    pub s_steps: usize,
    pub t_steps: usize,
    pub n_sim: usize,
    pub seed: u64,
    pub alpha: f64,
    pub uncertain_times: UncertainTimes,
    pub max_window_days: f64,
}

impl Default for SpaceTimeKOptions {
    fn default() -> Self {
        SpaceTimeKOptions {
            s_max_m: None,
            t_max_days: None,
            s_steps: 10,
            t_steps: 10,
            n_sim: 199,
            seed: 0,
            alpha: 0.05,
            uncertain_times: UncertainTimes::LeaveOut,
            max_window_days: super::events::DEFAULT_MAX_WINDOW_DAYS,
        }
    }
}

impl Params for SpaceTimeKOptions {
    const NAME: &'static str = "spaceTimeKStart";
    fn fields() -> Vec<Field> {
        let mut f = vec![
            Field::number(
                "s_max_m",
                Some("m"),
                "largest distance of the grid; empty = the clustering section's default for the study area",
            )
            .scale_length(1.0)
            .optional(),
            Field::number(
                "t_max_days",
                Some("days"),
                "largest time difference of the grid; empty = a quarter of the span of the times",
            )
            .above(0.0, Some(36_600.0))
            .optional(),
            Field::integer("s_steps", "distances in the grid (from s_max/steps to s_max)")
                .range(2.0, MAX_STEPS as f64),
            Field::integer("t_steps", "time differences in the grid (from t_max/steps to t_max)")
                .range(2.0, MAX_STEPS as f64),
            Field::integer("n_sim", "random permutations of the times among the places")
                .range(1.0, 999.0),
            Field::seed("seed of the permutations"),
            Field::number("alpha", None, "level at which the verdict calls a p-value small")
                .above(0.0, Some(0.5)),
        ];
        f.extend(time_fields());
        f
    }
}

/// What a helper worker needs to run permutations: the locations, the
/// times relative to the first, the study area and the resolved grid.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct StkShare {
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub t: Vec<f64>,
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    pub s_max: f64,
    pub t_max: f64,
    pub options: SpaceTimeKOptions,
}

/// The bin of `v` on the grid `edges` (edges[k] = k·max/steps, k = 0 …
/// steps): the smallest k with edges[k] ≥ v; `None` beyond the last.
#[inline(always)]
fn bin_of(v: f64, step: f64, edges: &[f64]) -> Option<usize> {
    let last = edges.len() - 1;
    if v.is_nan() || v > edges[last] {
        return None;
    }
    let mut k = ((v / step).ceil() as usize).min(last);
    if k > 0 && edges[k - 1] >= v {
        k -= 1;
    } else if edges[k] < v {
        k += 1;
    }
    Some(k.min(last))
}

fn grid(max: f64, steps: usize) -> Vec<f64> {
    (0..=steps)
        .map(|k| (k as f64 * max) / steps as f64)
        .collect()
}

/// Runs permutations of a space–time K run (here or in a helper).
pub struct StkSimulator {
    share: StkShare,
    pi: Vec<u32>,
    pj: Vec<u32>,
    band: Vec<u16>,
    wi: Vec<f32>,
    wj: Vec<f32>,
    s_edges: Vec<f64>,
    t_edges: Vec<f64>,
    /// T: last − first time (days).
    span: f64,
    area: f64,
    /// K̂_s(s_k) and K̂_t(t_k), k = 1 …
    ks: Vec<f64>,
    kt: Vec<f64>,
    capped: u64,
}

impl StkSimulator {
    /// Finds the pairs within s_max with their bands and weights, and
    /// K̂_s and K̂_t.
    pub fn new(share: StkShare) -> Result<StkSimulator, AnalysisError> {
        let window =
            Window::from_polygons(share.polygons.clone(), crate::window::WindowOrigin::File)
                .map_err(|e| crate::params::bad("study area", e.to_string()))?;
        let n = share.x.len();
        let o = &share.options;
        let index = GridIndex::with_cell(&share.x, &share.y, share.s_max / 2.0);
        let est = index.estimate_pairs_within(share.s_max);
        let too_many = |k: f64| {
            crate::params::bad(
                "s_max_m",
                format!(
                    "about {} pairs of events lie within {} m of each other; the space–time K function handles at most {} pairs: choose a smaller largest distance",
                    k.round(),
                    crate::params::num((share.s_max * 10.0).round() / 10.0),
                    MAX_PAIRS
                ),
            )
        };
        if est > 1.5 * MAX_PAIRS as f64 {
            return Err(too_many(est));
        }
        let s_edges = grid(share.s_max, o.s_steps);
        let t_edges = grid(share.t_max, o.t_steps);
        let b: Vec<f64> = (0..n)
            .map(|i| window.boundary_distance(share.x[i], share.y[i]))
            .collect();
        let cap = crate::distance::FunctionParams::default().weight_cap;
        let iso =
            crate::distance::edge::IsoCache::new(&window, &share.x, &share.y, b, share.s_max, cap);
        let (mut pi, mut pj, mut band, mut wi, mut wj) =
            (Vec::new(), Vec::new(), Vec::new(), Vec::new(), Vec::new());
        let mut capped = 0u64;
        let mut over = false;
        let s_step = share.s_max / o.s_steps as f64;
        index.for_each_pair_within(share.s_max, |i, j, d| {
            if over {
                return;
            }
            let Some(k) = bin_of(d, s_step, &s_edges) else {
                return;
            };
            if pi.len() >= MAX_PAIRS {
                over = true;
                return;
            }
            pi.push(i as u32);
            pj.push(j as u32);
            band.push(k as u16);
            wi.push(iso.weight(i, d, &mut capped) as f32);
            wj.push(iso.weight(j, d, &mut capped) as f32);
        });
        if over {
            return Err(too_many(est.max(MAX_PAIRS as f64)));
        }
        let span = {
            let hi = share.t.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let lo = share.t.iter().copied().fold(f64::INFINITY, f64::min);
            hi - lo
        };
        let area = window.area();
        let norm = 1.0 / (n as f64 * (n as f64 - 1.0));
        // K̂_s from the pairs.
        let mut ks = vec![0.0; o.s_steps + 1];
        for ((&k, &a), &c) in band.iter().zip(&wi).zip(&wj) {
            ks[k as usize] += a as f64 + c as f64;
        }
        cumulate(&mut ks);
        let ks: Vec<f64> = ks[1..].iter().map(|v| v * area * norm).collect();
        // K̂_t over every pair of times (sorted, so the inner loop stops at
        // t_max).
        let mut ts = share.t.clone();
        ts.sort_by(f64::total_cmp);
        let t_step = share.t_max / o.t_steps as f64;
        let mut kt = vec![0.0; o.t_steps + 1];
        for a in 0..n {
            for c in a + 1..n {
                let u = (ts[c] - ts[a]).abs();
                let Some(k) = bin_of(u, t_step, &t_edges) else {
                    break;
                };
                kt[k] += temporal_weight(ts[a], u, span) + temporal_weight(ts[c], u, span);
            }
        }
        cumulate(&mut kt);
        let kt: Vec<f64> = kt[1..].iter().map(|v| v * span * norm).collect();
        Ok(StkSimulator {
            share,
            pi,
            pj,
            band,
            wi,
            wj,
            s_edges,
            t_edges,
            span,
            area,
            ks,
            kt,
            capped,
        })
    }

    pub fn pairs(&self) -> usize {
        self.pi.len()
    }
    fn cells(&self) -> usize {
        self.share.options.s_steps * self.share.options.t_steps
    }

    /// D̂(s, t) for `b` time vectors laid out event-major (`tb[i*b + k]`),
    /// each as s_steps × t_steps values (s-major), appended to `out`.
    fn d_of_batch(&self, tb: &[f64], b: usize, out: &mut Vec<f64>) {
        let o = &self.share.options;
        let (ns, nt) = (o.s_steps, o.t_steps);
        let w = nt + 1;
        let cells = (ns + 1) * w;
        let mut acc = vec![0.0f64; b * cells];
        let t_step = self.share.t_max / nt as f64;
        let t_max = self.share.t_max;
        let span = self.span;
        for p in 0..self.pi.len() {
            let (i, j) = (self.pi[p] as usize, self.pj[p] as usize);
            let base = self.band[p] as usize * w;
            let (a, c) = (self.wi[p] as f64, self.wj[p] as f64);
            let ti = &tb[i * b..(i + 1) * b];
            let tj = &tb[j * b..(j + 1) * b];
            for (k, (&x, &y)) in ti.iter().zip(tj).enumerate() {
                let u = (x - y).abs();
                if u > t_max {
                    continue;
                }
                if let Some(tk) = bin_of(u, t_step, &self.t_edges) {
                    let v = a * temporal_weight(x, u, span) + c * temporal_weight(y, u, span);
                    acc[k * cells + base + tk] += v;
                }
            }
        }
        let scale =
            self.area * self.span / (self.share.x.len() as f64 * (self.share.x.len() as f64 - 1.0));
        for k in 0..b {
            let g = &mut acc[k * cells..(k + 1) * cells];
            // Cumulative over s (rows) and t (columns).
            for r in 0..=ns {
                for col in 1..=nt {
                    g[r * w + col] += g[r * w + col - 1];
                }
                if r > 0 {
                    for col in 0..=nt {
                        g[r * w + col] += g[(r - 1) * w + col];
                    }
                }
            }
            for r in 1..=ns {
                for col in 1..=nt {
                    out.push(g[r * w + col] * scale - self.ks[r - 1] * self.kt[col - 1]);
                }
            }
        }
    }

    /// D̂ of the data.
    pub fn observed(&self) -> Vec<f64> {
        let mut out = Vec::with_capacity(self.cells());
        self.d_of_batch(&self.share.t, 1, &mut out);
        out
    }

    /// D̂ of permutations `from..to`, one grid after another.
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<f64> {
        let to = to.min(self.share.options.n_sim);
        let mut out = Vec::with_capacity(to.saturating_sub(from) * self.cells());
        let mut j = from;
        while j < to {
            let b = (to - j).min(BATCH);
            let tb = permuted_times_batch(&self.share.t, self.share.options.seed, j as u64, b);
            self.d_of_batch(&tb, b, &mut out);
            j += b;
        }
        out
    }

    /// K̂(s, t) of the data (s-major), for checks.
    pub fn k_observed(&self) -> Vec<f64> {
        let d = self.observed();
        let nt = self.share.options.t_steps;
        d.iter()
            .enumerate()
            .map(|(c, v)| v + self.ks[c / nt] * self.kt[c % nt])
            .collect()
    }

    pub fn k_space(&self) -> &[f64] {
        &self.ks
    }
    pub fn k_time(&self) -> &[f64] {
        &self.kt
    }
    pub fn s_values(&self) -> &[f64] {
        &self.s_edges[1..]
    }
    pub fn t_values(&self) -> &[f64] {
        &self.t_edges[1..]
    }
    pub fn share(&self) -> &StkShare {
        &self.share
    }
}

/// v = 1 when both t ± u lie in [0, span] (times relative to the first),
/// else 2.
#[inline(always)]
fn temporal_weight(t: f64, u: f64, span: f64) -> f64 {
    if t - u >= 0.0 && t + u <= span {
        1.0
    } else {
        2.0
    }
}

fn cumulate(v: &mut [f64]) {
    for k in 1..v.len() {
        v[k] += v[k - 1];
    }
}

/// The global test's outcome.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StkOutcome {
    NoInteraction,
    Interaction,
}

/// Result of the space–time K function.
#[derive(Debug, Clone, Serialize)]
pub struct SpaceTimeKResult {
    /// Grid distances (m) and time differences (days).
    pub s: Vec<f64>,
    pub t: Vec<f64>,
    /// Per cell, s-major (index a·len(t) + b for s[a], t[b]).
    pub k: Vec<f64>,
    pub d: Vec<f64>,
    pub d_mean: Vec<f64>,
    pub d_sd: Vec<f64>,
    /// Standardised residual; `None` where D̂ never varies.
    pub residual: Vec<Option<f64>>,
    /// Pointwise envelope of the permutations' D̂.
    pub d_lo: Vec<f64>,
    pub d_hi: Vec<f64>,
    pub k_space: Vec<f64>,
    pub k_time: Vec<f64>,
    /// Σ R over the cells with an R (standardised over the permutations
    /// and the data), and its rank p.
    pub global_statistic: f64,
    pub global_p: f64,
    pub at_least: usize,
    /// The cell with the largest R (indices into s and t).
    pub peak: Option<(usize, usize)>,
    pub n_events: usize,
    pub pairs_within_s_max: usize,
    pub s_max_m: f64,
    pub s_max_rule: String,
    pub t_max_days: f64,
    pub t_max_rule: String,
    pub span_days: f64,
    pub area_m2: f64,
    pub weights_capped: u64,
    pub n_sim: usize,
    pub seed: u64,
    pub alpha: f64,
    pub times: super::events::TimeUseReport,
    pub outcome: StkOutcome,
    pub verdict: String,
    pub caveats: Vec<String>,
}

/// A space–time K run advanced in batches.
pub struct SpaceTimeKJob {
    sim: StkSimulator,
    d_obs: Vec<f64>,
    sims: Vec<f64>,
    done: usize,
    report: super::events::TimeUseReport,
    s_rule: String,
    t_rule: String,
}

impl SpaceTimeKJob {
    /// Checks the options, resolves the grid and computes D̂ of the data.
    pub fn new(
        ev: &TimedEvents,
        window: &Window,
        opts: &SpaceTimeKOptions,
    ) -> Result<SpaceTimeKJob, AnalysisError> {
        let [bx0, by0, bx1, by1] = window.bbox();
        opts.validate_in(Some((bx1 - bx0).hypot(by1 - by0)))?;
        let n = ev.len();
        if n < 3 {
            return Err(AnalysisError::TooFewPoints {
                needed: 3,
                found: n,
            });
        }
        let (t_first, t_last) = ev.span().unwrap_or((0.0, 0.0));
        let span = t_last - t_first;
        if span.is_nan() || span <= 0.0 {
            return Err(crate::params::bad(
                "times",
                "all events have the same time: the space–time K function needs times that differ",
            ));
        }
        let (s_max, s_rule) = match opts.s_max_m {
            Some(s) => (s, "set by the user".to_string()),
            None => crate::distance::functions::default_r_max(window),
        };
        let (t_max, t_rule) = match opts.t_max_days {
            Some(t) if t > span => {
                return Err(crate::params::bad(
                    "t_max_days",
                    format!(
                        "is {} days but the times span only {} days: use at most that",
                        crate::params::num(t),
                        crate::params::num((span * 100.0).round() / 100.0)
                    ),
                ))
            }
            Some(t) => (t, "set by the user".to_string()),
            None => (span / 4.0, "a quarter of the span of the times".to_string()),
        };
        let share = StkShare {
            x: ev.x.clone(),
            y: ev.y.clone(),
            t: ev.t.iter().map(|&v| v - t_first).collect(),
            polygons: window.polygons().to_vec(),
            s_max,
            t_max,
            options: opts.clone(),
        };
        let sim = StkSimulator::new(share)?;
        let d_obs = sim.observed();
        Ok(SpaceTimeKJob {
            sim,
            d_obs,
            sims: Vec::new(),
            done: 0,
            report: ev.report(),
            s_rule,
            t_rule,
        })
    }

    pub fn total(&self) -> usize {
        self.sim.share.options.n_sim
    }
    pub fn done(&self) -> usize {
        self.done
    }
    pub fn simulator(&self) -> &StkSimulator {
        &self.sim
    }
    pub fn observed(&self) -> &[f64] {
        &self.d_obs
    }
    pub fn share(&self) -> &StkShare {
        &self.sim.share
    }

    /// Runs up to `k` more permutations; returns how many are done.
    pub fn run_batch(&mut self, k: usize) -> usize {
        let to = (self.done + k).min(self.total());
        let d = self.sim.simulate_range(self.done, to);
        self.sims.extend(d);
        self.done = to;
        self.done
    }

    /// Grids of permutations `from..` computed elsewhere, added in order.
    pub fn add_simulated(&mut self, from: usize, d: &[f64]) -> Result<usize, AnalysisError> {
        let rows = crate::params::piece_rows(
            "piece",
            "permutation",
            (from, self.done, self.total()),
            d.len(),
            self.sim.cells(),
        )?;
        if d.iter().any(|v| !v.is_finite()) {
            return Err(crate::params::bad(
                "piece",
                "holds a value that is not a number",
            ));
        }
        self.sims.extend_from_slice(d);
        self.done += rows;
        Ok(self.done)
    }

    /// The result over the permutations run so far (at least one).
    pub fn finish(&self) -> Result<SpaceTimeKResult, AnalysisError> {
        let m = self.done;
        if m == 0 {
            return Err(crate::params::bad("n_sim", "no permutation has been run"));
        }
        let sim = &self.sim;
        let o = &sim.share.options;
        let cells = sim.cells();
        let nt = o.t_steps;
        let count = (m + 1) as f64;
        let mut lo = vec![f64::INFINITY; cells];
        let mut hi = vec![f64::NEG_INFINITY; cells];
        for g in self.sims.chunks(cells) {
            for c in 0..cells {
                lo[c] = lo[c].min(g[c]);
                hi[c] = hi[c].max(g[c]);
            }
        }
        // Per cell over the permutations: what the shaded grid and the
        // verdict show (not capped by the data's own value).
        let (mean, sd) = mean_sd(self.sims.chunks(cells), cells, &self.d_obs);
        let residual: Vec<Option<f64>> = self
            .d_obs
            .iter()
            .zip(&mean)
            .zip(&sd)
            .map(|((d, mu), &s)| (s > 0.0).then(|| (d - mu) / s))
            .collect();
        // The global test standardises with the mean and SD over the
        // permutations and the data together, so that the data and the
        // permutations are exchangeable and the rank p is exact.
        let (pmean, psd) = mean_sd(
            self.sims
                .chunks(cells)
                .chain(std::iter::once(&self.d_obs[..])),
            cells,
            &self.d_obs,
        );
        let sum_r = |g: &[f64]| -> f64 {
            g.iter()
                .zip(&pmean)
                .zip(&psd)
                .filter(|(_, &s)| s > 0.0)
                .map(|((d, mu), s)| (d - mu) / s)
                .sum()
        };
        let global = sum_r(&self.d_obs);
        let at_least = self
            .sims
            .chunks(cells)
            .filter(|g| sum_r(g) >= global - 1e-9 * global.abs())
            .count();
        let global_p = (1 + at_least) as f64 / count;
        let peak = residual
            .iter()
            .enumerate()
            .filter_map(|(c, r)| r.map(|v| (c, v)))
            .fold(None::<(usize, f64)>, |best, (c, v)| match best {
                Some((_, bv)) if bv >= v => best,
                _ => Some((c, v)),
            })
            .map(|(c, _)| (c / nt, c % nt));
        let outcome = if global_p <= o.alpha {
            StkOutcome::Interaction
        } else {
            StkOutcome::NoInteraction
        };
        let s_vals = sim.s_values().to_vec();
        let t_vals = sim.t_values().to_vec();
        let verdict = match (outcome, peak) {
            (StkOutcome::Interaction, Some((a, b))) => format!(
                "Events close together in both place and time are more common than if times and places were unrelated (global test p = {p}, {m} permutations). The excess stands out most for events within {s} m and {t} days of each other. A link between when and where, not a cause.",
                p = fmt_p(global_p),
                s = crate::params::num(round_sig(s_vals[a])),
                t = crate::params::num(round_sig(t_vals[b]))
            ),
            _ => format!(
                "No clear sign that events close in place are also close in time at the distances up to {s} m and times up to {t} days looked at (global test p = {p}, {m} permutations).",
                p = fmt_p(global_p),
                s = crate::params::num(round_sig(sim.share.s_max)),
                t = crate::params::num(round_sig(sim.share.t_max))
            ),
        };
        let mut caveats = vec![
            "The shaded grid shows where the data stand out from the permutations cell by cell; with many cells some stand out by chance, so read the global test first.".to_string(),
            "A change over time in where people live or in how events are recorded also links places and times.".into(),
            "Edge weights: Ripley's isotropic correction in space (as in the clustering section) and a weight of 2 in time for pairs whose time difference reaches beyond the first or last date.".into(),
        ];
        if sim.capped > 0 {
            caveats.push(format!(
                "{} edge weights hit the cap of {} (events very near the boundary).",
                sim.capped,
                crate::distance::FunctionParams::default().weight_cap
            ));
        }
        if self.report.at_midpoint > 0 || self.report.window_too_long > 0 {
            caveats.push(self.report.statement.clone());
        }
        let k = self
            .d_obs
            .iter()
            .enumerate()
            .map(|(c, v)| v + sim.ks[c / nt] * sim.kt[c % nt])
            .collect();
        Ok(SpaceTimeKResult {
            s: s_vals,
            t: t_vals,
            k,
            d: self.d_obs.clone(),
            d_mean: mean,
            d_sd: sd,
            residual,
            d_lo: lo,
            d_hi: hi,
            k_space: sim.ks.clone(),
            k_time: sim.kt.clone(),
            global_statistic: global,
            global_p,
            at_least,
            peak,
            n_events: sim.share.x.len(),
            pairs_within_s_max: sim.pairs(),
            s_max_m: sim.share.s_max,
            s_max_rule: self.s_rule.clone(),
            t_max_days: sim.share.t_max,
            t_max_rule: self.t_rule.clone(),
            span_days: sim.span,
            area_m2: sim.area,
            weights_capped: sim.capped,
            n_sim: m,
            seed: o.seed,
            alpha: o.alpha,
            times: self.report.clone(),
            outcome,
            verdict,
            caveats,
        })
    }
}

/// Mean and SD (denominator count − 1) per cell over `grids`; an SD at the
/// level of rounding (relative to the mean and the data's value) is 0.
fn mean_sd<'a>(
    grids: impl Iterator<Item = &'a [f64]> + Clone,
    cells: usize,
    data: &[f64],
) -> (Vec<f64>, Vec<f64>) {
    let mut mean = vec![0.0; cells];
    let mut count = 0usize;
    for g in grids.clone() {
        count += 1;
        for (m, v) in mean.iter_mut().zip(g) {
            *m += v;
        }
    }
    let k = count.max(1) as f64;
    mean.iter_mut().for_each(|v| *v /= k);
    let mut ss = vec![0.0; cells];
    for g in grids {
        for ((s, v), m) in ss.iter_mut().zip(g).zip(&mean) {
            *s += (v - m).powi(2);
        }
    }
    let sd = ss
        .iter()
        .zip(&mean)
        .zip(data)
        .map(|((s, mu), d)| {
            let v = if count > 1 {
                (s / (k - 1.0)).sqrt()
            } else {
                0.0
            };
            if v > 1e-9 * (mu.abs() + d.abs()).max(f64::MIN_POSITIVE) {
                v
            } else {
                0.0
            }
        })
        .collect();
    (mean, sd)
}

/// Rounded to 3 significant figures (for sentences).
fn round_sig(v: f64) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let p = 10f64.powi(2 - v.abs().log10().floor() as i32);
    (v * p).round() / p
}

/// The grid as CSV (no coordinates): one row per cell.
pub fn grid_csv(r: &SpaceTimeKResult) -> String {
    let mut s = String::from(
        "distance_m,days,k,d,d_permutation_mean,d_permutation_sd,standardised_residual,d_envelope_low,d_envelope_high\n",
    );
    let nt = r.t.len();
    for c in 0..r.d.len() {
        let res = r.residual[c].map_or(String::new(), |v| format!("{v}"));
        s.push_str(&format!(
            "{},{},{},{},{},{},{},{},{}\n",
            r.s[c / nt],
            r.t[c % nt],
            r.k[c],
            r.d[c],
            r.d_mean[c],
            r.d_sd[c],
            res,
            r.d_lo[c],
            r.d_hi[c]
        ));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::RngExt;

    fn unit_sq() -> Window {
        Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap()
    }

    fn uniform(n: usize, seed: u64, days: f64) -> TimedEvents {
        let mut rng = crate::rng::rng_from_seed(seed);
        let x: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..1.0)).collect();
        let y: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..1.0)).collect();
        let t: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..days)).collect();
        TimedEvents::from_xyt(x, y, t).unwrap()
    }

    #[test]
    fn bins_put_grid_values_in_their_own_cell() {
        let e = grid(3.0, 10);
        let step = 0.3;
        assert_eq!(bin_of(0.0, step, &e), Some(0));
        assert_eq!(bin_of(e[7], step, &e), Some(7));
        assert_eq!(bin_of(e[7] + 1e-12, step, &e), Some(8));
        assert_eq!(bin_of(3.0, step, &e), Some(10));
        assert_eq!(bin_of(3.0000001, step, &e), None);
        assert_eq!(bin_of(f64::NAN, step, &e), None);
    }

    #[test]
    fn k_matches_brute_force_over_all_pairs() {
        // Every ordered pair with its isotropic weight (the uncached
        // routine of the clustering section) and temporal weight, against
        // the estimator's binned sums.
        let ev = uniform(60, 3, 100.0);
        let w = unit_sq();
        let o = SpaceTimeKOptions {
            s_max_m: Some(0.25),
            t_max_days: Some(30.0),
            s_steps: 5,
            t_steps: 6,
            ..Default::default()
        };
        let job = SpaceTimeKJob::new(&ev, &w, &o).unwrap();
        let sim = job.simulator();
        let k = sim.k_observed();
        let (t0, t1) = ev.span().unwrap();
        let span = t1 - t0;
        let n = ev.len() as f64;
        for (a, &s) in sim.s_values().iter().enumerate() {
            for (b, &t) in sim.t_values().iter().enumerate() {
                let mut sum = 0.0;
                let (mut ssum, mut tsum) = (0.0, 0.0);
                for i in 0..ev.len() {
                    for j in 0..ev.len() {
                        if i == j {
                            continue;
                        }
                        let d = ((ev.x[i] - ev.x[j]).powi(2) + (ev.y[i] - ev.y[j]).powi(2)).sqrt();
                        let u = (ev.t[i] - ev.t[j]).abs();
                        let wi =
                            crate::distance::edge::isotropic_weight_at(&w, ev.x[i], ev.y[i], d)
                                .unwrap()
                                .min(4.0);
                        let ti = ev.t[i] - t0;
                        let v = if ti - u >= 0.0 && ti + u <= span {
                            1.0
                        } else {
                            2.0
                        };
                        if d <= s && u <= t {
                            sum += wi * v;
                        }
                        if d <= s {
                            ssum += wi;
                        }
                        if u <= t {
                            tsum += v;
                        }
                    }
                }
                let want = sum * span / (n * (n - 1.0));
                let got = k[a * 6 + b];
                assert!(
                    (got - want).abs() <= 1e-6 * want.max(1e-9),
                    "K({s},{t}) {got} vs {want}"
                );
                let ks = ssum / (n * (n - 1.0));
                assert!((sim.k_space()[a] - ks).abs() <= 1e-6 * ks.max(1e-9));
                let kt = tsum * span / (n * (n - 1.0));
                assert!((sim.k_time()[b] - kt).abs() <= 1e-9 * kt.max(1e-9));
            }
        }
    }

    #[test]
    fn permutation_mean_of_d_is_exactly_zero_by_enumeration() {
        // n = 6: all 720 permutations of the times; the mean of D̂ over them
        // is 0 in every cell (E K̂* = K̂_s·K̂_t; see the module docs).
        let ev = uniform(6, 8, 20.0);
        let w = unit_sq();
        let o = SpaceTimeKOptions {
            s_max_m: Some(0.6),
            t_max_days: Some(10.0),
            s_steps: 3,
            t_steps: 4,
            ..Default::default()
        };
        let job = SpaceTimeKJob::new(&ev, &w, &o).unwrap();
        let sim = job.simulator();
        let sh = sim.share();
        let perms = crate::spacetime::permute::all_permutations(6).unwrap();
        assert_eq!(perms.len(), 720);
        let mut total = vec![0.0; 12];
        let mut scale = 0.0f64;
        for p in &perms {
            let t: Vec<f64> = p.iter().map(|&k| sh.t[k]).collect();
            let mut out = Vec::new();
            sim.d_of_batch(&t, 1, &mut out);
            for (a, v) in total.iter_mut().zip(&out) {
                *a += v / 720.0;
                scale = scale.max(v.abs());
            }
        }
        for v in total {
            assert!(v.abs() <= 1e-6 * scale.max(1e-12), "{v} (scale {scale})");
        }
    }

    #[test]
    fn mean_k_under_poisson_is_two_pi_s2_t() {
        // Independent uniform locations on the unit square and times on
        // [0, 100]: mean K̂(s, t) over 200 data sets ≈ 2πs²t (K_s = πs²,
        // K_t = 2t; method notes §10.4), within 4 standard errors.
        let w = unit_sq();
        let o = SpaceTimeKOptions {
            s_max_m: Some(0.1),
            t_max_days: Some(10.0),
            s_steps: 2,
            t_steps: 2,
            ..Default::default()
        };
        let vals: Vec<f64> = (0..200)
            .map(|r| {
                let ev = uniform(200, 1000 + r, 100.0);
                let job = SpaceTimeKJob::new(&ev, &w, &o).unwrap();
                job.simulator().k_observed()[3]
            })
            .collect();
        let m = vals.iter().sum::<f64>() / 200.0;
        let sd = (vals.iter().map(|v| (v - m).powi(2)).sum::<f64>() / 199.0).sqrt();
        let theory = 2.0 * std::f64::consts::PI * 0.01 * 10.0;
        assert!(
            (m - theory).abs() < 4.0 * sd / 200f64.sqrt(),
            "{m} vs {theory} (sd {sd})"
        );
    }

    #[test]
    fn split_runs_equal_one_run_and_bad_pieces_are_refused() {
        let ev = uniform(80, 5, 50.0);
        let w = unit_sq();
        let o = SpaceTimeKOptions {
            n_sim: 39,
            seed: 4,
            ..Default::default()
        };
        let mut a = SpaceTimeKJob::new(&ev, &w, &o).unwrap();
        a.run_batch(39);
        let mut b = SpaceTimeKJob::new(&ev, &w, &o).unwrap();
        let helper = StkSimulator::new(b.share().clone()).unwrap();
        for (from, to) in [(0, 3), (3, 20), (20, 39)] {
            let piece = helper.simulate_range(from, to);
            b.add_simulated(from, &piece).unwrap();
        }
        assert_eq!(a.sims, b.sims);
        assert!(b.add_simulated(5, &[0.0; 100]).is_err());
        let (ra, rb) = (a.finish().unwrap(), b.finish().unwrap());
        assert_eq!(ra.global_p, rb.global_p);
        assert_eq!(ra.global_statistic, rb.global_statistic);
    }

    #[test]
    fn planted_space_time_clusters_give_positive_d_and_a_small_p() {
        // 150 background events plus 3 tight bursts (10 events within
        // 0.03 and 3 days each): D̂ at short s and t is positive and the
        // global test rejects.
        let mut rng = crate::rng::rng_from_seed(77);
        let mut ev = uniform(150, 6, 365.0);
        for c in 0..3 {
            let (cx, cy, ct) = (0.2 + 0.3 * c as f64, 0.5, 60.0 + 100.0 * c as f64);
            for _ in 0..10 {
                ev.x.push(cx + rng.random_range(-0.03..0.03));
                ev.y.push(cy + rng.random_range(-0.03..0.03));
                ev.t.push(ct + rng.random_range(0.0..3.0));
            }
        }
        let ev = TimedEvents::from_xyt(ev.x, ev.y, ev.t).unwrap();
        let o = SpaceTimeKOptions {
            s_max_m: Some(0.2),
            t_max_days: Some(40.0),
            n_sim: 99,
            seed: 1,
            ..Default::default()
        };
        let mut job = SpaceTimeKJob::new(&ev, &unit_sq(), &o).unwrap();
        job.run_batch(99);
        let r = job.finish().unwrap();
        assert!(
            r.d[0] > 0.0 && r.residual[0].unwrap() > 2.0,
            "{:?}",
            &r.d[..3]
        );
        assert_eq!(r.outcome, StkOutcome::Interaction);
        assert!(r.global_p <= 0.02);
        let (a, b) = r.peak.unwrap();
        assert!(r.s[a] <= 0.1 && r.t[b] <= 20.0, "{a} {b}");
        let csv = grid_csv(&r);
        assert_eq!(csv.lines().count(), 101);
    }

    #[test]
    fn refuses_bad_input() {
        let w = unit_sq();
        let same = TimedEvents::from_xyt(vec![0.1, 0.2, 0.3], vec![0.1; 3], vec![4.0; 3]).unwrap();
        assert!(SpaceTimeKJob::new(&same, &w, &SpaceTimeKOptions::default()).is_err());
        let ev = uniform(20, 1, 10.0);
        let long = SpaceTimeKOptions {
            t_max_days: Some(500.0),
            ..Default::default()
        };
        let e = SpaceTimeKJob::new(&ev, &w, &long).err().unwrap();
        assert!(e.to_string().contains("span"), "{e}");
        let steps = SpaceTimeKOptions {
            s_steps: 1,
            ..Default::default()
        };
        assert!(SpaceTimeKJob::new(&ev, &w, &steps).is_err());
        let far = SpaceTimeKOptions {
            s_max_m: Some(100.0),
            ..Default::default()
        };
        assert!(SpaceTimeKJob::new(&ev, &w, &far).is_err());
    }
}
