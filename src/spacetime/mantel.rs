//! The Mantel test of space–time interaction (Mantel 1967).
//!
//! **Reference.** Mantel, N. (1967). "The detection of disease clustering
//! and a generalized regression approach". *Cancer Research* 27(2),
//! 209–220.
//!
//! **Statistic.** Over the n(n−1)/2 unordered pairs of events,
//! Z = Σ_{i<j} a_ij·b_ij, with a_ij a transform of the distance d_ij (m) and
//! b_ij one of the time between them u_ij = |t_i − t_j| (days):
//! * `raw`: a = d, b = u;
//! * `reciprocal` (Mantel's proposal, so that close pairs dominate):
//!   a = 1/(d + c₁), b = 1/(u + c₂). The constants keep a pair at the same
//!   place or on the same day finite. Defaults c₁ = 1 m and c₂ = 1 day: the
//!   smallest unit each separation is usually recorded in (our choice;
//!   Mantel leaves the constant to the user).
//!
//! **Null hypothesis.** Which time goes with which place is arbitrary: the
//! times are permuted among the locations ([`super::permutation`]).
//!
//! **Direction.** Z is large when the two separations go together: pairs
//! close in space close in time and pairs far apart far apart. With both
//! separations raw, or both reciprocal, that is interaction, and the test
//! is the upper tail of Z. With one raw and one reciprocal, close in space
//! and close in time makes Z *small*, so interaction is the lower tail. The
//! result reports both tails and names the one the verdict uses
//! ([`MantelResult::interaction_tail`]).
//!
//! **Exact permutation moments** (derived by counting the distinct indices
//! in pairs of ordered pairs; checked against the enumeration of all
//! permutations in the tests). For Z′ = Σ_{i≠j} a_ij b_ij = 2Z, with
//! S₀ = Σ_{i≠j} a_ij, S₁ = Σ_{i≠j} a_ij², S₂ = Σ_i (Σ_{j≠i} a_ij)² and T₀, T₁,
//! T₂ the same sums of b, and (n)_k = n(n−1)…(n−k+1):
//! * E[Z′] = S₀T₀/(n)₂;
//! * E[Z′²] = 2S₁T₁/(n)₂ + 4(S₂−S₁)(T₂−T₁)/(n)₃
//!   + (S₀² + 2S₁ − 4S₂)(T₀² + 2T₁ − 4T₂)/(n)₄.
//!
//! z = (Z − E[Z])/√Var[Z] with a normal p per tail (an approximation), and
//! the rank p of m permutations, p_upper = (1 + #{Z* ≥ Z})/(m + 1),
//! p_lower = (1 + #{Z* ≤ Z})/(m + 1).
//!
//! **Cost.** Every permutation visits all pairs: O(n²) per pass, with a
//! batch of up to [`BATCH`] permutations per pass. For each event the
//! transformed distances to the later events are computed once per pass
//! into a row, then each permutation's times run over that row in a
//! branch-free single-precision multiply–add with independent partial sums
//! (which the compiler vectorises, simd128 in the page). Runs are refused
//! above [`MAX_EVENTS`] events (one pass must stay short enough for Cancel
//! to answer within half a second).
//!
//! **Precision.** Times are taken relative to the first one; coordinate
//! differences are taken in double precision, then distances, transforms
//! and the row sums work in single precision (8 partial sums per row,
//! added in double).
//! The data's Z comes from the same loop as the permutations' (so a tie
//! with the data is a tie), and its relative rounding is about 1e-6.
//!
//! # Examples
//! ```
//! use cloister::spacetime::{mantel::{MantelJob, MantelOptions}, TimedEvents};
//! // Two bursts: four events in one corner in the first days, four in the
//! // other corner weeks later.
//! let x = vec![0.0, 10.0, 0.0, 10.0, 900.0, 910.0, 900.0, 910.0];
//! let y = vec![0.0, 0.0, 10.0, 10.0, 900.0, 900.0, 910.0, 910.0];
//! let t = vec![1.0, 2.0, 3.0, 4.0, 60.0, 61.0, 62.0, 63.0];
//! let ev = TimedEvents::from_xyt(x, y, t).unwrap();
//! let o = MantelOptions { n_sim: 199, seed: 3, ..Default::default() };
//! let mut job = MantelJob::new(&ev, &o).unwrap();
//! job.run_batch(199);
//! let r = job.finish().unwrap();
//! assert!(r.z_score > 2.0);
//! assert!(r.p_value <= 0.05);
//! ```

use crate::distance::verdict::fmt_p;
use crate::error::AnalysisError;
use crate::params::{Field, Params};
use crate::spacetime::{permutation, time_fields, TimedEvents, UncertainTimes};
use serde::{Deserialize, Serialize};
use statrs::distribution::{ContinuousCDF, Normal};

/// Largest number of events the test accepts.
pub const MAX_EVENTS: usize = 10_000;
/// Permutations per pass over the pairs.
pub const BATCH: usize = 32;

/// How a separation enters the statistic.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Transform {
    /// The separation itself (m or days).
    Raw,
    /// 1/(separation + constant): close pairs weigh most (Mantel 1967).
    #[default]
    Reciprocal,
}

/// Options of the Mantel test (`mantelStart` in the JS API).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct MantelOptions {
    pub space_transform: Transform,
    pub time_transform: Transform,
    /// c₁ of the reciprocal distance 1/(d + c₁), metres.
    pub space_constant_m: f64,
    /// c₂ of the reciprocal time 1/(u + c₂), days.
    pub time_constant_days: f64,
    pub n_sim: usize,
    pub seed: u64,
    pub alpha: f64,
    pub uncertain_times: UncertainTimes,
    pub max_window_days: f64,
}

impl Default for MantelOptions {
    fn default() -> Self {
        MantelOptions {
            space_transform: Transform::Reciprocal,
            time_transform: Transform::Reciprocal,
            space_constant_m: 1.0,
            time_constant_days: 1.0,
            n_sim: 999,
            seed: 0,
            alpha: 0.05,
            uncertain_times: UncertainTimes::LeaveOut,
            max_window_days: super::events::DEFAULT_MAX_WINDOW_DAYS,
        }
    }
}

impl Params for MantelOptions {
    const NAME: &'static str = "mantelStart";
    fn fields() -> Vec<Field> {
        let mut f = vec![
            Field::choice(
                "space_transform",
                &["raw", "reciprocal"],
                "how the distance between two events enters: raw = the distance in metres; reciprocal = 1/(distance + space_constant_m), so that close pairs weigh most",
            ),
            Field::choice(
                "time_transform",
                &["raw", "reciprocal"],
                "how the time between two events enters: raw = the days between them; reciprocal = 1/(days + time_constant_days)",
            ),
            Field::number(
                "space_constant_m",
                Some("m"),
                "added to each distance before the reciprocal (keeps events at the same place finite)",
            )
            .range(0.001, 100_000.0),
            Field::number(
                "time_constant_days",
                Some("days"),
                "added to each time difference before the reciprocal (keeps events on the same day finite)",
            )
            .range(0.001, 3650.0),
            Field::integer("n_sim", "random permutations of the times among the places")
                .range(1.0, 9999.0),
            Field::seed("seed of the permutations"),
            Field::number("alpha", None, "level at which the verdict calls a p-value small")
                .above(0.0, Some(0.5)),
        ];
        f.extend(time_fields());
        f
    }
}

/// Exact permutation mean and variance of Z = Σ_{i<j} a_ij b_ij from the
/// sums of the module docs: `sa = (S₀, S₁, S₂)`, `sb = (T₀, T₁, T₂)`, over
/// ordered pairs. Needs n ≥ 4.
pub fn exact_moments(n: usize, sa: (f64, f64, f64), sb: (f64, f64, f64)) -> (f64, f64) {
    let nf = n as f64;
    let n2 = nf * (nf - 1.0);
    let n3 = n2 * (nf - 2.0);
    let n4 = n3 * (nf - 3.0);
    let (s0, s1, s2) = sa;
    let (t0, t1, t2) = sb;
    let mean2 = s0 * t0 / n2;
    let sq2 = 2.0 * s1 * t1 / n2
        + 4.0 * (s2 - s1) * (t2 - t1) / n3
        + (s0 * s0 + 2.0 * s1 - 4.0 * s2) * (t0 * t0 + 2.0 * t1 - 4.0 * t2) / n4;
    let mut var2 = (sq2 - mean2 * mean2).max(0.0);
    // A variance at the level of the rounding of E[Z′²] is 0 (every
    // permutation gives the same Z, e.g. all events on one day).
    if var2 <= 1e-12 * sq2.abs() {
        var2 = 0.0;
    }
    (mean2 / 2.0, var2 / 4.0)
}

/// The fixed part of a run: locations, times (relative to the first) and
/// the transforms. Enough to compute any permutation's Z.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct MantelShare {
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    /// Days since the first event's time.
    pub t: Vec<f64>,
    pub options: MantelOptions,
}

#[inline(always)]
fn space_value(tr: Transform, c: f64, d: f64) -> f64 {
    match tr {
        Transform::Raw => d,
        Transform::Reciprocal => 1.0 / (d + c),
    }
}

/// Lanes of the inner sums (independent partial sums the compiler keeps in
/// vector registers; their order is fixed, so a permutation's Z does not
/// depend on the batch it is computed in).
const LANES: usize = 8;

/// Z for each time vector of `tk` (one per permutation, each indexed by
/// event), into `out`. For each event i the transformed distances to the
/// events after it are computed once per pass (`a`), then each time vector
/// is a multiply–add over that row. `RECIP`: the time transform is the
/// reciprocal.
fn z_pass<const RECIP: bool>(share: &MantelShare, tk: &[Vec<f32>], out: &mut [f64]) {
    let (x, y) = (&share.x, &share.y);
    let n = x.len();
    let o = &share.options;
    let c1 = o.space_constant_m as f32;
    let c2 = o.time_constant_days as f32;
    let recip_space = o.space_transform == Transform::Reciprocal;
    let mut row = vec![0.0f32; n];
    for i in 0..n.saturating_sub(1) {
        let (xi, yi) = (x[i], y[i]);
        let a = &mut row[..n - i - 1];
        for ((aj, &xj), &yj) in a.iter_mut().zip(&x[i + 1..]).zip(&y[i + 1..]) {
            let (dx, dy) = ((xj - xi) as f32, (yj - yi) as f32);
            *aj = (dx * dx + dy * dy).sqrt();
        }
        if recip_space {
            for aj in a.iter_mut() {
                *aj = 1.0 / (*aj + c1);
            }
        }
        let a = &row[..n - i - 1];
        for (t, s) in tk.iter().zip(out.iter_mut()) {
            let ti = t[i];
            let tj = &t[i + 1..];
            let mut acc = [0.0f32; LANES];
            let (ac, ar) = (a.chunks_exact(LANES), a.chunks_exact(LANES).remainder());
            let (tc, tr) = (tj.chunks_exact(LANES), tj.chunks_exact(LANES).remainder());
            for (av, tv) in ac.zip(tc) {
                for l in 0..LANES {
                    let u = (ti - tv[l]).abs();
                    let g = if RECIP { 1.0 / (u + c2) } else { u };
                    acc[l] += av[l] * g;
                }
            }
            for (l, (&aj, &t)) in ar.iter().zip(tr).enumerate() {
                let u = (ti - t).abs();
                let g = if RECIP { 1.0 / (u + c2) } else { u };
                acc[l] += aj * g;
            }
            *s += acc.iter().map(|&v| v as f64).sum::<f64>();
        }
    }
}

impl MantelShare {
    /// Z of each time vector (each indexed by event).
    fn z_of(&self, tk: &[Vec<f32>]) -> Vec<f64> {
        let mut out = vec![0.0; tk.len()];
        match self.options.time_transform {
            Transform::Raw => z_pass::<false>(self, tk, &mut out),
            Transform::Reciprocal => z_pass::<true>(self, tk, &mut out),
        }
        out
    }

    /// Z of the data (the same loop as the permutations').
    pub fn z_observed(&self) -> f64 {
        let t: Vec<f32> = self.t.iter().map(|&v| v as f32).collect();
        self.z_of(&[t])[0]
    }

    /// Z of permutations `from..to` (each from its own stream), in order.
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<f64> {
        let to = to.min(self.options.n_sim);
        let mut out = Vec::with_capacity(to.saturating_sub(from));
        let mut j = from;
        while j < to {
            let b = (to - j).min(BATCH);
            let tk: Vec<Vec<f32>> = (j..j + b)
                .map(|k| {
                    permutation(self.t.len(), self.options.seed, k as u64)
                        .iter()
                        .map(|&src| self.t[src as usize] as f32)
                        .collect()
                })
                .collect();
            out.extend(self.z_of(&tk));
            j += b;
        }
        out
    }

    /// The moment sums (S₀, S₁, S₂) of the space transform and (T₀, T₁,
    /// T₂) of the time transform, over ordered pairs, in double precision.
    pub fn moment_sums(&self) -> ((f64, f64, f64), (f64, f64, f64)) {
        let n = self.x.len();
        let o = &self.options;
        let time = |u: f64| match o.time_transform {
            Transform::Raw => u,
            Transform::Reciprocal => 1.0 / (u + o.time_constant_days),
        };
        let mut ra = vec![0.0; n];
        let mut rb = vec![0.0; n];
        let (mut s1, mut t1) = (0.0, 0.0);
        for i in 0..n {
            for j in i + 1..n {
                let (dx, dy) = (self.x[j] - self.x[i], self.y[j] - self.y[i]);
                let a = space_value(
                    o.space_transform,
                    o.space_constant_m,
                    (dx * dx + dy * dy).sqrt(),
                );
                let b = time((self.t[j] - self.t[i]).abs());
                ra[i] += a;
                ra[j] += a;
                rb[i] += b;
                rb[j] += b;
                s1 += 2.0 * a * a;
                t1 += 2.0 * b * b;
            }
        }
        let s0: f64 = ra.iter().sum();
        let t0: f64 = rb.iter().sum();
        let s2: f64 = ra.iter().map(|v| v * v).sum();
        let t2: f64 = rb.iter().map(|v| v * v).sum();
        ((s0, s1, s2), (t0, t1, t2))
    }
}

/// Which tail of Z means interaction.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Tail {
    Upper,
    Lower,
}

/// What the test says.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum MantelOutcome {
    /// No evidence that events close in space are close in time.
    NoInteraction,
    /// Events close in space tend to be close in time.
    Interaction,
}

/// Result of the Mantel test.
#[derive(Debug, Clone, Serialize)]
pub struct MantelResult {
    pub n_events: usize,
    pub pairs: f64,
    /// Z = Σ_{i<j} a_ij b_ij of the data.
    pub statistic: f64,
    /// Exact permutation mean and variance of Z.
    pub expected: f64,
    pub variance: f64,
    /// (Z − mean)/SD; 0 when the variance is 0.
    pub z_score: f64,
    /// Pearson correlation of the two transformed separations over pairs.
    pub correlation: f64,
    pub p_normal_upper: f64,
    pub p_normal_lower: f64,
    /// Rank p of the permutations, each tail.
    pub p_upper: f64,
    pub p_lower: f64,
    /// The tail that means interaction, and its rank p.
    pub interaction_tail: Tail,
    pub p_value: f64,
    /// Permutations with Z* ≥ Z and Z* ≤ Z.
    pub at_least: usize,
    pub at_most: usize,
    /// Smallest and largest Z of the permutations.
    pub simulated_min: f64,
    pub simulated_max: f64,
    pub space_transform: Transform,
    pub time_transform: Transform,
    pub space_constant_m: f64,
    pub time_constant_days: f64,
    pub n_sim: usize,
    pub seed: u64,
    pub alpha: f64,
    pub times: super::events::TimeUseReport,
    pub outcome: MantelOutcome,
    pub verdict: String,
    pub caveats: Vec<String>,
}

/// A Mantel test advanced in batches (progress and Cancel between them).
pub struct MantelJob {
    share: MantelShare,
    z_obs: f64,
    mean: f64,
    var: f64,
    corr: f64,
    sims: Vec<f64>,
    report: super::events::TimeUseReport,
}

impl MantelJob {
    /// Checks the options, computes Z of the data and its exact moments.
    pub fn new(ev: &TimedEvents, opts: &MantelOptions) -> Result<MantelJob, AnalysisError> {
        opts.validate()?;
        let n = ev.len();
        if n < 4 {
            return Err(AnalysisError::TooFewPoints {
                needed: 4,
                found: n,
            });
        }
        if n > MAX_EVENTS {
            return Err(crate::params::bad(
                "events",
                format!(
                    "the Mantel test compares every pair of events in every permutation and accepts at most {MAX_EVENTS} events; {n} have a time. Use a part of the study area or of the period"
                ),
            ));
        }
        let t0 = ev.span().map_or(0.0, |s| s.0);
        let share = MantelShare {
            x: ev.x.clone(),
            y: ev.y.clone(),
            t: ev.t.iter().map(|&v| v - t0).collect(),
            options: opts.clone(),
        };
        let z_obs = share.z_observed();
        let (sa, sb) = share.moment_sums();
        let (mean, var) = exact_moments(n, sa, sb);
        // Pearson r over the N unordered pairs from the same sums (halved:
        // they are over ordered pairs).
        let np = (n * (n - 1) / 2) as f64;
        let (ma, mb) = (sa.0 / 2.0 / np, sb.0 / 2.0 / np);
        let va = sa.1 / 2.0 / np - ma * ma;
        let vb = sb.1 / 2.0 / np - mb * mb;
        let corr = if va > 0.0 && vb > 0.0 {
            ((z_obs / np - ma * mb) / (va * vb).sqrt()).clamp(-1.0, 1.0)
        } else {
            0.0
        };
        Ok(MantelJob {
            share,
            z_obs,
            mean,
            var,
            corr,
            sims: Vec::new(),
            report: ev.report(),
        })
    }

    pub fn total(&self) -> usize {
        self.share.options.n_sim
    }
    pub fn done(&self) -> usize {
        self.sims.len()
    }
    pub fn n_events(&self) -> usize {
        self.share.x.len()
    }
    pub fn observed(&self) -> f64 {
        self.z_obs
    }
    /// Exact permutation mean and variance of Z.
    pub fn moments(&self) -> (f64, f64) {
        (self.mean, self.var)
    }
    /// What a helper worker needs (locations, relative times, options).
    pub fn share(&self) -> &MantelShare {
        &self.share
    }

    /// Runs up to `k` more permutations; returns how many are done.
    pub fn run_batch(&mut self, k: usize) -> usize {
        let from = self.sims.len();
        let z = self.share.simulate_range(from, from + k);
        self.sims.extend(z);
        self.sims.len()
    }

    /// Z of permutations `from..to` computed elsewhere (a helper), added
    /// in order: `from` must equal [`MantelJob::done`].
    pub fn add_simulated(&mut self, from: usize, z: &[f64]) -> Result<usize, AnalysisError> {
        crate::params::piece_rows(
            "piece",
            "permutation",
            (from, self.sims.len(), self.total()),
            z.len(),
            1,
        )?;
        if z.iter().any(|v| !v.is_finite()) {
            return Err(crate::params::bad(
                "piece",
                "holds a value that is not a number",
            ));
        }
        self.sims.extend_from_slice(z);
        Ok(self.sims.len())
    }

    /// The result over the permutations run so far (at least one).
    pub fn finish(&self) -> Result<MantelResult, AnalysisError> {
        let m = self.sims.len();
        if m == 0 {
            return Err(crate::params::bad("n_sim", "no permutation has been run"));
        }
        let o = &self.share.options;
        let z = self.z_obs;
        let at_least = self.sims.iter().filter(|&&v| v >= z).count();
        let at_most = self.sims.iter().filter(|&&v| v <= z).count();
        let p_upper = (1 + at_least) as f64 / (m + 1) as f64;
        let p_lower = (1 + at_most) as f64 / (m + 1) as f64;
        let sd = self.var.sqrt();
        let z_score = if sd > 0.0 { (z - self.mean) / sd } else { 0.0 };
        let normal = Normal::standard();
        let (pn_up, pn_lo) = if sd > 0.0 {
            (normal.sf(z_score), normal.cdf(z_score))
        } else {
            (1.0, 1.0)
        };
        let tail = if o.space_transform == o.time_transform {
            Tail::Upper
        } else {
            Tail::Lower
        };
        let p_value = match tail {
            Tail::Upper => p_upper,
            Tail::Lower => p_lower,
        };
        let outcome = if p_value <= o.alpha {
            MantelOutcome::Interaction
        } else {
            MantelOutcome::NoInteraction
        };
        let n = self.n_events();
        let direction = match tail {
            Tail::Upper => "larger",
            Tail::Lower => "smaller",
        };
        let verdict = match outcome {
            MantelOutcome::Interaction => format!(
                "Events close together on the map also tend to be close together in time: the Mantel statistic is {direction} than in {beaten} of {m} random pairings of dates with places (p = {p}). A link between when and where, not a cause.",
                beaten = m - match tail { Tail::Upper => at_least, Tail::Lower => at_most },
                p = fmt_p(p_value)
            ),
            MantelOutcome::NoInteraction => format!(
                "No clear sign that events close together on the map are also close together in time (p = {p} for the Mantel statistic being {direction} than with dates shuffled among the places; {m} permutations). This does not rule out a link at a particular distance or time scale.",
                p = fmt_p(p_value)
            ),
        };
        let mut caveats = vec![
            format!(
                "One number over all {} pairs: with {} transforms it weighs {} most. A link only at short distances and times can be missed; the space–time K function shows at which distances and times.",
                fmt_count((n * (n - 1) / 2) as f64),
                match (o.space_transform, o.time_transform) {
                    (Transform::Reciprocal, Transform::Reciprocal) => "reciprocal",
                    (Transform::Raw, Transform::Raw) => "raw",
                    _ => "mixed",
                },
                match (o.space_transform, o.time_transform) {
                    (Transform::Reciprocal, Transform::Reciprocal) => "the closest pairs",
                    (Transform::Raw, Transform::Raw) => "the most distant pairs",
                    _ => "pairs close in one respect and far in the other",
                }
            ),
            "The test only asks whether times and places are linked; a shift of the population at risk over time (new housing, a changed recording practice) creates the same pattern.".into(),
            "The normal p uses the exact permutation mean and variance; it is an approximation, the permutation p is the test.".into(),
        ];
        if self.report.at_midpoint > 0 || self.report.window_too_long > 0 {
            caveats.push(self.report.statement.clone());
        }
        Ok(MantelResult {
            n_events: n,
            pairs: (n * (n - 1) / 2) as f64,
            statistic: z,
            expected: self.mean,
            variance: self.var,
            z_score,
            correlation: self.corr,
            p_normal_upper: pn_up,
            p_normal_lower: pn_lo,
            p_upper,
            p_lower,
            interaction_tail: tail,
            p_value,
            at_least,
            at_most,
            simulated_min: self.sims.iter().copied().fold(f64::INFINITY, f64::min),
            simulated_max: self.sims.iter().copied().fold(f64::NEG_INFINITY, f64::max),
            space_transform: o.space_transform,
            time_transform: o.time_transform,
            space_constant_m: o.space_constant_m,
            time_constant_days: o.time_constant_days,
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

fn fmt_count(v: f64) -> String {
    let s = format!("{}", v.round() as u64);
    let mut out = String::new();
    for (k, ch) in s.chars().enumerate() {
        if k > 0 && (s.len() - k) % 3 == 0 {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Fixture K7 (seven events; a reference set of the method notes).
    pub(crate) fn k7() -> TimedEvents {
        TimedEvents::from_xyt(
            vec![0.0856, 0.8013, 0.0941, 0.4791, 0.7346, 0.3912, 0.4306],
            vec![0.2368, 0.5822, 0.4331, 0.1597, 0.1137, 0.5167, 0.5868],
            vec![7.3784, 9.5627, 2.8420, 6.4855, 6.9622, 2.9272, 0.0149],
        )
        .unwrap()
    }

    fn raw() -> MantelOptions {
        MantelOptions {
            space_transform: Transform::Raw,
            time_transform: Transform::Raw,
            ..Default::default()
        }
    }

    /// Z of the times `t` by a plain double-precision double loop.
    fn z_plain(ev: &TimedEvents, t: &[f64], o: &MantelOptions) -> f64 {
        let n = ev.len();
        let mut z = 0.0;
        for i in 0..n {
            for j in i + 1..n {
                let d = (ev.x[i] - ev.x[j]).hypot(ev.y[i] - ev.y[j]);
                let u = (t[i] - t[j]).abs();
                let a = space_value(o.space_transform, o.space_constant_m, d);
                let b = match o.time_transform {
                    Transform::Raw => u,
                    Transform::Reciprocal => 1.0 / (u + o.time_constant_days),
                };
                z += a * b;
            }
        }
        z
    }

    fn all_perms_of(n: usize) -> Vec<Vec<usize>> {
        crate::spacetime::permute::all_permutations(n).unwrap()
    }

    /// (mean, variance, #≥, #≤) of Z over every permutation of the times.
    fn enumerate(ev: &TimedEvents, o: &MantelOptions) -> (f64, f64, usize, usize, usize) {
        let z0 = z_plain(ev, &ev.t, o);
        let perms = all_perms_of(ev.len());
        let zs: Vec<f64> = perms
            .iter()
            .map(|p| {
                let t: Vec<f64> = p.iter().map(|&k| ev.t[k]).collect();
                z_plain(ev, &t, o)
            })
            .collect();
        let m = zs.len() as f64;
        let mean = zs.iter().sum::<f64>() / m;
        let var = zs.iter().map(|z| (z - mean).powi(2)).sum::<f64>() / m;
        let tol = 1e-9 * z0.abs().max(1.0);
        let ge = zs.iter().filter(|&&z| z >= z0 - tol).count();
        let le = zs.iter().filter(|&&z| z <= z0 + tol).count();
        (mean, var, ge, le, zs.len())
    }

    #[test]
    fn k7_raw_values_of_the_method_notes() {
        // Check values of fixture K7 with raw distances and times (method
        // notes §10.3, from enumerating all 5040 permutations): Z =
        // 38.974216, mean 38.044347, variance 4.300518, z = 0.4484, exact
        // p_upper = 0.316071.
        let ev = k7();
        let job = MantelJob::new(&ev, &raw()).unwrap();
        assert!(
            (job.observed() - 38.974216).abs() < 5e-5,
            "{}",
            job.observed()
        );
        let (mean, var) = job.moments();
        assert!((mean - 38.044347).abs() < 1e-6, "{mean}");
        assert!((var - 4.300518).abs() < 1e-6, "{var}");
        assert!(((job.observed() - mean) / var.sqrt() - 0.4484).abs() < 1e-4);
        // Our own enumeration of the 5040 permutations.
        let (em, ev_, ge, le, count) = enumerate(&ev, &raw());
        assert_eq!(count, 5040);
        assert!((em - mean).abs() < 1e-9 && (ev_ - var).abs() < 1e-9);
        assert!((ge as f64 / 5040.0 - 0.316071).abs() < 5e-7, "{ge}");
        assert!((le as f64 / 5040.0 - 0.684127).abs() < 5e-7, "{le}");
    }

    #[test]
    fn exact_moments_match_enumeration_on_random_layouts() {
        // A second layout (n = 7, seeded) with each pair of transforms:
        // the formulas against the mean and variance over all 5040
        // permutations.
        use rand::RngExt;
        let mut rng = crate::rng::rng_from_seed(41);
        let x: Vec<f64> = (0..7).map(|_| rng.random_range(0.0..500.0)).collect();
        let y: Vec<f64> = (0..7).map(|_| rng.random_range(0.0..500.0)).collect();
        let t: Vec<f64> = (0..7)
            .map(|_| rng.random_range(0.0..60.0f64).floor())
            .collect();
        let ev = TimedEvents::from_xyt(x, y, t).unwrap();
        for (st, tt) in [
            (Transform::Raw, Transform::Raw),
            (Transform::Reciprocal, Transform::Reciprocal),
            (Transform::Raw, Transform::Reciprocal),
            (Transform::Reciprocal, Transform::Raw),
        ] {
            let o = MantelOptions {
                space_transform: st,
                time_transform: tt,
                space_constant_m: 5.0,
                time_constant_days: 0.5,
                ..Default::default()
            };
            let job = MantelJob::new(&ev, &o).unwrap();
            let (mean, var) = job.moments();
            let (em, evar, _, _, _) = enumerate(&ev, &o);
            assert!(
                (mean - em).abs() <= 1e-9 * em.abs().max(1e-12),
                "{st:?}/{tt:?}: {mean} vs {em}"
            );
            assert!(
                (var - evar).abs() <= 1e-7 * evar.abs().max(1e-12),
                "{st:?}/{tt:?}: {var} vs {evar}"
            );
        }
    }

    #[test]
    fn batched_single_precision_z_matches_plain_double_loop() {
        let ev = k7();
        for o in [raw(), MantelOptions::default()] {
            let job = MantelJob::new(&ev, &o).unwrap();
            let zs = job.share().simulate_range(0, 40);
            for (j, z) in zs.iter().enumerate() {
                let p = super::super::permutation(7, o.seed, j as u64);
                let t: Vec<f64> = p.iter().map(|&k| job.share().t[k as usize]).collect();
                let zp = z_plain(&ev, &t, &o);
                assert!((z - zp).abs() <= 5e-6 * zp.abs(), "{z} vs {zp}");
            }
        }
    }

    #[test]
    fn split_runs_equal_one_run() {
        let ev = k7();
        let o = MantelOptions {
            n_sim: 99,
            seed: 9,
            ..raw()
        };
        let mut a = MantelJob::new(&ev, &o).unwrap();
        a.run_batch(99);
        let mut b = MantelJob::new(&ev, &o).unwrap();
        let sh = b.share().clone();
        for (from, to) in [(0, 5), (5, 50), (50, 99)] {
            let piece = sh.simulate_range(from, to);
            b.add_simulated(from, &piece).unwrap();
        }
        assert_eq!(a.sims, b.sims);
        assert!(b.add_simulated(3, &[1.0]).is_err());
        let (ra, rb) = (a.finish().unwrap(), b.finish().unwrap());
        assert_eq!(ra.p_upper, rb.p_upper);
    }

    #[test]
    fn permutation_mean_of_z_converges_to_the_exact_mean() {
        // 4000 permutations: the simulated mean within 4 standard errors of
        // the exact mean.
        let ev = k7();
        let o = MantelOptions {
            n_sim: 4000,
            seed: 2,
            ..raw()
        };
        let mut job = MantelJob::new(&ev, &o).unwrap();
        job.run_batch(4000);
        let (mean, var) = job.moments();
        let m = job.sims.iter().sum::<f64>() / 4000.0;
        assert!(
            (m - mean).abs() < 4.0 * (var / 4000.0).sqrt(),
            "{m} vs {mean}"
        );
    }

    #[test]
    fn refuses_too_few_and_too_many_and_bad_options() {
        let ev = TimedEvents::from_xyt(vec![0.0; 3], vec![0.0; 3], vec![1.0, 2.0, 3.0]).unwrap();
        assert!(matches!(
            MantelJob::new(&ev, &MantelOptions::default()),
            Err(AnalysisError::TooFewPoints { .. })
        ));
        let n = MAX_EVENTS + 1;
        let big = TimedEvents::from_xyt(vec![0.0; n], vec![0.0; n], vec![0.0; n]).unwrap();
        let e = MantelJob::new(&big, &MantelOptions::default())
            .err()
            .unwrap();
        assert!(e.to_string().contains("10000"), "{e}");
        let bad = MantelOptions {
            time_constant_days: 0.0,
            ..Default::default()
        };
        assert!(MantelJob::new(&k7(), &bad).is_err());
    }

    #[test]
    fn identical_times_give_zero_variance_and_no_signal() {
        let ev = TimedEvents::from_xyt(vec![0.0, 1.0, 2.0, 3.0, 4.0], vec![0.0; 5], vec![5.0; 5])
            .unwrap();
        let mut job = MantelJob::new(
            &ev,
            &MantelOptions {
                n_sim: 19,
                ..Default::default()
            },
        )
        .unwrap();
        job.run_batch(19);
        let r = job.finish().unwrap();
        assert_eq!(r.variance, 0.0);
        assert_eq!(r.z_score, 0.0);
        assert_eq!(r.p_upper, 1.0);
        assert_eq!(r.outcome, MantelOutcome::NoInteraction);
    }

    #[test]
    fn mixed_transforms_use_the_lower_tail() {
        // Two bursts (close in space and time): with raw space and
        // reciprocal time, interaction makes Z small.
        let x = vec![0.0, 10.0, 0.0, 10.0, 900.0, 910.0, 900.0, 910.0];
        let y = vec![0.0, 0.0, 10.0, 10.0, 900.0, 900.0, 910.0, 910.0];
        let t = vec![1.0, 2.0, 3.0, 4.0, 60.0, 61.0, 62.0, 63.0];
        let ev = TimedEvents::from_xyt(x, y, t).unwrap();
        let o = MantelOptions {
            space_transform: Transform::Raw,
            n_sim: 199,
            seed: 1,
            ..Default::default()
        };
        let mut job = MantelJob::new(&ev, &o).unwrap();
        job.run_batch(199);
        let r = job.finish().unwrap();
        assert_eq!(r.interaction_tail, Tail::Lower);
        assert!(r.z_score < -2.0 && r.p_value <= 0.05, "{r:?}");
        assert_eq!(r.outcome, MantelOutcome::Interaction);
    }
}
