//! The k-nearest-neighbour test of Cuzick & Edwards (1990).
//!
//! **Reference.** Cuzick, J. & Edwards, R. (1990). "Spatial clustering for
//! inhomogeneous populations". *Journal of the Royal Statistical Society,
//! Series B* 52(1), 73–104 (title, journal and pages from memory).
//!
//! **Null hypothesis.** As for the random labelling test: given the pooled
//! locations of the n₁ cases and n₀ controls (n = n₁ + n₀), which n₁ of
//! them are cases is a uniformly random choice. Under it cases have, on
//! average, the share of cases among their neighbours that the pooled
//! points give; clustering beyond the population shows as *more* cases
//! among the cases' nearest neighbours.
//!
//! **Statistic.** With δ_i = 1 for a case and a_ij = 1 when j is one of the
//! k nearest neighbours of i among the other pooled points,
//! T_k = Σ_{i≠j} δ_i δ_j a_ij: over all cases, how many of their k nearest
//! neighbours are cases. Computed for k = 1 … K.
//!
//! **Null moments** (exact under random labelling; derived by counting the
//! distinct indices in pairs of neighbour pairs, and checked against a full
//! enumeration of all labellings in the tests). With
//! p₁ = n₁(n₁−1)/(n(n−1)), p₂ = p₁·(n₁−2)/(n−2), p₃ = p₂·(n₁−3)/(n−3),
//! N_s = Σ_{i≠j} a_ij a_ji (ordered pairs that are each other's neighbours)
//! and c_j = Σ_i a_ij (how often j is someone's neighbour):
//! * E[T_k] = k·n·p₁;
//! * S₂ = kn + N_s, S₃ = nk(k−1) + Σ_j c_j(c_j−1) + 2(k²n − N_s),
//!   S₄ = (kn)² − S₂ − S₃;
//! * Var[T_k] = S₂p₁ + S₃p₂ + S₄p₃ − (knp₁)².
//!
//! z_k = (T_k − E)/√Var, with a one-sided normal p = P(Z ≥ z_k) (an
//! approximation, poorer for few cases), and the Monte Carlo p of m
//! relabellings, p = (1 + #{T*_k ≥ T_k})/(m + 1) (rank p, ties counted
//! against the data). Relabelling j chooses its n₁ cases from its own
//! stream `stream_rng(seed, j)` (with [`LabelSets::random`], the random
//! labelling test's draw), so a run does not depend on how it is split
//! into steps.
//!
//! **Several k at once.** A Monte Carlo test on max_k z_k (the largest
//! standardised T_k over k = 1 … K, each standardised with its exact null
//! moments above), with the same rank p. This combination is common
//! practice, not a rule of the paper; it makes one test of "some k".
//!
//! **Ties.** The neighbour lists are built once, from the locations only
//! ([`GridIndex::k_nearest_ranked`]): other points are ordered by distance,
//! and at equal distance by a random order of all the pooled points drawn
//! from the seed (stream `u64::MAX`, never a relabelling's). Points at the
//! same address are each other's nearest neighbours (distance 0), and with
//! more than k of them stacked, the random order picks which k count. The
//! order is independent of the labels (ordering by the file position
//! would not be: with cases listed first, stacked cases would be one
//! another's neighbours by construction), so the relabelling test stays
//! exact; every point has exactly k neighbours, so the moments hold. A
//! layout without ties gives the same T_k for every seed; with ties, T_k
//! can move a little with the seed, and the result says how many points
//! had a tie decided.
//!
//! **Cost.** Neighbour lists O(n log n)-ish with the grid index, memory
//! n·K indices; moments O(n·K²); each relabelling O(n₁·K) (a walk over the
//! cases' fixed lists, accumulating every k at once).
//!
//! # Examples
//! ```
//! use cloister::risk::nearest::{NearestJob, NearestOptions};
//! // Four cases in a tight group, eight controls spread out.
//! let cx = [0.0, 1.0, 0.0, 1.0];
//! let cy = [0.0, 0.0, 1.0, 1.0];
//! let kx: Vec<f64> = (0..8).map(|i| 50.0 + 40.0 * i as f64).collect();
//! let ky = vec![30.0; 8];
//! let o = NearestOptions { k_max: 3, n_sim: 99, seed: 1, ..Default::default() };
//! let r = NearestJob::new((&cx, &cy), (&kx, &ky), &o).unwrap().finish().unwrap();
//! assert_eq!(r.rows[0].t, 4); // each case's nearest neighbour is a case
//! assert_eq!(r.rows[2].t, 12);
//! assert!(r.combined.p_value <= 0.05);
//! ```

use crate::distance::csr::stream_rng;
use crate::distance::verdict::fmt_p;
use crate::error::AnalysisError;
use crate::index::{GridIndex, RankedNeighbours};
use crate::risk::LabelSets;
use rand::seq::SliceRandom;
use serde::{Deserialize, Serialize};
use statrs::distribution::{ContinuousCDF, Normal};

/// Options of the k-nearest-neighbour test (`nearestCasesStart` in the JS
/// API): the one home of their defaults and limits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct NearestOptions {
    /// Largest number of neighbours K: the test is run for k = 1 … K.
    pub k_max: usize,
    /// Random relabellings.
    pub n_sim: usize,
    /// Seed of the relabellings and of the order that breaks ties.
    pub seed: u64,
    /// Level at which the verdict calls a p-value small.
    pub alpha: f64,
    /// Compare two categories of the events: this one as the cases …
    pub cases_category: Option<String>,
    /// … and this one as the controls (`None`: all other categories).
    pub controls_category: Option<String>,
}

impl Default for NearestOptions {
    fn default() -> Self {
        NearestOptions {
            k_max: 10,
            n_sim: 999,
            seed: 0,
            alpha: 0.05,
            cases_category: None,
            controls_category: None,
        }
    }
}

/// Largest K offered (memory n·K; the moments cost n·K²).
pub const K_MAX_LIMIT: usize = 50;

impl crate::params::Params for NearestOptions {
    const NAME: &'static str = "nearestCasesStart";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::Field;
        vec![
            Field::integer(
                "k_max",
                "largest number of nearest neighbours: the test runs for k = 1 to this",
            )
            .range(1.0, K_MAX_LIMIT as f64),
            Field::integer("n_sim", "random relabellings of cases and controls").range(1.0, 9999.0),
            Field::seed("seed of the relabellings and of the order that breaks ties"),
            Field::number("alpha", None, "level at which the verdict calls a p-value small")
                .above(0.0, Some(0.5)),
            Field::text(
                "cases_category",
                "compare two categories of the events: this one as the cases; empty = the events against the population file",
            )
            .optional(),
            Field::text(
                "controls_category",
                "with cases_category: this category as the controls; empty = all other categories",
            )
            .optional(),
        ]
    }
    fn check(&self) -> Result<(), AnalysisError> {
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
        Ok(())
    }
}

/// The stream of the random order that breaks ties between neighbours at
/// the same distance (no relabelling uses it: they are 0 … n_sim − 1).
pub const TIE_STREAM: u64 = u64::MAX;

/// The random order of `n` points that breaks distance ties for `seed`:
/// `rank[i]` is point i's place in it.
pub fn tie_ranks(n: usize, seed: u64) -> Vec<u32> {
    let mut order: Vec<u32> = (0..n as u32).collect();
    order.shuffle(&mut stream_rng(seed, TIE_STREAM));
    let mut rank = vec![0u32; n];
    for (place, &i) in order.iter().enumerate() {
        rank[i as usize] = place as u32;
    }
    rank
}

/// Exact mean and variance of T_k under random labelling of `n1` cases
/// among the points of `nb`, for k = 1 … `nb.k` (see the module docs).
pub fn null_moments(nb: &RankedNeighbours, n1: usize) -> Vec<(f64, f64)> {
    let kk = nb.k;
    let n = nb.ids.len().checked_div(kk).unwrap_or(0);
    let (nf, n1f) = (n as f64, n1 as f64);
    let ratio = |a: f64, b: f64| if a <= 0.0 || b <= 0.0 { 0.0 } else { a / b };
    let p1 = ratio(n1f, nf) * ratio(n1f - 1.0, nf - 1.0);
    let p2 = p1 * ratio(n1f - 2.0, nf - 2.0);
    let p3 = p2 * ratio(n1f - 3.0, nf - 3.0);
    // Mutual pairs: (i, j) with j at place p in i's list and i at place q in
    // j's are mutual for every k > max(p, q).
    let mut mutual_from = vec![0u64; kk];
    for i in 0..n {
        for p in 0..kk {
            let j = nb.ids[i * kk + p] as usize;
            if let Some(q) = nb.ids[j * kk..(j + 1) * kk]
                .iter()
                .position(|&v| v as usize == i)
            {
                mutual_from[p.max(q)] += 1;
            }
        }
    }
    let mut c = vec![0u64; n];
    let (mut sum_cc, mut ns) = (0u64, 0u64);
    (1..=kk)
        .map(|k| {
            // Adding place k − 1 of every list: c_j(c_j − 1) grows by 2c_j.
            for i in 0..n {
                let j = nb.ids[i * kk + k - 1] as usize;
                sum_cc += 2 * c[j];
                c[j] += 1;
            }
            ns += mutual_from[k - 1];
            let (kf, nsf) = (k as f64, ns as f64);
            let kn = kf * nf;
            let s2 = kn + nsf;
            let s3 = nf * kf * (kf - 1.0) + sum_cc as f64 + 2.0 * (kf * kf * nf - nsf);
            let s4 = kn * kn - s2 - s3;
            let mean = kn * p1;
            let var = (s2 * p1 + s3 * p2 + s4 * p3 - mean * mean).max(0.0);
            (mean, var)
        })
        .collect()
}

/// T_1 … T_K for the labelling `is_case` (indexed like the points of
/// `nb`), added into `out` (length K): each case walks its list once.
pub fn add_t_statistics(nb: &RankedNeighbours, is_case: &[bool], out: &mut [u64]) {
    let kk = nb.k;
    for (i, _) in is_case.iter().enumerate().filter(|(_, &c)| c) {
        let mut cum = 0u64;
        for (p, &j) in nb.ids[i * kk..(i + 1) * kk].iter().enumerate() {
            cum += u64::from(is_case[j as usize]);
            out[p] += cum;
        }
    }
}

/// What the test says, in the page's words.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NearestOutcome {
    /// The combined test does not reject.
    ConsistentWithPopulation,
    /// Cases have more cases among their nearest neighbours than chance.
    MoreCaseNeighbours,
}

/// One k of the test.
#[derive(Debug, Clone, Serialize)]
pub struct NearestRow {
    pub k: usize,
    /// T_k of the data.
    pub t: u64,
    /// Its exact mean and variance under random labelling.
    pub expected: f64,
    pub variance: f64,
    /// (T_k − expected)/√variance; `None` when the variance is 0.
    pub z: Option<f64>,
    /// One-sided normal p, P(Z ≥ z); `None` with z.
    pub p_normal: Option<f64>,
    /// Rank p of the relabellings.
    pub p_value: f64,
    /// Relabellings with T*_k ≥ T_k.
    pub at_least_as_extreme: usize,
}

/// The combined test over k = 1 … K: the largest z_k against the same
/// maximum in each relabelling.
#[derive(Debug, Clone, Serialize)]
pub struct CombinedTest {
    /// max_k z_k of the data (`None` when no k has a positive variance).
    pub max_z: Option<f64>,
    /// The k where it is reached (the smallest, at equal z).
    pub at_k: Option<usize>,
    pub p_value: f64,
    pub at_least_as_extreme: usize,
}

/// Result of the k-nearest-neighbour test.
#[derive(Debug, Clone, Serialize)]
pub struct NearestResult {
    pub rows: Vec<NearestRow>,
    pub combined: CombinedTest,
    pub k_max: usize,
    pub n_sim: usize,
    pub seed: u64,
    pub alpha: f64,
    pub n_cases: usize,
    pub n_controls: usize,
    /// Points sharing their exact location with another point.
    pub stacked_points: usize,
    /// Points whose neighbours (for some k ≤ K) the random order chose
    /// among points at the same distance.
    pub ties_decided: usize,
    pub outcome: NearestOutcome,
    /// The k with a relabelling p at or below alpha.
    pub small_p_k: Vec<usize>,
    pub verdict: String,
    pub caveats: Vec<String>,
    pub warnings: Vec<String>,
}

/// Relabellings drawn per call of [`LabelSets::random`].
const PER_DRAW: usize = 64;

/// What a helper worker needs to run relabellings of a Cuzick–Edwards
/// test ([`NearestJob::share`]).
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct NearestShare {
    pub nb: RankedNeighbours,
    pub n1: usize,
    pub seed: u64,
    pub n_sim: usize,
    pub t_obs: Vec<u64>,
    pub moments: Vec<(f64, f64)>,
    pub max_z_obs: Option<f64>,
}

impl NearestShare {
    /// Counts of relabellings `from..to` (at most `n_sim`) at least as
    /// extreme as the data, as [`NearestJob::simulate_range`].
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<usize> {
        NearestShareRef {
            nb: &self.nb,
            n1: self.n1,
            seed: self.seed,
            n_sim: self.n_sim,
            t_obs: &self.t_obs,
            moments: &self.moments,
            max_z_obs: self.max_z_obs,
        }
        .exceedances(from, to)
    }
}

/// The fixed part of a run, borrowed: the one place relabellings are run.
struct NearestShareRef<'a> {
    nb: &'a RankedNeighbours,
    n1: usize,
    seed: u64,
    n_sim: usize,
    t_obs: &'a [u64],
    moments: &'a [(f64, f64)],
    max_z_obs: Option<f64>,
}

impl NearestShareRef<'_> {
    /// For relabellings `from..to`: how many have T_k at least the data's,
    /// per k, then how many have the largest z at least the data's.
    /// Relabelling j depends only on the seed and j.
    fn exceedances(&self, from: usize, to: usize) -> Vec<usize> {
        let to = to.min(self.n_sim);
        let kk = self.t_obs.len();
        let n = self.nb.ids.len().checked_div(self.nb.k).unwrap_or(0);
        let mut counts = vec![0usize; kk + 1];
        let mut is_case = vec![false; n];
        let mut t = vec![0u64; kk];
        let mut start = from;
        while start < to {
            let end = (start + PER_DRAW).min(to);
            let sets = LabelSets::random(n, self.n1, self.seed, start, end);
            for set in &sets.sets {
                is_case.iter_mut().for_each(|c| *c = false);
                for &i in set {
                    is_case[i as usize] = true;
                }
                t.iter_mut().for_each(|v| *v = 0);
                add_t_statistics(self.nb, &is_case, &mut t);
                for (g, (a, b)) in counts.iter_mut().zip(t.iter().zip(self.t_obs)) {
                    *g += usize::from(a >= b);
                }
                if let (Some(obs), Some((z, _))) = (self.max_z_obs, max_z(&t, self.moments)) {
                    counts[kk] += usize::from(z >= obs);
                }
            }
            start = end;
        }
        counts
    }
}

/// A k-nearest-neighbour test that can be advanced in batches (progress
/// and Cancel between them). Relabelling j depends only on the seed and j.
pub struct NearestJob {
    nb: RankedNeighbours,
    n1: usize,
    opts: NearestOptions,
    t_obs: Vec<u64>,
    moments: Vec<(f64, f64)>,
    max_z_obs: Option<f64>,
    ge: Vec<usize>,
    ge_max: usize,
    done: usize,
    stacked: usize,
    is_case: Vec<bool>,
    names: (String, String),
}

impl NearestJob {
    /// Names the two groups in the verdict (default "cases" and "the
    /// population").
    pub fn name_groups(&mut self, cases: &str, controls: &str) {
        self.names = (cases.to_string(), controls.to_string());
    }

    /// Pools `cases` and `controls` (points as (x, y) lists, metres; cases
    /// first), builds the neighbour lists and computes T_k of the data.
    pub fn new(
        cases: (&[f64], &[f64]),
        controls: (&[f64], &[f64]),
        opts: &NearestOptions,
    ) -> Result<NearestJob, AnalysisError> {
        use crate::params::Params;
        opts.validate_in(None)?;
        let (n1, n0) = (cases.0.len(), controls.0.len());
        if cases.1.len() != n1 || controls.1.len() != n0 {
            return Err(crate::params::bad(
                "points",
                "coordinate lists differ in length",
            ));
        }
        if n1 < 2 || n0 < 1 {
            return Err(AnalysisError::BadParameter {
                name: "points".into(),
                detail: format!(
                    "the test needs at least 2 cases and 1 control; there are {n1} cases and {n0} controls"
                ),
            });
        }
        let n = n1 + n0;
        if n <= opts.k_max {
            return Err(crate::params::bad(
                "k_max",
                format!(
                    "is {} but there are only {n} points in all: each needs that many other points as neighbours (use at most {})",
                    opts.k_max,
                    n - 1
                ),
            ));
        }
        let x: Vec<f64> = cases.0.iter().chain(controls.0).copied().collect();
        let y: Vec<f64> = cases.1.iter().chain(controls.1).copied().collect();
        let index = GridIndex::new(&x, &y);
        let rank = tie_ranks(n, opts.seed);
        let nb = index
            .k_nearest_ranked(opts.k_max, &rank)
            .ok_or_else(|| crate::params::bad("points", "some points have no finite neighbours"))?;
        let stacked = index.multiplicities().iter().filter(|&&m| m > 1).count();
        let moments = null_moments(&nb, n1);
        let is_case: Vec<bool> = (0..n).map(|i| i < n1).collect();
        let mut t_obs = vec![0u64; opts.k_max];
        add_t_statistics(&nb, &is_case, &mut t_obs);
        let max_z_obs = max_z(&t_obs, &moments).map(|(z, _)| z);
        Ok(NearestJob {
            nb,
            n1,
            ge: vec![0; opts.k_max],
            ge_max: 0,
            opts: opts.clone(),
            t_obs,
            moments,
            max_z_obs,
            done: 0,
            stacked,
            is_case,
            names: ("cases".into(), "the population".into()),
        })
    }

    /// T_1 … T_K of the data.
    pub fn observed(&self) -> &[u64] {
        &self.t_obs
    }

    /// The neighbour lists (fixed for the whole run).
    pub fn neighbours(&self) -> &RankedNeighbours {
        &self.nb
    }

    pub fn done(&self) -> usize {
        self.done
    }

    pub fn n_cases(&self) -> usize {
        self.n1
    }

    pub fn n_controls(&self) -> usize {
        self.is_case.len() - self.n1
    }

    pub fn total(&self) -> usize {
        self.opts.n_sim
    }

    /// Runs up to `k` more relabellings; returns how many are done.
    pub fn run_batch(&mut self, k: usize) -> usize {
        let to = (self.done + k).min(self.opts.n_sim);
        let counts = self.share_ref().exceedances(self.done, to);
        self.add_counts(&counts);
        self.done = to;
        self.done
    }

    /// The part of the run relabellings need (fixed for the whole run).
    fn share_ref(&self) -> NearestShareRef<'_> {
        NearestShareRef {
            nb: &self.nb,
            n1: self.n1,
            seed: self.opts.seed,
            n_sim: self.opts.n_sim,
            t_obs: &self.t_obs,
            moments: &self.moments,
            max_z_obs: self.max_z_obs,
        }
    }

    fn add_counts(&mut self, counts: &[usize]) {
        for (g, c) in self.ge.iter_mut().zip(counts) {
            *g += c;
        }
        self.ge_max += counts.get(self.ge.len()).copied().unwrap_or(0);
    }

    /// What a helper worker needs to run relabellings of this test: the
    /// neighbour lists (point indices only, no location), the data's T_k,
    /// the null moments and the seed.
    pub fn share(&self) -> NearestShare {
        let r = self.share_ref();
        NearestShare {
            nb: r.nb.clone(),
            n1: r.n1,
            seed: r.seed,
            n_sim: r.n_sim,
            t_obs: r.t_obs.to_vec(),
            moments: r.moments.to_vec(),
            max_z_obs: r.max_z_obs,
        }
    }

    /// Counts of relabellings `from..to` at least as extreme as the data,
    /// per k and then for the combined test (K + 1 numbers); the job is not
    /// changed.
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<usize> {
        self.share_ref().exceedances(from, to)
    }

    /// Adds the counts of relabellings `from..` computed elsewhere; `from`
    /// must equal [`NearestJob::done`]. Returns the number done.
    pub fn add_simulated(
        &mut self,
        from: usize,
        to: usize,
        counts: &[usize],
    ) -> Result<usize, AnalysisError> {
        if from != self.done
            || to < from
            || to > self.opts.n_sim
            || counts.len() != self.ge.len() + 1
        {
            return Err(crate::params::bad(
                "relabelled counts",
                format!(
                    "expected {} counts for relabellings starting at {}",
                    self.ge.len() + 1,
                    self.done
                ),
            ));
        }
        self.add_counts(counts);
        self.done = to;
        Ok(self.done)
    }

    /// Finishes the remaining relabellings and summarises.
    pub fn finish(mut self) -> Result<NearestResult, AnalysisError> {
        self.run_batch(self.opts.n_sim - self.done);
        let m = self.opts.n_sim;
        let rank_p = |ge: usize| (1 + ge) as f64 / (m + 1) as f64;
        let normal =
            Normal::new(0.0, 1.0).map_err(|e| crate::params::bad("normal", e.to_string()))?;
        let rows: Vec<NearestRow> = (0..self.opts.k_max)
            .map(|i| {
                let (mean, var) = self.moments[i];
                let z = z_of(self.t_obs[i], mean, var);
                NearestRow {
                    k: i + 1,
                    t: self.t_obs[i],
                    expected: mean,
                    variance: var,
                    z,
                    p_normal: z.map(|z| normal.sf(z)),
                    p_value: rank_p(self.ge[i]),
                    at_least_as_extreme: self.ge[i],
                }
            })
            .collect();
        let at = max_z(&self.t_obs, &self.moments);
        let combined = CombinedTest {
            max_z: at.map(|a| a.0),
            at_k: at.map(|a| a.1 + 1),
            // With no variance anywhere every labelling gives the same T:
            // nothing to test, p = 1.
            p_value: if at.is_some() {
                rank_p(self.ge_max)
            } else {
                1.0
            },
            at_least_as_extreme: if at.is_some() { self.ge_max } else { m },
        };
        let alpha = self.opts.alpha;
        let small_p_k: Vec<usize> = rows
            .iter()
            .filter(|r| r.p_value <= alpha)
            .map(|r| r.k)
            .collect();
        let outcome = if combined.p_value <= alpha {
            NearestOutcome::MoreCaseNeighbours
        } else {
            NearestOutcome::ConsistentWithPopulation
        };
        let verdict = verdict_text(
            outcome,
            &combined,
            &small_p_k,
            self.opts.k_max,
            m,
            alpha,
            (&self.names.0, &self.names.1),
        );
        let n = self.is_case.len();
        let mut warnings = Vec::new();
        if self.nb.tie_decided > 0 {
            warnings.push(format!(
                "{} of the {n} points have neighbours at exactly the same distance (often the same address: {} points share theirs); which of them count is decided by a random order drawn from the seed, so T can change a little with the seed.",
                self.nb.tie_decided, self.stacked
            ));
        }
        if self.n1 < 10 {
            warnings.push(
                "Fewer than 10 cases: the normal p is a rough guide only; use the relabelling p."
                    .into(),
            );
        }
        Ok(NearestResult {
            rows,
            combined,
            k_max: self.opts.k_max,
            n_sim: m,
            seed: self.opts.seed,
            alpha,
            n_cases: self.n1,
            n_controls: n - self.n1,
            stacked_points: self.stacked,
            ties_decided: self.nb.tie_decided,
            outcome,
            small_p_k,
            verdict,
            caveats: vec![
                "The controls stand for the population at risk: if they come from a different population, or their addresses are placed differently (geocoding, rounding), the test measures that difference too.".into(),
                "More cases among cases' neighbours says cases sit closer to one another than the population does; it does not say why, or where.".into(),
                "Each row's p is for that k alone; looking at many k and picking the smallest p overstates the evidence: the combined p is the one test over all of them.".into(),
            ],
            warnings,
        })
    }
}

/// Runs a whole test at once (no progress reports).
pub fn nearest_cases(
    cases: (&[f64], &[f64]),
    controls: (&[f64], &[f64]),
    opts: &NearestOptions,
) -> Result<NearestResult, AnalysisError> {
    NearestJob::new(cases, controls, opts)?.finish()
}

fn z_of(t: u64, mean: f64, var: f64) -> Option<f64> {
    (var > 0.0).then(|| (t as f64 - mean) / var.sqrt())
}

/// The largest z_k and its (0-based) k index; `None` when no k has a
/// positive variance.
fn max_z(t: &[u64], moments: &[(f64, f64)]) -> Option<(f64, usize)> {
    let mut best: Option<(f64, usize)> = None;
    for (i, (&t, &(mean, var))) in t.iter().zip(moments).enumerate() {
        if let Some(z) = z_of(t, mean, var) {
            if best.is_none_or(|(b, _)| z > b) {
                best = Some((z, i));
            }
        }
    }
    best
}

/// "1", "1–3", "1–3, 5 and 8".
pub fn k_list(ks: &[usize]) -> String {
    let mut parts: Vec<String> = Vec::new();
    let mut i = 0;
    while i < ks.len() {
        let mut j = i;
        while j + 1 < ks.len() && ks[j + 1] == ks[j] + 1 {
            j += 1;
        }
        parts.push(if j == i {
            ks[i].to_string()
        } else {
            format!("{}\u{2013}{}", ks[i], ks[j])
        });
        i = j + 1;
    }
    crate::distance::verdict::plain_list(&parts)
}

fn verdict_text(
    outcome: NearestOutcome,
    combined: &CombinedTest,
    small: &[usize],
    k_max: usize,
    m: usize,
    alpha: f64,
    (cases, controls): (&str, &str),
) -> String {
    let mut first = cases.chars();
    #[allow(non_snake_case)]
    let Cases: String = first
        .next()
        .map(|c| c.to_uppercase().chain(first).collect())
        .unwrap_or_default();
    let over = if k_max == 1 {
        "k = 1".to_string()
    } else {
        format!("k = 1\u{2013}{k_max}")
    };
    let test = format!(
        "combined test over {over}: p = {}, {m} relabellings",
        fmt_p(combined.p_value)
    );
    match outcome {
        NearestOutcome::MoreCaseNeighbours if small.is_empty() => format!(
            "{Cases} have more {cases} among their nearest neighbours than {controls} would give, taken over {over} together; no single k reaches p \u{2264} {alpha} on its own ({test})."
        ),
        NearestOutcome::MoreCaseNeighbours => format!(
            "{Cases} have more {cases} among their nearest neighbours than {controls} would give, for k = {} ({test}).",
            k_list(small)
        ),
        NearestOutcome::ConsistentWithPopulation => format!(
            "Consistent with {controls}: {cases} have about as many {cases} among their nearest neighbours as {controls} would give ({test})."
        ),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Two far-apart pairs, the cases one pair: T_1 = 2, its maximum, which
    /// a relabelling reaches whenever it picks either pair; those ties count
    /// against the data (rank p with "≥").
    #[test]
    fn relabellings_that_tie_the_data_count_against_it() {
        let o = NearestOptions {
            k_max: 1,
            n_sim: 300,
            seed: 8,
            ..Default::default()
        };
        let r = nearest_cases(
            (&[0.0, 1.0], &[0.0, 0.0]),
            (&[100.0, 101.0], &[0.0, 0.0]),
            &o,
        )
        .unwrap();
        assert_eq!(r.rows[0].t, 2);
        let sets = LabelSets::random(4, 2, 8, 0, 300);
        let ties = sets
            .sets
            .iter()
            .filter(|s| s[..] == [0, 1] || s[..] == [2, 3])
            .count();
        assert!(ties > 50 && ties < 150, "{ties}");
        assert_eq!(r.rows[0].at_least_as_extreme, ties);
        assert_eq!(r.rows[0].p_value, (1 + ties) as f64 / 301.0);
        assert_eq!(r.combined.at_least_as_extreme, ties);
        // E = 1·2·1/3, Var from the moments: z = (2 − 2/3)/sd.
        assert!((r.rows[0].expected - 2.0 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn k_list_reads_well() {
        assert_eq!(k_list(&[1]), "1");
        assert_eq!(k_list(&[1, 2, 3]), "1\u{2013}3");
        assert_eq!(k_list(&[1, 2, 3, 5, 8]), "1\u{2013}3, 5 and 8");
    }

    #[test]
    fn refuses_too_few_points_and_too_large_k() {
        let o = NearestOptions {
            k_max: 4,
            ..Default::default()
        };
        let (a, b) = ([0.0, 1.0], [0.0, 0.0]);
        let (c, d) = ([5.0, 6.0], [0.0, 0.0]);
        let e = NearestJob::new((&a, &b), (&c, &d), &o).err().unwrap();
        assert!(e.to_string().contains("k_max"), "{e}");
        let e = NearestJob::new((&a[..1], &b[..1]), (&c, &d), &NearestOptions::default())
            .err()
            .unwrap();
        assert!(e.to_string().contains("at least 2 cases"), "{e}");
    }

    #[test]
    fn unknown_and_out_of_range_options_are_refused() {
        use crate::params::Params;
        let bad = NearestOptions {
            k_max: 0,
            ..Default::default()
        };
        assert!(bad.validate_in(None).is_err());
        let bad = NearestOptions {
            k_max: K_MAX_LIMIT + 1,
            ..Default::default()
        };
        assert!(bad.validate_in(None).is_err());
        let bad = NearestOptions {
            n_sim: 0,
            ..Default::default()
        };
        assert!(bad.validate_in(None).is_err());
        let bad = NearestOptions {
            controls_category: Some("a".into()),
            ..Default::default()
        };
        assert!(bad.validate_in(None).is_err());
        let v: Result<NearestOptions, _> = serde_json::from_str(r#"{"k":3}"#);
        assert!(v.is_err());
    }
}
