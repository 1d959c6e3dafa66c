//! Emerging clusters: the space–time permutation scan statistic.
//!
//! Kulldorff, Heffernan, Hartman, Assunção & Mostashari (2005), "A
//! space–time permutation scan statistic for disease outbreak detection",
//! PLoS Medicine 2(3):e59, doi:10.1371/journal.pmed.0020059. Prospective
//! use and the recurrence interval: Kulldorff (2001), "Prospective time
//! periodic geographical disease surveillance using a scan statistic",
//! Journal of the Royal Statistical Society A 164(1):61–72.
//!
//! # Data
//! Events with one time each ([`TimedEvents`]); times are **floored to
//! whole days** (the calendar day in UTC of days since 1970). Events at
//! exactly the same coordinates share a location. `c_zd` = events at
//! location z on day d, `C` = all events.
//!
//! # Cylinders
//! A cylinder is a circle × an interval of days. Circles are centred on
//! every distinct location and grow through the locations by distance
//! ([`crate::scan::kulldorff`]'s growing circles: locations at tied
//! distances enter together) until the circle would hold more than
//! `max_share` of the events or, with `max_radius_m`, reach beyond it.
//! Intervals are 1 to `max_days` days long, anywhere in the data
//! (retrospective) or ending on the last day of the data (prospective).
//!
//! # Statistic
//! Expected count with no space–time interaction, from the margins:
//! `μ_A = N_circle · N_interval / C` (`N_circle` = events at the circle's
//! locations on any day, `N_interval` = events anywhere on the interval's
//! days). For `c_A > μ_A`:
//! `LLR = c·ln(c/μ) + (C−c)·ln((C−c)/(C−μ))` ([`crate::scan::llr_poisson`]),
//! else 0. The most likely cluster has the largest LLR.
//!
//! # Null hypothesis and p-values
//! Replicate j permutes the days among the events
//! ([`crate::spacetime::permutation`]`(n, seed, j)`): both margins stay as
//! observed, so every cylinder's μ is the same in every replicate.
//! `p = (1 + #{T_j ≥ T_obs}) / (m + 1)` (Kulldorff et al. 2005; the rank form).
//!
//! **Secondary clusters**: the best cylinder of each centre, taken in
//! decreasing LLR order, kept when it shares no (location, day) with a
//! cluster already kept, i.e. when it has no location in common with it or
//! its days do not overlap. Their p-values use the null distribution of the
//! maximum (conservative).
//!
//! # Algorithm
//! For a fixed interval and count `c`, the LLR falls as `μ` rises, i.e. as
//! the circle grows. So a replicate only needs, for each interval and each
//! count `c`, the smallest `N_circle` of any circle whose count in that
//! interval is `c`. Walking each centre's circle outwards, an event of day
//! `d` that enters raises the count of every interval holding `d` by one,
//! and that (interval, count) takes the circle's `N` if smaller. The
//! maximum is then one LLR per (interval, count) reached. Work per
//! replicate: (events entering circles) × (intervals holding a day), about
//! `M` per event in prospective mode and `M²/2` retrospective
//! (`M` = `max_days`), which is why the longest interval is the option that
//! costs most.

use crate::error::AnalysisError;
use crate::params::{bad, Field, Params};
use crate::scan::kulldorff::{growing_circles, locate_distinct};
use crate::scan::llr_poisson;
use crate::spacetime::events::TimeUseReport;
use crate::spacetime::{permutation, time_fields, TimedEvents, UncertainTimes};
use serde::{Deserialize, Serialize};

/// Which intervals are scanned.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum StScanMode {
    /// Every interval of up to `max_days` days in the data: were there
    /// outbreaks at any time?
    #[default]
    Retrospective,
    /// Only intervals that end on the last day: is one going on now?
    Prospective,
}

/// Options of the space–time permutation scan (`spaceTimeScanStart`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct StScanOptions {
    pub mode: StScanMode,
    /// Largest circle, as a share of all events (default 0.5).
    pub max_share: f64,
    /// Largest circle radius in metres (none by default).
    pub max_radius_m: Option<f64>,
    /// Longest interval, days (default 30).
    pub max_days: usize,
    /// Permutations of the days (default 999).
    pub n_sim: usize,
    pub seed: u64,
    /// Secondary clusters reported at most (default 10).
    pub max_secondary: usize,
    /// Prospective: how often the analysis is repeated, days (default 7),
    /// for the recurrence interval.
    pub repeat_days: f64,
    pub uncertain_times: UncertainTimes,
    pub max_window_days: f64,
}

impl Default for StScanOptions {
    fn default() -> Self {
        StScanOptions {
            mode: StScanMode::Retrospective,
            max_share: 0.5,
            max_radius_m: None,
            max_days: 30,
            n_sim: 999,
            seed: 20_250_601,
            max_secondary: 10,
            repeat_days: 7.0,
            uncertain_times: UncertainTimes::LeaveOut,
            max_window_days: super::events::DEFAULT_MAX_WINDOW_DAYS,
        }
    }
}

/// Longest interval accepted, days.
pub const MAX_DAYS_LIMIT: usize = 366;

impl Params for StScanOptions {
    const NAME: &'static str = "spaceTimeScanStart";
    fn fields() -> Vec<Field> {
        let mut f = vec![
            Field::choice(
                "mode",
                &["retrospective", "prospective"],
                "retrospective: intervals anywhere in the data (were there outbreaks?); prospective: only intervals ending on the last day (is one going on now?)",
            ),
            Field::number("max_share", None, "largest circle, as a share of all events")
                .above(0.0, Some(0.5)),
            Field::number("max_radius_m", Some("m"), "largest circle radius; empty = no limit but the share")
                .above(0.0, None)
                .extent(2.0)
                .optional(),
            Field::integer("max_days", "longest interval, days").range(1.0, MAX_DAYS_LIMIT as f64),
            Field::integer("n_sim", "permutations of the days").range(1.0, 99_999.0),
            Field::seed("seed of the permutations"),
            Field::integer("max_secondary", "secondary clusters reported at most").range(0.0, 1000.0),
            Field::number(
                "repeat_days",
                Some("days"),
                "prospective: the analysis is repeated every this many days (for the recurrence interval)",
            )
            .range(1.0, 366.0),
        ];
        f.extend(time_fields());
        f
    }
}

/// Entries of the (interval, count) table at most (memory of one worker).
const MAX_TABLE: usize = 16_000_000;

/// What a helper worker needs to run permutations: no coordinates, only
/// location numbers, days and the circles as lists of location numbers.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StScanShare {
    /// Location number of each event.
    pub loc: Vec<u32>,
    /// Day of each event (0 = first day of the data).
    pub day: Vec<u32>,
    pub n_days: usize,
    /// Circles: `list[start[i]..start[i+1]]`, nearest first.
    pub start: Vec<usize>,
    pub list: Vec<u32>,
    /// Events in the circle at the end of each entry's tie group.
    pub group_n: Vec<u32>,
    pub options: StScanOptions,
}

/// The permutation part of a scan (built from a share or by the job).
#[derive(Debug, Clone)]
pub struct StScanSimulator {
    s: StScanShare,
    /// Events per location.
    loc_total: Vec<u32>,
    /// Longest interval used (`max_days` capped at the days in the data).
    m: usize,
    /// Events per interval, and where each interval's counts start in the table.
    t_int: Vec<u32>,
    off: Vec<usize>,
    table_len: usize,
}

/// One cluster reported.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StCluster {
    /// 0 for the most likely cluster, then secondary clusters.
    pub rank: usize,
    pub centre_x: f64,
    pub centre_y: f64,
    /// Distance from the centre to the farthest location included, metres.
    pub radius_m: f64,
    pub n_locations: usize,
    /// Days since 1970-01-01 of the first and last day.
    pub start_day: f64,
    pub end_day: f64,
    /// The same as dates (YYYY-MM-DD, UTC).
    pub start_date: String,
    pub end_date: String,
    pub days: usize,
    pub observed: u64,
    pub expected: f64,
    /// observed / expected.
    pub ratio: f64,
    pub llr: f64,
    pub p_value: f64,
    /// Prospective mode: `repeat_days / p`, days.
    pub recurrence_days: Option<f64>,
    /// Indices (among the study's events) of the events in the cylinder.
    pub events: Vec<usize>,
}

/// The scan's result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StScanResult {
    pub mode: StScanMode,
    pub n_sim: usize,
    pub seed: u64,
    pub max_share: f64,
    pub max_radius_m: Option<f64>,
    /// Longest interval asked for and used (capped at the days in the data).
    pub max_days: usize,
    pub max_days_used: usize,
    pub repeat_days: f64,
    pub n_events: usize,
    pub n_locations: usize,
    pub first_date: String,
    pub last_date: String,
    pub n_days: usize,
    pub n_circles: usize,
    pub n_intervals: usize,
    pub statistic: f64,
    pub p_value: f64,
    /// Prospective: `repeat_days / p` of the most likely cluster, days.
    pub recurrence_days: Option<f64>,
    pub clusters: Vec<StCluster>,
    pub null_maxima: Vec<f64>,
    pub verdict: String,
    /// "clusters", "none" (nothing beyond chance) or "no_excess".
    pub outcome: String,
    pub caveats: Vec<String>,
    pub times: TimeUseReport,
}

/// Progress after a batch.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct StScanProgress {
    pub done: usize,
    pub total: usize,
}

/// A scan whose permutations run in batches.
#[derive(Debug, Clone)]
pub struct StScanJob {
    sim: StScanSimulator,
    x: Vec<f64>,
    y: Vec<f64>,
    /// Index among the study's events of each event used.
    index: Vec<usize>,
    first_day: i64,
    dist_at: Vec<f64>,
    /// Group end position of each list entry.
    group_end: Vec<usize>,
    /// Best cylinder per centre of the data: (llr, group end, end day, length).
    best: Vec<(f64, usize, usize, usize)>,
    observed_max: f64,
    null_max: Vec<f64>,
    times: TimeUseReport,
}

impl StScanSimulator {
    /// Prepares the tables of a shared scan (checks it first).
    pub fn new(share: StScanShare) -> Result<StScanSimulator, AnalysisError> {
        let s = share;
        s.options.validate_in(None)?;
        let n = s.loc.len();
        let nloc = s.start.len().saturating_sub(1);
        if s.day.len() != n
            || n == 0
            || s.list.len() != s.group_n.len()
            || s.start.first() != Some(&0)
            || s.start.last() != Some(&s.list.len())
            || s.start.windows(2).any(|w| w[0] > w[1])
            || s.loc.iter().any(|&z| z as usize >= nloc)
            || s.list.iter().any(|&z| z as usize >= nloc)
            || s.day.iter().any(|&d| d as usize >= s.n_days)
        {
            return Err(bad("share", "the shared scan is inconsistent"));
        }
        let mut loc_total = vec![0u32; nloc];
        for &z in &s.loc {
            loc_total[z as usize] += 1;
        }
        let mut day_total = vec![0u32; s.n_days];
        for &d in &s.day {
            day_total[d as usize] += 1;
        }
        let m = s.options.max_days.min(s.n_days);
        let dd = s.n_days;
        let mut prefix = vec![0u32; dd + 1];
        for d in 0..dd {
            prefix[d + 1] = prefix[d] + day_total[d];
        }
        let n_int = match s.options.mode {
            StScanMode::Retrospective => dd * m,
            StScanMode::Prospective => m,
        };
        let mut t_int = vec![0u32; n_int];
        let mut off = vec![0usize; n_int];
        let mut len = 0usize;
        for (i, (t, o)) in t_int.iter_mut().zip(off.iter_mut()).enumerate() {
            let (e, l) = match s.options.mode {
                StScanMode::Retrospective => (i / m, i % m + 1),
                StScanMode::Prospective => (dd - 1, i + 1),
            };
            if l > e + 1 {
                // Starts before the first day: never used.
                continue;
            }
            *t = prefix[e + 1] - prefix[e + 1 - l];
            *o = len;
            len += *t as usize + 1;
        }
        if len > MAX_TABLE {
            return Err(bad(
                "max_days",
                format!(
                    "too many intervals for this many events ({} table entries; at most {}): \
                     lower the longest interval or use the prospective mode",
                    len, MAX_TABLE
                ),
            ));
        }
        Ok(StScanSimulator {
            s,
            loc_total,
            m,
            t_int,
            off,
            table_len: len,
        })
    }

    fn n_sim(&self) -> usize {
        self.s.options.n_sim
    }

    fn interval(&self, i: usize) -> (usize, usize) {
        match self.s.options.mode {
            StScanMode::Retrospective => (i / self.m, i % self.m + 1),
            StScanMode::Prospective => (self.s.n_days - 1, i + 1),
        }
    }

    /// The LLR of a cylinder with `c` events, `n` in its circle, `t` in its interval.
    fn llr(&self, c: u32, n: u32, t: u32) -> f64 {
        let cc = self.s.loc.len() as f64;
        llr_poisson(c as f64, expected(n, t, cc), cc)
    }

    /// Walks every circle for the days `day` (one per event). Calls
    /// `visit(centre, list position, interval, count)` each time an
    /// interval's count rises.
    fn walk(&self, day: &[u32], mut visit: impl FnMut(usize, usize, usize, u32)) {
        let s = &self.s;
        let (dd, m) = (s.n_days, self.m);
        // Days of each location's events: only those in the last m days
        // in prospective mode (no other can enter a period).
        let nloc = self.loc_total.len();
        let prospective = s.options.mode == StScanMode::Prospective;
        let first_used = if prospective { (dd - m) as u32 } else { 0 };
        let mut at = vec![0usize; nloc + 1];
        for (&z, &d) in s.loc.iter().zip(day) {
            if d >= first_used {
                at[z as usize + 1] += 1;
            }
        }
        for z in 0..nloc {
            at[z + 1] += at[z];
        }
        let mut fill = at.clone();
        let mut days = vec![0u32; at[nloc]];
        for (&z, &d) in s.loc.iter().zip(day) {
            if d >= first_used {
                let f = &mut fill[z as usize];
                days[*f] = d;
                *f += 1;
            }
        }
        let mut count = vec![0u32; self.t_int.len()];
        for centre in 0..nloc {
            count.fill(0);
            for k in s.start[centre]..s.start[centre + 1] {
                let z = s.list[k] as usize;
                for &d in &days[at[z]..at[z + 1]] {
                    let d = d as usize;
                    if prospective {
                        // Intervals [dd − l, dd − 1] holding d: l ≥ dd − d.
                        for l in (dd - d)..=m {
                            let i = l - 1;
                            count[i] += 1;
                            visit(centre, k, i, count[i]);
                        }
                    } else {
                        for e in d..(d + m).min(dd) {
                            // Intervals [e − l + 1, e] holding d, within the data.
                            for l in (e - d + 1)..=m.min(e + 1) {
                                let i = e * m + l - 1;
                                count[i] += 1;
                                visit(centre, k, i, count[i]);
                            }
                        }
                    }
                }
            }
        }
    }

    /// The largest LLR over all cylinders for the days `day`
    /// (`table`: scratch of `table_len` entries).
    fn maximum(&self, day: &[u32], table: &mut [u32]) -> f64 {
        table.fill(u32::MAX);
        let gn = &self.s.group_n;
        let off = &self.off;
        let cc = self.s.loc.len() as u64;
        let t_int = &self.t_int;
        // Only an excess (c > μ) can score; the others leave the slot as it
        // was. The test is a coin toss under the null: a small table (the
        // prospective periods) is written branch free, a large one only
        // where needed (fewer writes to memory outside the cache).
        if self.table_len <= 1 << 18 {
            self.walk(day, |_, k, i, c| {
                let n = gn[k];
                let excess = c as u64 * cc > n as u64 * t_int[i] as u64;
                let slot = &mut table[off[i] + c as usize];
                *slot = (*slot).min(if excess { n } else { u32::MAX });
            });
        } else {
            self.walk(day, |_, k, i, c| {
                let n = gn[k];
                if c as u64 * cc > n as u64 * t_int[i] as u64 {
                    let slot = &mut table[off[i] + c as usize];
                    *slot = (*slot).min(n);
                }
            });
        }
        let mut top = 0.0f64;
        for (i, &t) in self.t_int.iter().enumerate() {
            let o = off[i];
            for c in 1..=t {
                let n = table[o + c as usize];
                // An excess only: c > n·t/C.
                if n != u32::MAX && c as u64 * cc > n as u64 * t as u64 {
                    top = top.max(self.llr(c, n, t));
                }
            }
        }
        top
    }

    /// The null maxima of permutations `from..to` (`to` at most `n_sim`).
    /// Permutation j depends only on the seed and j.
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<f64> {
        let to = to.min(self.n_sim());
        let n = self.s.loc.len();
        let mut table = vec![0u32; self.table_len];
        let mut day = vec![0u32; n];
        let mut out = Vec::with_capacity(to.saturating_sub(from));
        for j in from..to {
            let p = permutation(n, self.s.options.seed, j as u64);
            for (d, &src) in day.iter_mut().zip(&p) {
                *d = self.s.day[src as usize];
            }
            out.push(self.maximum(&day, &mut table));
        }
        out
    }
}

impl StScanJob {
    /// Prepares the scan of `ev` and scores the data.
    pub fn new(ev: &TimedEvents, o: &StScanOptions) -> Result<StScanJob, AnalysisError> {
        o.validate_in(None)?;
        if ev.len() < 2 {
            return Err(AnalysisError::TooFewPoints {
                needed: 2,
                found: ev.len(),
            });
        }
        let day_abs: Vec<i64> = ev.t.iter().map(|t| t.floor() as i64).collect();
        let first = day_abs.iter().copied().min().unwrap_or(0);
        let last = day_abs.iter().copied().max().unwrap_or(0);
        let n_days = (last - first + 1) as usize;
        if n_days > 100 * 366 {
            return Err(bad(
                "times",
                "the events span more than 100 years: check the date column",
            ));
        }
        let (regions, loc) = locate_distinct(&ev.x, &ev.y, &[], &[]);
        let weight: Vec<f64> = regions.cases.iter().map(|&c| c as f64).collect();
        let circles = growing_circles(
            &regions.x,
            &regions.y,
            &weight,
            o.max_share * ev.len() as f64,
            o.max_radius_m,
        )?;
        // Group end and the circle's events there, for every entry.
        let mut group_end = vec![0usize; circles.list.len()];
        let mut group_n = vec![0u32; circles.list.len()];
        for w in circles.start.windows(2) {
            let (mut end, mut nn) = (0usize, 0u32);
            for k in (w[0]..w[1]).rev() {
                if circles.pop_at[k].is_finite() {
                    end = k;
                    nn = circles.pop_at[k].round() as u32;
                }
                group_end[k] = end;
                group_n[k] = nn;
            }
        }
        let share = StScanShare {
            loc,
            day: day_abs.iter().map(|&d| (d - first) as u32).collect(),
            n_days,
            start: circles.start,
            list: circles.list,
            group_n,
            options: *o,
        };
        let sim = StScanSimulator::new(share)?;
        let mut job = StScanJob {
            sim,
            x: regions.x,
            y: regions.y,
            index: ev.index.clone(),
            first_day: first,
            dist_at: circles.dist_at,
            group_end,
            best: Vec::new(),
            observed_max: 0.0,
            null_max: Vec::with_capacity(o.n_sim),
            times: ev.report(),
        };
        job.score_observed();
        Ok(job)
    }

    fn score_observed(&mut self) {
        let sim = &self.sim;
        let nloc = self.x.len();
        let mut best = vec![(0.0f64, 0usize, 0usize, 0usize); nloc];
        let cc = sim.s.loc.len() as u64;
        let ge = &self.group_end;
        sim.walk(&sim.s.day, |centre, k, i, c| {
            let t = sim.t_int[i];
            let n = sim.s.group_n[k];
            if c as u64 * cc > n as u64 * t as u64 {
                let l = sim.llr(c, n, t);
                if l > best[centre].0 {
                    let (e, len) = sim.interval(i);
                    best[centre] = (l, ge[k], e, len);
                }
            }
        });
        self.observed_max = best.iter().map(|b| b.0).fold(0.0, f64::max);
        self.best = best;
    }

    /// The largest LLR in the data.
    pub fn observed_statistic(&self) -> f64 {
        self.observed_max
    }

    pub fn progress(&self) -> StScanProgress {
        StScanProgress {
            done: self.null_max.len(),
            total: self.sim.n_sim(),
        }
    }

    /// Runs up to `k` more permutations.
    pub fn run_batch(&mut self, k: usize) -> StScanProgress {
        let from = self.null_max.len();
        let v = self.sim.simulate_range(from, from + k);
        self.null_max.extend_from_slice(&v);
        self.progress()
    }

    /// As [`StScanSimulator::simulate_range`] (the job is not changed).
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<f64> {
        self.sim.simulate_range(from, to)
    }

    /// What a helper needs (no coordinates).
    pub fn share(&self) -> &StScanShare {
        &self.sim.s
    }

    /// Appends maxima computed elsewhere starting at permutation `from`
    /// (which must equal the number done); returns the number done.
    pub fn add_simulated(&mut self, from: usize, maxima: &[f64]) -> Result<usize, AnalysisError> {
        crate::params::piece_rows(
            "permutations",
            "permutation",
            (from, self.null_max.len(), self.sim.n_sim()),
            maxima.len(),
            1,
        )?;
        if maxima.iter().any(|v| !(v.is_finite() && *v >= 0.0)) {
            return Err(bad(
                "permutations",
                "a permutation's largest log likelihood ratio must be a number, 0 or more",
            ));
        }
        self.null_max.extend_from_slice(maxima);
        Ok(self.null_max.len())
    }

    /// Circles (centre × size) scanned.
    pub fn n_circles(&self) -> usize {
        self.group_end
            .iter()
            .enumerate()
            .filter(|&(k, &e)| k == e)
            .count()
    }

    /// Runs any permutations left and returns the result.
    pub fn finish(mut self) -> StScanResult {
        let left = self.sim.n_sim() - self.null_max.len();
        if left > 0 {
            self.run_batch(left);
        }
        let s = &self.sim.s;
        let o = s.options;
        let m = self.null_max.len();
        let pval = |t: f64| {
            (1 + self.null_max.iter().filter(|&&v| v >= t).count()) as f64 / (m + 1) as f64
        };
        let prospective = o.mode == StScanMode::Prospective;
        let cc = s.loc.len() as f64;
        let mut cand: Vec<(f64, usize)> = self
            .best
            .iter()
            .enumerate()
            .filter(|(_, b)| b.0 > 0.0)
            .map(|(i, b)| (b.0, i))
            .collect();
        cand.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
        // Kept cylinders: (locations, first day, last day).
        let mut kept: Vec<(Vec<bool>, usize, usize)> = Vec::new();
        let mut clusters = Vec::new();
        for (l, centre) in cand {
            if clusters.len() > o.max_secondary {
                break;
            }
            let (_, k, e, len) = self.best[centre];
            let d0 = e + 1 - len;
            let mut inside = vec![false; self.x.len()];
            for &z in &s.list[s.start[centre]..=k] {
                inside[z as usize] = true;
            }
            let overlaps = kept.iter().any(|(loc, a, b)| {
                d0 <= *b && *a <= e && loc.iter().zip(&inside).any(|(p, q)| *p && *q)
            });
            if overlaps {
                continue;
            }
            let events: Vec<usize> = (0..s.loc.len())
                .filter(|&i| inside[s.loc[i] as usize] && (d0..=e).contains(&(s.day[i] as usize)))
                .map(|i| self.index[i])
                .collect();
            let n_circle = s.group_n[k];
            let t = self.sim.t_int[self.interval_index(e, len)];
            let mu = expected(n_circle, t, cc);
            let p = pval(l);
            let day = |d: usize| (self.first_day + d as i64) as f64;
            clusters.push(StCluster {
                rank: clusters.len(),
                centre_x: self.x[centre],
                centre_y: self.y[centre],
                radius_m: self.dist_at[k],
                n_locations: inside.iter().filter(|&&b| b).count(),
                start_day: day(d0),
                end_day: day(e),
                start_date: crate::input::time::format_days(day(d0), false),
                end_date: crate::input::time::format_days(day(e), false),
                days: len,
                observed: events.len() as u64,
                expected: mu,
                ratio: events.len() as f64 / mu,
                llr: l,
                p_value: p,
                recurrence_days: prospective.then_some(o.repeat_days / p),
                events,
            });
            kept.push((inside, d0, e));
        }
        let p_value = pval(self.observed_max);
        let recurrence_days =
            (prospective && !clusters.is_empty()).then_some(o.repeat_days / p_value);
        let (verdict, outcome) = verdict(&clusters, p_value, m, prospective, o.repeat_days);
        StScanResult {
            mode: o.mode,
            n_sim: m,
            seed: o.seed,
            max_share: o.max_share,
            max_radius_m: o.max_radius_m,
            max_days: o.max_days,
            max_days_used: self.sim.m,
            repeat_days: o.repeat_days,
            n_events: s.loc.len(),
            n_locations: self.x.len(),
            first_date: crate::input::time::format_days(self.first_day as f64, false),
            last_date: crate::input::time::format_days(
                (self.first_day + s.n_days as i64 - 1) as f64,
                false,
            ),
            n_days: s.n_days,
            n_circles: self.n_circles(),
            n_intervals: self
                .sim
                .t_int
                .iter()
                .enumerate()
                .filter(|&(i, _)| {
                    let (e, l) = self.sim.interval(i);
                    l <= e + 1
                })
                .count(),
            statistic: self.observed_max,
            p_value,
            recurrence_days,
            clusters,
            null_maxima: self.null_max,
            verdict,
            outcome: outcome.into(),
            caveats: caveats(prospective),
            times: self.times,
        }
    }

    fn interval_index(&self, e: usize, len: usize) -> usize {
        match self.sim.s.options.mode {
            StScanMode::Retrospective => e * self.sim.m + len - 1,
            StScanMode::Prospective => len - 1,
        }
    }
}

/// Expected count of a cylinder with no space–time interaction:
/// `N_circle · N_interval / C` (Kulldorff et al. 2005).
pub fn expected(n_circle: u32, n_interval: u32, total: f64) -> f64 {
    n_circle as f64 * n_interval as f64 / total
}

/// "about once every 3.2 years" for a number of days.
pub fn every(days: f64) -> String {
    let n = crate::params::num;
    if days >= 730.0 {
        format!(
            "about once every {} years",
            n((days / 365.25 * 10.0).round() / 10.0)
        )
    } else if days >= 14.0 {
        format!("about once every {} weeks", n((days / 7.0).round()))
    } else {
        format!("about once every {} days", n(days.round().max(1.0)))
    }
}

fn verdict(
    clusters: &[StCluster],
    p: f64,
    m: usize,
    prospective: bool,
    repeat_days: f64,
) -> (String, &'static str) {
    let n = crate::params::num;
    let Some(top) = clusters.first() else {
        return (
            "No circle and period has more events than its locations and dates alone lead to expect: \
             there is no sign of events clustering in space and time together."
                .into(),
            "no_excess",
        );
    };
    let p_text = if p <= 1.0 / (m + 1) as f64 {
        format!("p ≤ {}", n((1.0 / (m + 1) as f64 * 1e4).round() / 1e4))
    } else {
        format!("p = {}", n((p * 1e3).round() / 1e3))
    };
    let what = format!(
        "{} events within {} m of the centre from {} to {}, where {} were expected from the locations and dates alone",
        top.observed,
        n(top.radius_m.round()),
        top.start_date,
        top.end_date,
        n((top.expected * 10.0).round() / 10.0)
    );
    let mut v = if p < 0.05 {
        format!(
            "The strongest cluster in space and time ({what}) is unlikely to be chance ({p_text})."
        )
    } else {
        format!(
            "The strongest cluster in space and time ({what}) is no more than chance would often give ({p_text})."
        )
    };
    if prospective {
        let at_least = p <= 1.0 / (m + 1) as f64;
        v.push_str(&format!(
            " For an analysis repeated every {} days, a signal this strong would arise by chance {}{}.",
            n(repeat_days),
            if at_least { "at most " } else { "" },
            every(repeat_days / p)
        ));
    }
    (v, if p < 0.05 { "clusters" } else { "none" })
}

fn caveats(prospective: bool) -> Vec<String> {
    let mut c = vec![
        "A cluster in space and time is not a cause: it says events came together more than the map and the dates alone lead to expect, not why.".to_string(),
        "The scan compares events with each other only (no population at risk): a population that moved or grew in one place during the period, or a change in how events were recorded in one area, shows up as a cluster too.".to_string(),
        "Times are counted in whole days (UTC); events at exactly the same coordinates are one location.".to_string(),
        "Secondary clusters are tested against the strongest chance cluster, so their p-values are conservative.".to_string(),
        "Disclosure rules apply: a small cluster with its dates can identify people; share only coarsened centres and counts that follow your rules.".to_string(),
    ];
    if prospective {
        c.push("Reporting delays make the last days incomplete: a cluster that ends today may grow as late reports come in, and one may be missed until they do.".into());
    }
    c
}

#[cfg(test)]
mod tests;
