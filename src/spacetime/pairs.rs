//! Pairs close in space and in time: the near-repeat table and the Knox
//! test, one engine.
//!
//! **References.** Knox, E. G. (1964). "The detection of space–time
//! interactions". *Applied Statistics* 13, 25–29. Mantel, N. (1967). "The
//! detection of disease clustering and a generalized regression approach".
//! *Cancer Research* 27, 209–220 (the permutation test). Townsley, M.,
//! Homel, R. & Chaseling, J. (2003). "Infectious burglaries: a test of the
//! near repeat hypothesis". *British Journal of Criminology* 43, 615–633,
//! and Johnson, S. D. et al. (2007). "Space–time patterns of risk: a cross
//! national assessment of residential burglary victimization". *Journal of
//! Quantitative Criminology* 23, 201–219 (the table of distance bands by
//! time bands). Benjamini, Y. & Hochberg, Y. (1995). "Controlling the false
//! discovery rate: a practical and powerful approach to multiple testing".
//! *Journal of the Royal Statistical Society B* 57, 289–300 (q-values).
//!
//! **Table.** Over the N = n(n−1)/2 unordered pairs of events, each pair has
//! a distance d and a time gap g = |t_i − t_j| (days). Distance bands: an
//! optional "same location" band (d = 0 exactly), then (0, e₁], (e₁, e₂], …
//! (the first band is [0, e₁] without the "same location" band); time bands
//! [0, τ₁], (τ₁, τ₂], …. Each pair falls in at most one cell; pairs beyond
//! the largest distance or the longest gap fall in none, but every pair
//! counts in the margins: n_s,a pairs in distance band a, n_t,b pairs (of
//! all N) in time band b. "Close" is "≤" throughout.
//!
//! **Null hypothesis** (no space–time interaction): which time goes with
//! which place is arbitrary, so the times are permuted among the events
//! (Mantel 1967). Under it a fixed pair gets two distinct times drawn at
//! random, so the exact expectation of cell (a, b) is
//! E_ab = n_s,a · n_t,b / N.
//!
//! **Per cell**: the observed count O, E, the mean of the m permuted counts,
//! O/E, the rank p = (1 + #{O* ≥ O})/(m + 1) and the Benjamini–Hochberg
//! q-value over all the cells of the table.
//!
//! **Global test over the table** (a max-statistic permutation test,
//! common practice): each cell is standardised as z = (O − E)/SD, with SD
//! the root mean square of (count − E) over the m + 1 tables (the data's
//! and the permuted ones, treated alike so the tables stay exchangeable);
//! the statistic is the largest z over cells, compared with the same
//! maximum in each permuted table: p = (1 + #{max z* ≥ max z})/(m + 1).
//! Cells whose count never varies over the m + 1 tables (SD = 0) cannot
//! be extreme and are left out of the maximum; with no cell left, p = 1.
//!
//! **Knox test**: the same engine with one distance band [0, δ] and one time
//! band [0, τ]: X = O, n_s, n_t, E = n_s·n_t/N, the ratio, the Poisson p =
//! P(Poisson(E) ≥ X) of Knox (an approximation) and the permutation p.
//!
//! **Algorithm.** The pairs within the largest distance are found once with
//! the grid index and stored as (i, j, distance band), grouped by i. A
//! permutation only re-bins the time gaps: permutations run in batches
//! ([`permuted_times_batch`]), one pass over the pairs serving a whole
//! batch. The time margins come from the sorted times (two pointers per band
//! edge, O(n log n + n·bands)), never from all N pairs. Permutation j uses
//! its own stream ([`permutation`](super::permutation)), applied to the events numbered in map
//! order (cells of the largest distance, row by row: the partners of
//! consecutive events then sit close together in memory), so a run split
//! over workers equals the run on one. Cost: O(n + P) memory for P close pairs, O(P·m) time.
//!
//! # Examples
//! ```
//! use cloister::spacetime::pairs::{PairEngine, Bands};
//! // Two events 10 m and 1 day apart, a third far away in space and time.
//! let e = PairEngine::new(&[0.0, 10.0, 500.0], &[0.0, 0.0, 0.0], &[0.0, 1.0, 30.0],
//!     Bands::knox(20.0, 2.0)).unwrap();
//! assert_eq!(e.observed(), &[1]);
//! assert_eq!(e.space_margin(), &[1]); // one pair within 20 m
//! assert_eq!(e.time_margin(), &[1]);  // one pair within 2 days
//! assert!((e.expected()[0] - 1.0 / 3.0).abs() < 1e-12);
//! ```

use super::events::{TimeUseReport, TimedEvents, UncertainTimes};
use super::permute::permuted_times_batch;
use crate::distance::verdict::fmt_p;
use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::params::{bad, Field, Params};
use serde::{Deserialize, Serialize};

/// Most cells a near-repeat table may have.
pub const MAX_CELLS: usize = 400;
/// Most distance or time bands.
pub const MAX_BANDS: usize = 40;
/// Most pairs within the largest distance kept (about 10 bytes each, and
/// each permutation visits all of them).
pub const MAX_PAIRS: usize = 20_000_000;
/// Permutations run per pass over the pairs.
const BATCH: usize = 32;

/// The bands of a table.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Bands {
    /// A first band of pairs at exactly the same location (d = 0).
    pub same_location: bool,
    /// Upper ends of the distance bands (metres), increasing.
    pub space_edges: Vec<f64>,
    /// Upper ends of the time bands (days), increasing.
    pub time_edges: Vec<f64>,
}

impl Bands {
    /// Bands of width `w` up to `max` (the last one shorter when `max` is
    /// not a multiple of `w`).
    fn regular(w: f64, max: f64) -> Vec<f64> {
        let mut e = Vec::new();
        let mut k = 1.0;
        while k * w < max && e.len() < MAX_BANDS + 1 {
            e.push(k * w);
            k += 1.0;
        }
        e.push(max);
        e
    }
    /// The near-repeat bands: "same location" (when asked), then distance
    /// bands of `space_w` up to `space_max`, time bands of `time_w` up to
    /// `time_max`.
    pub fn near_repeat(
        same_location: bool,
        space_w: f64,
        space_max: f64,
        time_w: f64,
        time_max: f64,
    ) -> Bands {
        Bands {
            same_location,
            space_edges: Bands::regular(space_w, space_max),
            time_edges: Bands::regular(time_w, time_max),
        }
    }
    /// The Knox cell: [0, δ] × [0, τ].
    pub fn knox(delta: f64, tau: f64) -> Bands {
        Bands {
            same_location: false,
            space_edges: vec![delta],
            time_edges: vec![tau],
        }
    }
    pub fn n_space(&self) -> usize {
        self.space_edges.len() + usize::from(self.same_location)
    }
    pub fn n_time(&self) -> usize {
        self.time_edges.len()
    }
    pub fn cells(&self) -> usize {
        self.n_space() * self.n_time()
    }
    pub(crate) fn check(&self) -> Result<(), AnalysisError> {
        let ok = |e: &[f64]| {
            !e.is_empty()
                && e.iter().all(|v| v.is_finite() && *v >= 0.0)
                && e.windows(2).all(|w| w[0] < w[1])
        };
        if !ok(&self.space_edges) {
            return Err(bad(
                "distance bands",
                "must be increasing distances, 0 or more",
            ));
        }
        if !ok(&self.time_edges) {
            return Err(bad(
                "time bands",
                "must be increasing numbers of days, 0 or more",
            ));
        }
        if self.n_space() > MAX_BANDS + 1 || self.n_time() > MAX_BANDS {
            return Err(bad(
                "bands",
                format!("at most {MAX_BANDS} distance bands and {MAX_BANDS} time bands: make the bands wider or the maxima smaller"),
            ));
        }
        if self.cells() > MAX_CELLS {
            return Err(bad(
                "bands",
                format!(
                    "the table would have {} cells ({} distance × {} time bands); at most {MAX_CELLS}: make the bands wider or the maxima smaller",
                    self.cells(),
                    self.n_space(),
                    self.n_time()
                ),
            ));
        }
        Ok(())
    }
}

/// The close pairs and their distance bands, the times and the margins:
/// everything a permutation needs. Holds no location.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct PairEngine {
    bands: Bands,
    /// Times in the internal (map) order.
    t: Vec<f64>,
    /// Internal number of each event (in the order given).
    rank: Vec<u32>,
    /// Pairs grouped by their first event: those of event i are
    /// `start[i]..start[i + 1]` of `other` (the second event, > i) and
    /// `band` (the distance band).
    start: Vec<u32>,
    other: Vec<u32>,
    band: Vec<u16>,
    space_margin: Vec<u64>,
    time_margin: Vec<u64>,
    n_pairs: u64,
    observed: Vec<u32>,
}

impl PairEngine {
    /// Finds the pairs within the largest distance band and counts the data's
    /// table. Coordinates in metres, times in days.
    pub fn new(x: &[f64], y: &[f64], t: &[f64], bands: Bands) -> Result<PairEngine, AnalysisError> {
        bands.check()?;
        let n = t.len();
        if x.len() != n || y.len() != n {
            return Err(bad("events", "coordinate and time lists differ in length"));
        }
        if x.iter().chain(y).chain(t).any(|v| !v.is_finite()) {
            return Err(bad(
                "events",
                "every location and time must be a finite number",
            ));
        }
        if n < 2 {
            return Err(AnalysisError::TooFewPoints {
                needed: 2,
                found: n,
            });
        }
        if n > u32::MAX as usize {
            return Err(bad("events", "too many events"));
        }
        let max_d = bands.space_edges.last().copied().unwrap_or(0.0);
        let zero = usize::from(bands.same_location);
        let edges = &bands.space_edges;
        // Events are numbered internally in map order (by cells of the
        // largest distance, row by row), so the partners of consecutive
        // events sit close together in the permuted-times batch (memory
        // locality); `rank[i]` is event i's internal number.
        let rank = map_order(x, y, max_d);
        let index = GridIndex::new(x, y);
        let too_many = || {
            bad(
                "max_distance_m",
                format!(
                    "more than {} pairs of events are within {} m of each other: too many to keep; choose a smaller largest distance",
                    crate::params::num(MAX_PAIRS as f64),
                    fmt_len(max_d)
                ),
            )
        };
        if index.estimate_pairs_within(max_d) > MAX_PAIRS as f64 {
            return Err(too_many());
        }
        let mut pairs: Vec<(u32, u32, u16)> = Vec::new();
        let mut overflow = false;
        let mut space_margin = vec![0u64; bands.n_space()];
        index.for_each_pair_within(max_d, |i, j, d| {
            if pairs.len() >= MAX_PAIRS {
                overflow = true;
                return;
            }
            let a = if zero == 1 && d == 0.0 {
                0
            } else {
                zero + edges.partition_point(|&e| e < d)
            };
            if let Some(m) = space_margin.get_mut(a) {
                *m += 1;
                let (ri, rj) = (rank[i], rank[j]);
                pairs.push((ri.min(rj), ri.max(rj), a as u16));
            }
        });
        if overflow {
            return Err(too_many());
        }
        pairs.sort_unstable();
        let mut start = vec![0u32; n + 1];
        for &(i, _, _) in &pairs {
            start[i as usize + 1] += 1;
        }
        for i in 0..n {
            start[i + 1] += start[i];
        }
        let other = pairs.iter().map(|p| p.1).collect();
        let band = pairs.iter().map(|p| p.2).collect();
        let time_margin = time_margin(t, &bands.time_edges);
        let mut internal = vec![0.0; n];
        for (i, &r) in rank.iter().enumerate() {
            internal[r as usize] = t[i];
        }
        let nn = n as u64;
        let mut e = PairEngine {
            bands,
            t: internal,
            rank,
            start,
            other,
            band,
            space_margin,
            time_margin,
            n_pairs: nn * (nn - 1) / 2,
            observed: Vec::new(),
        };
        e.observed = e.table_for(t);
        Ok(e)
    }

    pub fn bands(&self) -> &Bands {
        &self.bands
    }
    pub fn len(&self) -> usize {
        self.t.len()
    }
    pub fn is_empty(&self) -> bool {
        self.t.is_empty()
    }
    pub fn cells(&self) -> usize {
        self.bands.cells()
    }
    /// Pairs within the largest distance.
    pub fn close_pairs(&self) -> usize {
        self.other.len()
    }
    /// All pairs, N = n(n − 1)/2.
    pub fn n_pairs(&self) -> u64 {
        self.n_pairs
    }
    /// The data's table, distance band-major (cell a·n_time + b).
    pub fn observed(&self) -> &[u32] {
        &self.observed
    }
    /// Pairs per distance band.
    pub fn space_margin(&self) -> &[u64] {
        &self.space_margin
    }
    /// Pairs (of all N) per time band.
    pub fn time_margin(&self) -> &[u64] {
        &self.time_margin
    }
    /// Exact permutation expectation of every cell, n_s,a·n_t,b/N.
    pub fn expected(&self) -> Vec<f64> {
        let nf = self.n_pairs as f64;
        self.space_margin
            .iter()
            .flat_map(|&s| {
                self.time_margin
                    .iter()
                    .map(move |&t| s as f64 * t as f64 / nf)
            })
            .collect()
    }

    /// The time band of a gap, `None` past the last: the plain rule that
    /// the batch loop must agree with (checked in the tests).
    #[cfg(test)]
    fn time_band(&self, g: f64) -> Option<usize> {
        let e = &self.bands.time_edges;
        let last = e.len() - 1;
        if g > e[last] {
            return None;
        }
        // A guess from the first width, then exact against the edges.
        let w = e[0];
        let mut k = if w > 0.0 {
            ((g / w).ceil() as usize).saturating_sub(1).min(last)
        } else {
            0
        };
        while k > 0 && g <= e[k - 1] {
            k -= 1;
        }
        while g > e[k] {
            k += 1;
        }
        Some(k)
    }

    /// The table for times `t` given to the events (one permutation, or the
    /// data): used for enumeration in tests.
    pub fn table_for(&self, t: &[f64]) -> Vec<u32> {
        let mut internal = vec![0.0; self.t.len()];
        for (&v, &r) in t.iter().zip(&self.rank) {
            internal[r as usize] = v;
        }
        let mut out = vec![0u32; self.cells()];
        self.add_batch(&internal, 1, &mut out);
        out
    }

    /// Adds the tables of `b` time assignments given event-major
    /// (`tb[i·b + k]` = time of event i in assignment k) into `out`
    /// (b tables of `cells()` counts).
    ///
    /// The inner loop has no unpredictable branch: a gap past the last time
    /// band goes to an extra column of a scratch table (dropped when the
    /// counts are copied out), and the band is a guess from the first width
    /// corrected against the edges (a sentinel edge of +∞ ends the search),
    /// so every pair lands in the band whose half-open interval holds its gap.
    fn add_batch(&self, tb: &[f64], b: usize, out: &mut [u32]) {
        let nt = self.bands.n_time();
        let na = self.bands.n_space();
        let cells = self.cells();
        let wide = nt + 1;
        let mut edges = self.bands.time_edges.clone();
        edges.push(f64::INFINITY);
        let w = edges[0];
        let inv = if w > 0.0 { 1.0 / w } else { 0.0 };
        let mut scratch = vec![0u32; b * na * wide];
        for i in 0..self.t.len() {
            let (p0, p1) = (self.start[i] as usize, self.start[i + 1] as usize);
            if p0 == p1 {
                continue;
            }
            let ti = &tb[i * b..(i + 1) * b];
            for p in p0..p1 {
                let j = self.other[p] as usize;
                let row = self.band[p] as usize * wide;
                let tj = &tb[j * b..(j + 1) * b];
                for (k, (&a, &c)) in ti.iter().zip(tj).enumerate() {
                    let g = (a - c).abs();
                    // floor(g/w) (a truncation, no libm call): off by one only on an
                    // edge, which the correction below moves down.
                    let mut m = ((g * inv) as usize).min(nt);
                    while m > 0 && g <= edges[m - 1] {
                        m -= 1;
                    }
                    while g > edges[m] {
                        m += 1;
                    }
                    scratch[k * na * wide + row + m] += 1;
                }
            }
        }
        for k in 0..b {
            for a in 0..na {
                let src = &scratch[(k * na + a) * wide..(k * na + a) * wide + nt];
                let dst = &mut out[k * cells + a * nt..k * cells + (a + 1) * nt];
                for (d, s) in dst.iter_mut().zip(src) {
                    *d += s;
                }
            }
        }
    }

    /// The tables of permutations `from..to` of a run with `seed`, one
    /// after another (`(to − from)·cells()` counts).
    pub fn simulate(&self, seed: u64, from: usize, to: usize) -> Vec<u32> {
        let cells = self.cells();
        let mut out = vec![0u32; to.saturating_sub(from) * cells];
        let mut j = from;
        while j < to {
            let b = BATCH.min(to - j);
            let tb = permuted_times_batch(&self.t, seed, j as u64, b);
            let o = (j - from) * cells;
            self.add_batch(&tb, b, &mut out[o..o + b * cells]);
            j += b;
        }
        out
    }
}

/// Internal numbers of the events in map order: sorted by the row, then the
/// column of a grid of cells of side `cell` (at least 1 m).
fn map_order(x: &[f64], y: &[f64], cell: f64) -> Vec<u32> {
    let n = x.len();
    let cell = cell.max(1.0);
    let x0 = x.iter().copied().fold(f64::INFINITY, f64::min);
    let y0 = y.iter().copied().fold(f64::INFINITY, f64::min);
    let key = |i: usize| {
        (
            ((y[i] - y0) / cell).floor() as u64,
            ((x[i] - x0) / cell).floor() as u64,
        )
    };
    let mut order: Vec<u32> = (0..n as u32).collect();
    order.sort_by_key(|&i| key(i as usize));
    let mut rank = vec![0u32; n];
    for (place, &i) in order.iter().enumerate() {
        rank[i as usize] = place as u32;
    }
    rank
}

/// Pairs (of all n(n−1)/2) per time band: from the sorted times, for each
/// edge the pairs with gap ≤ edge by two pointers.
fn time_margin(t: &[f64], edges: &[f64]) -> Vec<u64> {
    let mut s = t.to_vec();
    s.sort_unstable_by(f64::total_cmp);
    let within = |e: f64| {
        let mut c = 0u64;
        let mut j = 0;
        for i in 0..s.len() {
            if j < i + 1 {
                j = i + 1;
            }
            while j < s.len() && s[j] - s[i] <= e {
                j += 1;
            }
            c += (j - i - 1) as u64;
        }
        c
    };
    let mut prev = 0u64;
    edges
        .iter()
        .map(|&e| {
            let c = within(e);
            let m = c - prev;
            prev = c;
            m
        })
        .collect()
}

/// Benjamini–Hochberg q-values (step-up; Benjamini & Hochberg 1995):
/// q₍i₎ = min over j ≥ i of min(1, m·p₍j₎/j), in the order of `p`.
pub fn bh_q_values(p: &[f64]) -> Vec<f64> {
    let m = p.len();
    let mut order: Vec<usize> = (0..m).collect();
    order.sort_by(|&a, &b| p[a].total_cmp(&p[b]));
    let mut q = vec![0.0; m];
    let mut run = 1.0f64;
    for r in (0..m).rev() {
        let i = order[r];
        run = run.min(m as f64 * p[i] / (r + 1) as f64).min(1.0);
        q[i] = run;
    }
    q
}

/// P(Poisson(mean) ≥ x), Knox's approximate p.
pub fn poisson_upper(x: u64, mean: f64) -> f64 {
    if x == 0 {
        1.0
    } else if mean <= 0.0 {
        0.0
    } else {
        // P(N ≥ x) = P(Gamma(x, 1) ≤ mean), the regularised lower gamma.
        statrs::function::gamma::gamma_lr(x as f64, mean)
    }
}

/// A permutation run over a [`PairEngine`]: the permuted tables kept in
/// order (the global test needs all of them), advanced in batches or fed
/// pieces computed by helper workers.
#[derive(Debug, Clone)]
pub struct PairRun {
    pub engine: PairEngine,
    pub seed: u64,
    pub n_perm: usize,
    done: usize,
    sims: Vec<u32>,
}

/// What a helper worker needs (no location).
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct PairShare {
    pub engine: PairEngine,
    pub seed: u64,
    pub n_perm: usize,
}

impl PairShare {
    /// Tables of permutations `from..to` (capped at `n_perm`).
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<u32> {
        self.engine.simulate(self.seed, from, to.min(self.n_perm))
    }
}

impl PairRun {
    pub fn new(engine: PairEngine, seed: u64, n_perm: usize) -> PairRun {
        PairRun {
            sims: Vec::with_capacity(n_perm * engine.cells()),
            engine,
            seed,
            n_perm,
            done: 0,
        }
    }
    pub fn done(&self) -> usize {
        self.done
    }
    pub fn total(&self) -> usize {
        self.n_perm
    }
    /// Runs up to `k` more permutations; returns how many are done.
    pub fn run_batch(&mut self, k: usize) -> usize {
        let to = (self.done + k).min(self.n_perm);
        let piece = self.engine.simulate(self.seed, self.done, to);
        self.sims.extend_from_slice(&piece);
        self.done = to;
        self.done
    }
    /// Runs the remaining permutations on `threads` threads (native
    /// builds; contiguous ranges joined in order, the same tables as one
    /// thread).
    #[cfg(not(target_arch = "wasm32"))]
    pub fn run_parallel(&mut self, threads: usize) {
        let from = self.done;
        let left = self.n_perm - from;
        let (e, seed) = (&self.engine, self.seed);
        let pieces = crate::cores::each_on_a_thread(crate::cores::ranges(left, threads), |r| {
            e.simulate(seed, from + r.start, from + r.end)
        });
        match pieces {
            Some(pieces) => {
                for p in pieces {
                    self.sims.extend_from_slice(&p);
                }
                self.done = self.n_perm;
            }
            // A thread failed (cannot happen short of a panic): all of it
            // on this thread.
            None => {
                self.run_batch(left);
            }
        }
    }
    pub fn share(&self) -> PairShare {
        PairShare {
            engine: self.engine.clone(),
            seed: self.seed,
            n_perm: self.n_perm,
        }
    }
    /// Tables of permutations `from..to` (the run is not changed).
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<u32> {
        self.engine.simulate(self.seed, from, to.min(self.n_perm))
    }
    /// Adds tables computed elsewhere for permutations `from..`; `from`
    /// must equal [`PairRun::done`]. Returns the number done.
    pub fn add_simulated(&mut self, from: usize, tables: &[u32]) -> Result<usize, AnalysisError> {
        let k = crate::params::piece_rows(
            "permuted tables",
            "permutation",
            (from, self.done, self.n_perm),
            tables.len(),
            self.engine.cells(),
        )?;
        self.sims.extend_from_slice(tables);
        self.done += k;
        Ok(self.done)
    }
    /// Runs what is left and summarises the cells.
    fn summarise(&mut self) -> Summary {
        if self.done < self.n_perm {
            self.run_batch(self.n_perm - self.done);
        }
        let cells = self.engine.cells();
        let m = self.n_perm;
        let obs = self.engine.observed();
        let expected = self.engine.expected();
        let mut ge = vec![0usize; cells];
        let mut sum = vec![0f64; cells];
        let mut ss = vec![0f64; cells];
        for (c, (&o, &e)) in obs.iter().zip(&expected).enumerate() {
            let d = o as f64 - e;
            ss[c] = d * d;
        }
        for table in self.sims.chunks_exact(cells) {
            for c in 0..cells {
                let v = table[c];
                ge[c] += usize::from(v >= obs[c]);
                sum[c] += v as f64;
                let d = v as f64 - expected[c];
                ss[c] += d * d;
            }
        }
        let sd: Vec<f64> = ss.iter().map(|s| (s / (m + 1) as f64).sqrt()).collect();
        let max_z = |table: &[u32]| -> Option<(f64, usize)> {
            let mut best: Option<(f64, usize)> = None;
            for c in 0..cells {
                if sd[c] > 0.0 {
                    let z = (table[c] as f64 - expected[c]) / sd[c];
                    if best.is_none_or(|(b, _)| z > b) {
                        best = Some((z, c));
                    }
                }
            }
            best
        };
        let obs_max = max_z(obs);
        let ge_max = match obs_max {
            Some((zo, _)) => self
                .sims
                .chunks_exact(cells)
                .filter(|t| max_z(t).is_some_and(|(z, _)| z >= zo))
                .count(),
            None => m,
        };
        let rank_p = |g: usize| (1 + g) as f64 / (m + 1) as f64;
        let p: Vec<f64> = ge.iter().map(|&g| rank_p(g)).collect();
        Summary {
            q: bh_q_values(&p),
            p,
            ge,
            sim_mean: sum.iter().map(|s| s / m as f64).collect(),
            sd,
            expected,
            global_p: if obs_max.is_some() {
                rank_p(ge_max)
            } else {
                1.0
            },
            global_ge: ge_max,
            global: obs_max,
        }
    }
}

struct Summary {
    expected: Vec<f64>,
    sim_mean: Vec<f64>,
    sd: Vec<f64>,
    p: Vec<f64>,
    q: Vec<f64>,
    ge: Vec<usize>,
    global: Option<(f64, usize)>,
    global_p: f64,
    global_ge: usize,
}

// ---------------------------------------------------------------------------
// The near-repeat table.

/// Options of the near-repeat table (`nearRepeatStart` in the JS API).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct NearRepeatOptions {
    /// Width of each distance band (metres).
    pub band_m: f64,
    /// Largest distance: pairs further apart are in no cell.
    pub max_distance_m: f64,
    /// Width of each time band (days).
    pub band_days: f64,
    /// Longest time gap: pairs further apart in time are in no cell.
    pub max_days: f64,
    /// A first distance band of pairs at exactly the same location.
    pub same_location: bool,
    pub n_perm: usize,
    pub seed: u64,
    /// Level for the q-values and the global test.
    pub alpha: f64,
    pub uncertain_times: UncertainTimes,
    pub max_window_days: f64,
}

impl Default for NearRepeatOptions {
    fn default() -> Self {
        NearRepeatOptions {
            band_m: 100.0,
            max_distance_m: 500.0,
            band_days: 7.0,
            max_days: 42.0,
            same_location: true,
            n_perm: 999,
            seed: 0,
            alpha: 0.05,
            uncertain_times: UncertainTimes::LeaveOut,
            max_window_days: super::events::DEFAULT_MAX_WINDOW_DAYS,
        }
    }
}

impl Params for NearRepeatOptions {
    const NAME: &'static str = "nearRepeatStart";
    fn fields() -> Vec<Field> {
        let mut f = vec![
            Field::number("band_m", Some("m"), "width of each distance band")
                .scale_length(crate::params::EXTENT_FACTOR),
            Field::number(
                "max_distance_m",
                Some("m"),
                "largest distance in the table; pairs further apart count only in the margins",
            )
            .scale_length(crate::params::EXTENT_FACTOR),
            Field::number("band_days", Some("days"), "width of each time band").range(0.01, 3660.0),
            Field::number(
                "max_days",
                Some("days"),
                "longest time gap in the table; pairs further apart in time count only in the margins",
            )
            .range(0.01, 36600.0),
            Field::boolean(
                "same_location",
                "a first distance band of pairs at exactly the same location (needs exact addresses)",
            ),
            Field::integer("n_perm", "random permutations of the times").range(1.0, 9999.0),
            Field::seed("seed of the permutations"),
            Field::number("alpha", None, "level for the q-values and the global test")
                .above(0.0, Some(0.5)),
        ];
        f.extend(super::time_fields());
        f
    }
    fn check(&self) -> Result<(), AnalysisError> {
        if self.max_distance_m < self.band_m {
            return Err(bad("max_distance_m", "must be at least band_m (one band)"));
        }
        if self.max_days < self.band_days {
            return Err(bad("max_days", "must be at least band_days (one band)"));
        }
        self.bands().check()
    }
}

impl NearRepeatOptions {
    pub fn bands(&self) -> Bands {
        Bands::near_repeat(
            self.same_location,
            self.band_m,
            self.max_distance_m,
            self.band_days,
            self.max_days,
        )
    }
}

/// One band of the table, with its label.
#[derive(Debug, Clone, Serialize)]
pub struct Band {
    /// Lower end (exclusive, except the first band and "same location").
    pub from: f64,
    /// Upper end (inclusive).
    pub to: f64,
    pub label: String,
    /// Pairs in this band (of all N pairs).
    pub pairs: u64,
}

/// One cell of the table.
#[derive(Debug, Clone, Serialize)]
pub struct Cell {
    /// Distance band (row) and time band (column).
    pub space: usize,
    pub time: usize,
    pub observed: u32,
    /// Exact permutation expectation n_s·n_t/N.
    pub expected: f64,
    /// Mean of the permuted counts.
    pub sim_mean: f64,
    /// observed / expected; `None` when expected is 0.
    pub ratio: Option<f64>,
    /// (observed − expected)/SD; `None` when the count cannot vary.
    pub z: Option<f64>,
    pub p_value: f64,
    /// Benjamini–Hochberg q over all cells.
    pub q_value: f64,
    /// q ≤ alpha and more pairs than expected.
    pub raised: bool,
}

/// The max-statistic test over the whole table.
#[derive(Debug, Clone, Serialize)]
pub struct GlobalTest {
    /// Largest standardised cell of the data; `None` when no cell can vary.
    pub max_z: Option<f64>,
    /// Its cell: [distance band, time band].
    pub at: Option<[usize; 2]>,
    pub p_value: f64,
    pub at_least_as_extreme: usize,
}

/// What the table says.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NearRepeatOutcome {
    /// Neither the global test nor any cell after correction.
    NoPattern,
    /// Some cells hold more pairs than chance after the correction, or the
    /// global test rejects.
    Raised,
}

/// Result of the near-repeat table.
#[derive(Debug, Clone, Serialize)]
pub struct NearRepeatResult {
    pub space_bands: Vec<Band>,
    pub time_bands: Vec<Band>,
    /// Row-major: distance band, then time band.
    pub cells: Vec<Cell>,
    pub global: GlobalTest,
    pub n_events: usize,
    /// All pairs, n(n − 1)/2.
    pub n_pairs: u64,
    /// Pairs within the largest distance.
    pub close_pairs: usize,
    pub n_perm: usize,
    pub seed: u64,
    pub alpha: f64,
    pub outcome: NearRepeatOutcome,
    /// The plain sentence on the raised cells near the origin (None when
    /// there are none).
    pub reach: Option<String>,
    pub verdict: String,
    pub time_use: TimeUseReport,
    pub caveats: Vec<String>,
    pub warnings: Vec<String>,
}

fn fmt_len(v: f64) -> String {
    crate::params::num((v * 100.0).round() / 100.0)
}

pub(crate) fn space_bands(e: &PairEngine) -> Vec<Band> {
    let b = e.bands();
    let mut out = Vec::new();
    let mut m = e.space_margin().iter().copied();
    if b.same_location {
        out.push(Band {
            from: 0.0,
            to: 0.0,
            label: "same location".into(),
            pairs: m.next().unwrap_or(0),
        });
    }
    let mut lo = 0.0;
    for &hi in &b.space_edges {
        out.push(Band {
            from: lo,
            to: hi,
            label: format!("{}\u{2013}{} m", fmt_len(lo), fmt_len(hi)),
            pairs: m.next().unwrap_or(0),
        });
        lo = hi;
    }
    out
}

pub(crate) fn time_bands(e: &PairEngine) -> Vec<Band> {
    let mut lo = 0.0;
    e.bands()
        .time_edges
        .iter()
        .zip(e.time_margin())
        .map(|(&hi, &pairs)| {
            let b = Band {
                from: lo,
                to: hi,
                label: format!("{}\u{2013}{} days", fmt_len(lo), fmt_len(hi)),
                pairs,
            };
            lo = hi;
            b
        })
        .collect()
}

/// The near-repeat table as a job (progress, cancel, helpers).
#[derive(Debug, Clone)]
pub struct NearRepeatJob {
    pub run: PairRun,
    opts: NearRepeatOptions,
    time_use: TimeUseReport,
}

impl NearRepeatJob {
    /// From the timed events (at least 3).
    pub fn new(ev: &TimedEvents, opts: &NearRepeatOptions) -> Result<NearRepeatJob, AnalysisError> {
        opts.validate_in(None)?;
        if ev.len() < 3 {
            return Err(AnalysisError::TooFewPoints {
                needed: 3,
                found: ev.len(),
            });
        }
        let engine = PairEngine::new(&ev.x, &ev.y, &ev.t, opts.bands())?;
        Ok(NearRepeatJob {
            run: PairRun::new(engine, opts.seed, opts.n_perm),
            opts: opts.clone(),
            time_use: ev.report(),
        })
    }

    pub fn finish(mut self) -> NearRepeatResult {
        let s = self.run.summarise();
        let e = &self.run.engine;
        let nt = e.bands().n_time();
        let alpha = self.opts.alpha;
        let cells: Vec<Cell> = (0..e.cells())
            .map(|c| {
                let (o, ex) = (e.observed()[c], s.expected[c]);
                let ratio = (ex > 0.0).then(|| o as f64 / ex);
                Cell {
                    space: c / nt,
                    time: c % nt,
                    observed: o,
                    expected: ex,
                    sim_mean: s.sim_mean[c],
                    ratio,
                    z: (s.sd[c] > 0.0).then(|| (o as f64 - ex) / s.sd[c]),
                    p_value: s.p[c],
                    q_value: s.q[c],
                    raised: s.q[c] <= alpha && o as f64 > ex,
                }
            })
            .collect();
        let sb = space_bands(e);
        let tb = time_bands(e);
        let global = GlobalTest {
            max_z: s.global.map(|g| g.0),
            at: s.global.map(|g| [g.1 / nt, g.1 % nt]),
            p_value: s.global_p,
            at_least_as_extreme: s.global_ge,
        };
        let reach = reach_sentence(&cells, &sb, &tb, self.opts.same_location);
        let n_raised = cells.iter().filter(|c| c.raised).count();
        let outcome = if n_raised > 0 || global.p_value <= alpha {
            NearRepeatOutcome::Raised
        } else {
            NearRepeatOutcome::NoPattern
        };
        let m = self.run.n_perm;
        let gtext = format!(
            "test over the whole table: p = {}, {m} permutations",
            fmt_p(global.p_value)
        );
        let verdict = match (outcome, &reach) {
            (NearRepeatOutcome::NoPattern, _) => format!(
                "No sign that events close in space are also close in time beyond chance: no cell holds more pairs than expected after the false-discovery correction (q \u{2264} {alpha}), and the {gtext}."
            ),
            (NearRepeatOutcome::Raised, Some(r)) => format!(
                "{r} (q \u{2264} {alpha}: {n_raised} of {} cells raised; {gtext}).",
                cells.len()
            ),
            (NearRepeatOutcome::Raised, None) if n_raised > 0 => format!(
                "{n_raised} of {} cells hold more pairs than chance gives (q \u{2264} {alpha}), but not next to \"close and soon\": the raised cells are further out in distance or time ({gtext}).",
                cells.len()
            ),
            (NearRepeatOutcome::Raised, None) => format!(
                "The table as a whole departs from chance ({gtext}), but no single cell stays raised after the false-discovery correction (q \u{2264} {alpha})."
            ),
        };
        let mut warnings = Vec::new();
        let ntu = self.time_use.events_used;
        if e.close_pairs() == 0 {
            warnings.push(format!(
                "No two events are within {} m of each other: the table is empty.",
                fmt_len(self.opts.max_distance_m)
            ));
        }
        if ntu < 30 {
            warnings.push(
                "Fewer than 30 events: each cell holds few pairs, and the table can say little."
                    .into(),
            );
        }
        if m < 99 {
            warnings.push(format!(
                "Only {m} permutations: the smallest possible p is {}; 999 is usual.",
                fmt_p(1.0 / (m + 1) as f64)
            ));
        }
        NearRepeatResult {
            space_bands: sb,
            time_bands: tb,
            cells,
            global,
            n_events: e.len(),
            n_pairs: e.n_pairs(),
            close_pairs: e.close_pairs(),
            n_perm: m,
            seed: self.run.seed,
            alpha,
            outcome,
            reach,
            verdict,
            time_use: self.time_use,
            caveats: caveats(),
            warnings,
        }
    }
}

/// The table as CSV for sharing: one row per cell with its band labels
/// and limits, O, E, the simulated mean, O/E, p and q. No location and no
/// event: only counts of pairs.
pub fn near_repeat_csv(r: &NearRepeatResult) -> String {
    let mut out = String::from(
        "distance_band,time_band,distance_from_m,distance_to_m,days_from,days_to,observed,expected,simulated_mean,ratio,p_value,q_value,raised\n",
    );
    let num = |v: f64| format!("{}", (v * 1e6).round() / 1e6);
    for c in &r.cells {
        let (Some(s), Some(t)) = (r.space_bands.get(c.space), r.time_bands.get(c.time)) else {
            continue;
        };
        out.push_str(&format!(
            "\"{}\",\"{}\",{},{},{},{},{},{},{},{},{},{},{}\n",
            s.label,
            t.label,
            num(s.from),
            num(s.to),
            num(t.from),
            num(t.to),
            c.observed,
            num(c.expected),
            num(c.sim_mean),
            c.ratio.map(num).unwrap_or_default(),
            num(c.p_value),
            num(c.q_value),
            if c.raised { "yes" } else { "no" }
        ));
    }
    out
}

fn caveats() -> Vec<String> {
    vec![
        "A near-repeat pattern says events close in space tend to come close in time; it does not say why (the same cause, the same offender, the same exposure, or how the data were recorded).".into(),
        "Each cell's p is for that cell alone: among 100 cells about 5 reach p \u{2264} 0.05 by chance. Read the q-values (false discovery rate) and the test over the whole table.".into(),
        "\"Same location\" needs exact addresses: masked, rounded or jittered locations move pairs out of that band.".into(),
        "Dates are when events were recorded: reporting delays and events known only within a window blur the time bands.".into(),
        "The table shows pairs of confidential events: disclosure rules apply before it is shared.".into(),
    ]
}

/// "after an event, the risk of another within 200 m stays raised for about
/// 14 days": from the raised cells touching the origin (first distance band
/// after "same location", first time band), extended outwards while they
/// stay raised.
fn reach_sentence(cells: &[Cell], sb: &[Band], tb: &[Band], same: bool) -> Option<String> {
    let nt = tb.len();
    let raised = |a: usize, b: usize| cells.get(a * nt + b).is_some_and(|c| c.raised);
    let first = usize::from(same);
    let mut parts = Vec::new();
    if first < sb.len() && raised(first, 0) {
        let mut a = first;
        while a + 1 < sb.len() && raised(a + 1, 0) {
            a += 1;
        }
        let mut b = 0;
        while b + 1 < nt && raised(first, b + 1) {
            b += 1;
        }
        parts.push(format!(
            "after an event, the risk of another within {} m stays raised for about {} days",
            fmt_len(sb[a].to),
            fmt_len(tb[b].to)
        ));
    }
    if same && raised(0, 0) {
        let mut b = 0;
        while b + 1 < nt && raised(0, b + 1) {
            b += 1;
        }
        parts.push(format!(
            "at the same location the risk stays raised for about {} days",
            fmt_len(tb[b].to)
        ));
    }
    if parts.is_empty() {
        return None;
    }
    let s = parts.join("; ");
    let mut c = s.chars();
    let cap: String = c
        .next()
        .map(|f| f.to_uppercase().chain(c).collect())
        .unwrap_or_default();
    Some(cap)
}

// ---------------------------------------------------------------------------
// The Knox test.

/// Options of the Knox test (`knoxStart` in the JS API).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct KnoxOptions {
    /// Close in space: distance ≤ this (metres).
    pub distance_m: f64,
    /// Close in time: gap ≤ this (days).
    pub days: f64,
    pub n_perm: usize,
    pub seed: u64,
    pub alpha: f64,
    pub uncertain_times: UncertainTimes,
    pub max_window_days: f64,
}

impl Default for KnoxOptions {
    fn default() -> Self {
        KnoxOptions {
            distance_m: 100.0,
            days: 7.0,
            n_perm: 999,
            seed: 0,
            alpha: 0.05,
            uncertain_times: UncertainTimes::LeaveOut,
            max_window_days: super::events::DEFAULT_MAX_WINDOW_DAYS,
        }
    }
}

impl Params for KnoxOptions {
    const NAME: &'static str = "knoxStart";
    fn fields() -> Vec<Field> {
        let mut f = vec![
            Field::number(
                "distance_m",
                Some("m"),
                "close in space: at most this far apart",
            )
            .extent(crate::params::EXTENT_FACTOR)
            .at_least(0.0),
            Field::number(
                "days",
                Some("days"),
                "close in time: at most this many days apart",
            )
            .range(0.0, 36600.0),
            Field::integer("n_perm", "random permutations of the times").range(1.0, 9999.0),
            Field::seed("seed of the permutations"),
            Field::number(
                "alpha",
                None,
                "level at which the verdict calls a p-value small",
            )
            .above(0.0, Some(0.5)),
        ];
        f.extend(super::time_fields());
        f
    }
}

/// Result of the Knox test.
#[derive(Debug, Clone, Serialize)]
pub struct KnoxResult {
    pub distance_m: f64,
    pub days: f64,
    /// Pairs close in both.
    pub x: u32,
    /// Pairs close in space, in time, and all pairs.
    pub n_s: u64,
    pub n_t: u64,
    pub n_pairs: u64,
    /// n_s·n_t/N.
    pub expected: f64,
    /// x / expected; `None` when expected is 0.
    pub ratio: Option<f64>,
    /// P(Poisson(expected) ≥ x) (Knox's approximation).
    pub p_poisson: f64,
    /// Permutation rank p (Mantel 1967).
    pub p_value: f64,
    pub at_least_as_extreme: usize,
    pub sim_mean: f64,
    pub n_events: usize,
    pub n_perm: usize,
    pub seed: u64,
    pub alpha: f64,
    pub verdict: String,
    pub time_use: TimeUseReport,
    pub caveats: Vec<String>,
}

/// The Knox test as a job.
#[derive(Debug, Clone)]
pub struct KnoxJob {
    pub run: PairRun,
    opts: KnoxOptions,
    time_use: TimeUseReport,
}

impl KnoxJob {
    pub fn new(ev: &TimedEvents, opts: &KnoxOptions) -> Result<KnoxJob, AnalysisError> {
        opts.validate_in(None)?;
        if ev.len() < 3 {
            return Err(AnalysisError::TooFewPoints {
                needed: 3,
                found: ev.len(),
            });
        }
        let engine = PairEngine::new(&ev.x, &ev.y, &ev.t, Bands::knox(opts.distance_m, opts.days))?;
        Ok(KnoxJob {
            run: PairRun::new(engine, opts.seed, opts.n_perm),
            opts: opts.clone(),
            time_use: ev.report(),
        })
    }

    pub fn finish(mut self) -> KnoxResult {
        let s = self.run.summarise();
        let e = &self.run.engine;
        let x = e.observed()[0];
        let ex = s.expected[0];
        let p = s.p[0];
        let alpha = self.opts.alpha;
        let (d, t) = (fmt_len(self.opts.distance_m), fmt_len(self.opts.days));
        let ratio = (ex > 0.0).then(|| x as f64 / ex);
        let verdict = if p <= alpha && x as f64 > ex {
            format!(
                "More pairs of events are within {d} m and {t} days of each other than chance gives: {x} against {} expected (permutation p = {}).",
                fmt_len(ex),
                fmt_p(p)
            )
        } else {
            format!(
                "Pairs within {d} m and {t} days: {x} against {} expected; no more than chance gives (permutation p = {}).",
                fmt_len(ex),
                fmt_p(p)
            )
        };
        KnoxResult {
            distance_m: self.opts.distance_m,
            days: self.opts.days,
            x,
            n_s: e.space_margin()[0],
            n_t: e.time_margin()[0],
            n_pairs: e.n_pairs(),
            expected: ex,
            ratio,
            p_poisson: poisson_upper(x as u64, ex),
            p_value: p,
            at_least_as_extreme: s.ge[0],
            sim_mean: s.sim_mean[0],
            n_events: e.len(),
            n_perm: self.run.n_perm,
            seed: self.run.seed,
            alpha,
            verdict,
            time_use: self.time_use,
            caveats: vec![
                "The Poisson p is Knox's approximation; it is poor when close pairs share events or are not rare. The permutation p is the test.".into(),
                "The result depends on the distance and the time chosen: choose them before looking at the data.".into(),
            ],
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ev(x: &[f64], y: &[f64], t: &[f64]) -> TimedEvents {
        TimedEvents::from_xyt(x.to_vec(), y.to_vec(), t.to_vec()).unwrap()
    }

    #[test]
    fn time_margin_matches_all_pairs() {
        let t = [0.0, 1.0, 1.0, 3.5, 7.0, 7.0, 20.0];
        let edges = [0.0, 1.0, 3.5, 7.0];
        let m = time_margin(&t, &edges);
        let mut brute = [0u64; 4];
        for i in 0..t.len() {
            for j in i + 1..t.len() {
                let g: f64 = (t[i] - t[j]).abs();
                if let Some(k) = edges.iter().position(|&e| g <= e) {
                    brute[k] += 1;
                }
            }
        }
        assert_eq!(m, brute);
    }

    #[test]
    fn each_pair_in_one_cell_with_half_open_bands() {
        // Gaps exactly on band edges go to the lower band: [0,7], (7,14].
        let x = [0.0, 0.0, 100.0, 100.0, 250.0];
        let y = [0.0; 5];
        let t = [0.0, 7.0, 14.0, 0.0, 0.0];
        let b = Bands::near_repeat(true, 100.0, 300.0, 7.0, 14.0);
        let e = PairEngine::new(&x, &y, &t, b).unwrap();
        // Distance bands: same, (0,100], (100,200], (200,300].
        assert_eq!(e.bands().n_space(), 4);
        let o = e.observed();
        let at = |a: usize, b: usize| o[a * 2 + b];
        // (0,1): d 0, gap 7 -> same, [0,7].
        // (2,3): d 0, gap 14 -> same, (7,14].
        assert_eq!(at(0, 0), 1);
        assert_eq!(at(0, 1), 1);
        // (0,2),(0,3),(1,2),(1,3): d 100; gaps 14, 0, 7, 7.
        assert_eq!(at(1, 0), 3);
        assert_eq!(at(1, 1), 1);
        // (2,4),(3,4): d 150; gaps 14, 0. (0,4),(1,4): d 250; gaps 0, 7.
        assert_eq!(at(2, 0), 1);
        assert_eq!(at(2, 1), 1);
        assert_eq!(at(3, 0), 2);
        assert_eq!(o.iter().sum::<u32>(), 10);
        assert_eq!(e.space_margin(), &[2, 4, 2, 2]);
    }

    #[test]
    fn batch_loop_agrees_with_the_plain_rule() {
        // Whole-day times and edges that are not whole: many gaps on edges.
        let n = 80;
        let x: Vec<f64> = (0..n).map(|i| (i * 37 % 101) as f64 * 7.0).collect();
        let y: Vec<f64> = (0..n).map(|i| (i * 53 % 97) as f64 * 7.0).collect();
        let t: Vec<f64> = (0..n).map(|i| (i * 29 % 61) as f64).collect();
        for (w, max) in [(3.0, 21.0), (0.1, 1.0), (2.5, 11.0), (7.0, 7.0)] {
            let b = Bands::near_repeat(true, 70.0, 350.0, w, max);
            let e = PairEngine::new(&x, &y, &t, b).unwrap();
            let nt = e.bands().n_time();
            let mut want = vec![0u32; e.cells()];
            for i in 0..n {
                for p in e.start[i] as usize..e.start[i + 1] as usize {
                    let j = e.other[p] as usize;
                    if let Some(c) = e.time_band((e.t[i] - e.t[j]).abs()) {
                        want[e.band[p] as usize * nt + c] += 1;
                    }
                }
            }
            assert_eq!(e.observed(), &want[..], "w = {w}");
            // And every pair within the time maximum is counted somewhere.
            let within = (0..n)
                .flat_map(|i| (e.start[i]..e.start[i + 1]).map(move |p| (i, p as usize)))
                .filter(|&(i, p)| (e.t[i] - e.t[e.other[p] as usize]).abs() <= max)
                .count();
            assert_eq!(want.iter().sum::<u32>() as usize, within);
        }
    }

    #[test]
    fn bh_matches_the_step_up_rule() {
        // Worked by hand from q_(i) = min_{j≥i} min(1, m p_(j)/j), m = 5.
        let p = [0.01, 0.04, 0.03, 0.5, 0.02];
        let q = bh_q_values(&p);
        let want = [0.05, 0.05, 0.05, 0.5, 0.05];
        for (a, b) in q.iter().zip(want) {
            assert!((a - b).abs() < 1e-12, "{q:?}");
        }
    }

    #[test]
    fn poisson_tail_small_cases() {
        // P(Poisson(1) ≥ 1) = 1 − e^{-1}; P(Poisson(2) ≥ 2) = 1 − 3e^{-2}.
        assert!((poisson_upper(1, 1.0) - (1.0 - (-1.0f64).exp())).abs() < 1e-12);
        assert!((poisson_upper(2, 2.0) - (1.0 - 3.0 * (-2.0f64).exp())).abs() < 1e-12);
        assert_eq!(poisson_upper(0, 3.0), 1.0);
    }

    #[test]
    fn split_runs_equal_one_run() {
        let n = 60;
        let x: Vec<f64> = (0..n).map(|i| (i * 37 % 101) as f64 * 10.0).collect();
        let y: Vec<f64> = (0..n).map(|i| (i * 53 % 97) as f64 * 10.0).collect();
        let t: Vec<f64> = (0..n).map(|i| (i * 29 % 89) as f64).collect();
        let o = NearRepeatOptions {
            band_m: 100.0,
            max_distance_m: 300.0,
            band_days: 5.0,
            max_days: 20.0,
            n_perm: 49,
            seed: 5,
            ..Default::default()
        };
        let a = NearRepeatJob::new(&ev(&x, &y, &t), &o).unwrap();
        let mut b = a.clone();
        let mut c = a.clone();
        let mut d = a.clone();
        b.run.run_batch(49);
        c.run.run_batch(7);
        c.run.run_batch(30);
        let share = c.run.share();
        let piece = share.simulate_range(37, 60);
        c.run.add_simulated(37, &piece).unwrap();
        d.run.run_parallel(3);
        assert!(c.run.add_simulated(10, &piece).is_err());
        let (rb, rc, rd) = (b.finish(), c.finish(), d.finish());
        let key = |r: &NearRepeatResult| {
            r.cells
                .iter()
                .map(|c| (c.observed, c.p_value, c.sim_mean))
                .collect::<Vec<_>>()
        };
        assert_eq!(key(&rb), key(&rc));
        assert_eq!(key(&rb), key(&rd));
        assert_eq!(rb.global.p_value, rc.global.p_value);
        assert_eq!(rb.global.p_value, rd.global.p_value);
    }

    #[test]
    fn refuses_bad_options_and_too_many_cells() {
        let e = ev(&[0.0, 1.0, 2.0], &[0.0; 3], &[0.0, 1.0, 2.0]);
        let o = NearRepeatOptions {
            band_m: 1.0,
            max_distance_m: 1000.0,
            ..Default::default()
        };
        let err = NearRepeatJob::new(&e, &o).err().unwrap().to_string();
        assert!(err.contains("bands"), "{err}");
        let o = NearRepeatOptions {
            max_days: 1.0,
            band_days: 7.0,
            ..Default::default()
        };
        assert!(NearRepeatJob::new(&e, &o).is_err());
        let v: Result<NearRepeatOptions, _> = serde_json::from_str(r#"{"band":3}"#);
        assert!(v.is_err());
        let o = KnoxOptions {
            n_perm: 0,
            ..Default::default()
        };
        assert!(KnoxJob::new(&e, &o).is_err());
        let two = ev(&[0.0, 1.0], &[0.0; 2], &[0.0, 1.0]);
        assert!(KnoxJob::new(&two, &KnoxOptions::default()).is_err());
    }

    #[test]
    fn too_many_pairs_are_refused_with_a_message() {
        // 6,400 events on one spot: 20,476,800 pairs at distance 0.
        let n = 6400;
        let e = PairEngine::new(
            &vec![1.0; n],
            &vec![1.0; n],
            &vec![0.0; n],
            Bands::knox(10.0, 1.0),
        )
        .err()
        .unwrap()
        .to_string();
        assert!(e.contains("max_distance_m") && e.contains("pairs"), "{e}");
    }

    #[test]
    fn identical_points_and_zero_gaps() {
        // Four events at one place on one day: every pair is in the
        // "same location" × first time band cell, and the count cannot vary.
        let e = ev(&[5.0; 4], &[5.0; 4], &[3.0; 4]);
        let o = NearRepeatOptions {
            n_perm: 19,
            ..Default::default()
        };
        let r = NearRepeatJob::new(&e, &o).unwrap().finish();
        assert_eq!(r.cells[0].observed, 6);
        assert_eq!(r.cells[0].expected, 6.0);
        assert_eq!(r.cells[0].p_value, 1.0);
        assert!(r.global.max_z.is_none());
        assert_eq!(r.global.p_value, 1.0);
        assert_eq!(r.outcome, NearRepeatOutcome::NoPattern);
        assert!(r.cells.iter().all(|c| c.ratio.is_none_or(f64::is_finite)));
    }
}
