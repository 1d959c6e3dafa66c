//! Kulldorff's circular spatial scan statistic.
//!
//! Kulldorff (1997), "A spatial scan statistic", Communications in Statistics
//! — Theory and Methods 26(6):1481–1496, doi:10.1080/03610929708831995.
//!
//! # Data and models
//! The engine works on **regions**: a location, a case count and a
//! population. Point data are turned into regions first.
//! * **Bernoulli** (cases and controls): population = cases + controls at the
//!   region. Null: the `C` case labels are a random subset of the `N`
//!   individuals (a permutation of labels).
//! * **Poisson**: expected cases in a window `E = C·p_Z/P`. Null: `C` cases
//!   multinomial over regions with probabilities `p_i/P` (conditional on C).
//!   For events without controls the population is **area** ("Poisson model
//!   against area"): `E = n·|Z ∩ W|/|W|`. Against **population counts at
//!   points** (a controls layer with its count column mapped,
//!   [`ScanModel::PoissonPopulation`]) the regions are the population
//!   points, each case counted at its nearest point with a count above 0
//!   ([`ScanJob::from_population`]).
//!
//! # Windows
//! A window is centred on a region and grows through the regions sorted by
//! distance from it; regions at tied distances enter together (docs/methods.md#scan
//! \[CP\]). A window includes a region when the region's location lies in the
//! circle. Growth stops before the window's population exceeds `max_share`
//! of the total (default 50 %). The window set is enumerated once and reused
//! for every replicate.
//!
//! Where the regions come from ([`ScanCentres`]):
//! * `Events` (Bernoulli only): one region per distinct location of a case or
//!   control; windows centred on every such location, growing event by event.
//!   Exact; each replicate costs O(N²·max_share), made fast by compact
//!   circles and eight replicates per pass (`compact.rs`, same results).
//! * `Grid`: events are counted in square cells (`cells_long_side` along the
//!   longer side of the study area's bounding box); each cell is a region at
//!   its centre. For the Poisson-against-area model a cell's population is its
//!   area inside the study area, estimated from a 4 × 4 sub-grid of points, so
//!   `|Z ∩ W|` is the area in `W` of the cells whose centres lie in the circle
//!   (an approximation at cell resolution of the circle–window intersection).
//!   `Auto` picks `Events` for Bernoulli data with at most
//!   [`AUTO_EVENTS_MAX`] (10 000) distinct locations and `Grid` otherwise
//!   (against population counts: at most 2 000 points).
//!
//! # Statistic
//! Log-likelihood ratios for raised risk only (docs/methods.md#scan, 0·ln 0 = 0):
//! * Poisson: `LLR = c·ln(c/E) + (C−c)·ln((C−c)/(C−E))` if `c > E`, else 0;
//! * Bernoulli: the binomial LLR of docs/methods.md#scan if `c/n > (C−c)/(N−n)`, else 0.
//!
//! The test statistic is the largest LLR over all windows; its window is the
//! **most likely cluster**. Monte Carlo p-value (Kulldorff 1997; Abrams,
//! Kleinman & Kulldorff 2010 for the rank form):
//! `p = (1 + #{T_j ≥ T_obs}) / (m + 1)`, with `m = n_sim` replicates
//! (default 999).
//!
//! **Secondary clusters**: for each centre its best window; these are taken
//! in decreasing LLR order and kept when they share **no region** with a
//! cluster already reported (docs/methods.md#scan \[M/CP\]). Their p-values use the same
//! null distribution of the maximum, so they are conservative.
//!
//! # Replicates in batches
//! [`ScanJob::new`] (or a `from_…` constructor) enumerates the windows and
//! scores the data; [`ScanJob::run_batch`] runs the next `k` replicates;
//! [`ScanJob::finish`] returns the result. Replicate `j` uses its own
//! generator seeded from `(seed, j)`, so the result is the same whatever the
//! batch sizes.
//!
//! # Speed
//! For a fixed count `c`, both LLRs fall as the window's expected count (or
//! population) grows. So a replicate only needs, for each `c`, the smallest
//! expected count of any window holding exactly `c` cases: one pass along
//! every centre's sorted list with a running count, then `C` LLR evaluations.
//! This gives exactly the maximum LLR over all windows.

use crate::error::AnalysisError;
use crate::rng::{rng_from_seed, Rng};
use crate::study::Pattern;
use crate::window::Window;
use rand::RngExt;
use serde::{Deserialize, Serialize};

mod compact;
mod parallel;
use compact::{CompactCircles, Lanes, LANES};
pub use parallel::{ScanShare, ScanSimulator};

/// The probability model.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ScanModel {
    /// Bernoulli when controls are given, Poisson against area otherwise.
    #[default]
    Auto,
    /// Cases versus controls.
    Bernoulli,
    /// Events against area (Poisson): every km² of the study area is
    /// assumed to hold the same risk.
    Poisson,
    /// Cases against population counts at points (Poisson): a controls
    /// layer whose count column is mapped ([`Pattern::weight`]).
    PoissonPopulation,
}

impl ScanModel {
    /// Plain words for the model a scan ran (`Auto` resolves before a run).
    pub fn describe(self) -> &'static str {
        match self {
            ScanModel::Bernoulli => "cases against controls (Bernoulli)",
            ScanModel::PoissonPopulation => "cases against the population counts (Poisson)",
            _ => "events against area (Poisson)",
        }
    }
}

/// Where windows are centred (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ScanCentres {
    #[default]
    Auto,
    Events,
    Grid,
}

/// Options for the scan.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct ScanOptions {
    pub model: ScanModel,
    pub centres: ScanCentres,
    /// Cells along the longer side for grid regions (default 40).
    pub cells_long_side: usize,
    /// Largest window as a share of the total population (default 0.5).
    pub max_share: f64,
    /// Monte Carlo replicates (default 999).
    pub n_sim: usize,
    pub seed: u64,
    /// Secondary clusters to report at most (default 10).
    pub max_secondary: usize,
}

impl Default for ScanOptions {
    fn default() -> Self {
        ScanOptions {
            model: ScanModel::Auto,
            centres: ScanCentres::Auto,
            cells_long_side: 40,
            max_share: 0.5,
            n_sim: 999,
            seed: 20_240_601,
            max_secondary: 10,
        }
    }
}

impl crate::params::Params for ScanOptions {
    const NAME: &'static str = "scanStart";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::Field;
        vec![
            Field::choice(
                "model",
                &["auto", "bernoulli", "poisson", "poisson_population"],
                "auto: cases against the population counts (poisson_population) when the population file has a count column, \
                 cases against controls (bernoulli) when it has one row per person, else events against area (poisson)",
            ),
            Field::choice(
                "centres",
                &["auto", "events", "grid"],
                "where circles are centred: at events (at the population points against population counts), or at cells of a grid",
            ),
            Field::integer("cells_long_side", "grid cells along the longer side for grid regions")
                .range(2.0, 512.0),
            Field::number("max_share", None, "largest circle, as a share of the total population")
                .above(0.0, Some(0.5)),
            Field::integer("n_sim", "Monte Carlo replicates").range(1.0, 100_000.0),
            Field::seed("seed of the replicates"),
            Field::integer("max_secondary", "secondary clusters reported at most").range(0.0, 1000.0),
        ]
    }
}

/// Aggregated data: one entry per region.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct ScanRegions {
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub cases: Vec<u32>,
    /// Poisson: population (or area, m²); Bernoulli: cases + controls.
    pub population: Vec<f64>,
}

/// One reported cluster.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScanCluster {
    /// 0 for the most likely cluster, then secondary clusters.
    pub rank: usize,
    /// Index of the centre region.
    pub centre_region: usize,
    pub centre_x: f64,
    pub centre_y: f64,
    /// Distance from the centre to the farthest region included, metres.
    /// For grid regions these are cell centres, so the circle drawn with this
    /// radius matches the window to within half a cell.
    pub radius_m: f64,
    /// Regions in the window (indices into the scan's regions).
    pub regions: Vec<usize>,
    pub observed: u64,
    pub expected: f64,
    /// `(c/E) / ((C−c)/(C−E))`; `None` (`null`) when undefined: no case
    /// or no expected case outside the window (every case inside it).
    pub relative_risk: Option<f64>,
    /// Population in the window (Bernoulli: individuals; area model: m²).
    pub population: f64,
    pub llr: f64,
    pub p_value: f64,
}

/// The scan's result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScanResult {
    pub model: ScanModel,
    pub centres: ScanCentres,
    pub n_sim: usize,
    pub seed: u64,
    pub max_share: f64,
    pub n_regions: usize,
    pub n_windows: usize,
    pub total_cases: u64,
    pub total_population: f64,
    /// Largest LLR in the data (0 when no window has an excess).
    pub statistic: f64,
    pub p_value: f64,
    /// Most likely cluster first; empty when no window has an excess.
    pub clusters: Vec<ScanCluster>,
    /// Maxima of the replicates, in replicate order.
    pub null_maxima: Vec<f64>,
    /// 95th and 99th percentiles of the null maxima (critical values).
    pub critical_95: Option<f64>,
    pub critical_99: Option<f64>,
    /// For grid regions: the cell side, metres.
    pub cell_m: Option<f64>,
    /// Against population counts: the farthest any case lies from the
    /// population point it is counted at, metres (`None` for other models).
    /// Far more than the spacing of the points says the population file
    /// does not cover where cases are.
    pub case_to_population_max_m: Option<f64>,
}

/// Progress after a batch.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct ScanProgress {
    pub done: usize,
    pub total: usize,
}

/// A faster setting of the scan and how long its chance runs would take.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScanFaster {
    /// `"n_sim"` or `"max_share"`.
    pub option: String,
    pub number: f64,
    /// In words, e.g. "199 chance runs".
    pub label: String,
    /// All the chance runs with this setting, ms.
    pub run_ms: f64,
}

/// How long the scan's chance runs take, from timing the first ones.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScanCost {
    /// Chance runs timed (not kept: the job is left as it was).
    pub timed: usize,
    /// One chance run, ms.
    pub replicate_ms: f64,
    /// The chance runs still to do, ms.
    pub left_ms: f64,
    pub faster: Vec<ScanFaster>,
}

/// `a·ln(a/b)` with `0·ln 0 = 0`.
fn xlogx(a: f64, b: f64) -> f64 {
    if a <= 0.0 {
        0.0
    } else {
        a * (a / b).ln()
    }
}

/// Poisson LLR for raised risk (docs/methods.md#scan): `c` observed, `e` expected,
/// `total` cases in all. 0 unless `c > e`.
pub fn llr_poisson(c: f64, e: f64, total: f64) -> f64 {
    if c <= e || e <= 0.0 {
        return 0.0;
    }
    xlogx(c, e) + xlogx(total - c, total - e)
}

/// Bernoulli LLR for raised risk (docs/methods.md#scan): `c` cases among `n` in the
/// window, `cases` among `total` in all. 0 unless `c/n > (C−c)/(N−n)`.
pub fn llr_bernoulli(c: f64, n: f64, cases: f64, total: f64) -> f64 {
    if !bernoulli_raised(c, n, cases, total) {
        return 0.0;
    }
    let l1 = xlogx(c, n)
        + xlogx(n - c, n)
        + xlogx(cases - c, total - n)
        + xlogx(total - n - cases + c, total - n);
    let l0 = xlogx(cases, total) + xlogx(total - cases, total);
    (l1 - l0).max(0.0)
}

/// Whether [`llr_bernoulli`] sees raised risk (where it may be above 0):
/// `c/n > (C−c)/(N−n)` with `0 < n < N`. With whole numbers this is
/// monotone as computed too (rounded quotients keep their order): it only
/// turns true with more cases and only false with more people.
pub(crate) fn bernoulli_raised(c: f64, n: f64, cases: f64, total: f64) -> bool {
    !(n <= 0.0 || n >= total || c / n <= (cases - c) / (total - n))
}

/// A prepared scan whose replicates run in batches.
#[derive(Debug, Clone)]
pub struct ScanJob {
    model: ScanModel,
    centres_kind: ScanCentres,
    o: ScanOptions,
    regions: ScanRegions,
    cell_m: Option<f64>,
    total_cases: u64,
    total_pop: f64,
    /// Against population counts: farthest case from its point, metres.
    case_to_population_max_m: Option<f64>,
    /// Flat neighbour lists: `list[start[i]..start[i+1]]` for centre i.
    start: Vec<usize>,
    list: Vec<u32>,
    /// Window population at a group end, or +∞ inside a tie group (so the
    /// replicate loop can take a branch-free minimum).
    pop_at: Vec<f64>,
    /// Distance from the centre at each list position.
    dist_at: Vec<f64>,
    /// Case–control data: the circles in compact form instead of the four
    /// lists above (left empty), for the fast exact chance runs.
    compact: Option<CompactCircles>,
    /// Observed: per centre, best (llr, list position).
    best_per_centre: Vec<(f64, usize)>,
    observed_max: f64,
    /// Bernoulli null: region of each individual.
    individuals: Vec<u32>,
    /// Poisson null: cumulative population.
    cum_pop: Vec<f64>,
    null_max: Vec<f64>,
}

fn bad(name: &str, detail: impl Into<String>) -> AnalysisError {
    AnalysisError::BadParameter {
        name: name.into(),
        detail: detail.into(),
    }
}

/// SplitMix64 finaliser (Steele, Lea & Flood 2014, OOPSLA), used to derive
/// the generator of replicate `j` from the seed.
fn mix(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

fn replicate_rng(seed: u64, j: usize) -> Rng {
    rng_from_seed(mix(seed ^ mix(j as u64 + 1)))
}

/// `Auto` centres circles on every distinct location of case–control data
/// up to this many locations, on grid cells above: 999 chance runs at
/// 10,000 places took about 16 s in the page on two workers of a 2-core
/// machine, 6–7 s of it setting up the circles, and hold about 130 MB per
/// worker (README, `node bench/scan-browser.mjs 999 1 large 10000 two`).
pub const AUTO_EVENTS_MAX: usize = 10_000;

/// Limit on stored window list entries (memory in the page).
const MAX_LIST_ENTRIES: usize = 60_000_000;

/// Circles centred on every location, each growing through the locations
/// sorted by distance from its centre (ties by index); locations at tied
/// distances enter together. Growth stops before the circle's weight
/// exceeds `limit` or, with `max_radius`, before its radius exceeds it.
/// Shared by the spatial scan and the space–time scan
/// (`crate::spacetime::scan`).
#[derive(Debug, Clone, PartialEq, Default)]
pub(crate) struct Circles {
    /// `list[start[i]..start[i+1]]`: the locations of centre i's largest circle, nearest first.
    pub start: Vec<usize>,
    pub list: Vec<u32>,
    /// The circle's weight at a tie group's last entry, +∞ inside a group.
    pub pop_at: Vec<f64>,
    /// Distance from the centre at each list position.
    pub dist_at: Vec<f64>,
}

pub(crate) fn growing_circles(
    x: &[f64],
    y: &[f64],
    weight: &[f64],
    limit: f64,
    max_radius: Option<f64>,
) -> Result<Circles, AnalysisError> {
    let mut c = Circles {
        start: vec![0],
        ..Default::default()
    };
    each_circle(x, y, weight, limit, max_radius, &mut c)?;
    Ok(c)
}

/// Where [`each_circle`] puts the circles it grows: [`Circles`] (every
/// entry with its weight and distance) or [`CompactCircles`] (ids and tie
/// flags only, for the case–control chance runs).
pub(crate) trait CircleSink {
    /// The next location of the current centre's circle, nearest first:
    /// its squared distance from the centre, and the circle's weight when
    /// it ends a tie group (`None` inside a group).
    fn entry(&mut self, j: u32, d2: f64, group_end: Option<f64>);
    /// The current centre's circle is complete; returns the entries stored
    /// so far over all centres.
    fn end_centre(&mut self) -> usize;
}

impl CircleSink for Circles {
    fn entry(&mut self, j: u32, d2: f64, group_end: Option<f64>) {
        self.list.push(j);
        self.dist_at.push(d2.sqrt());
        self.pop_at.push(group_end.unwrap_or(f64::INFINITY));
    }
    fn end_centre(&mut self) -> usize {
        self.start.push(self.list.len());
        self.list.len()
    }
}

/// The one circle builder (see [`Circles`]): for each centre the locations
/// sorted by squared distance, ties by index (as `u128` keys `d² bits <<
/// 32 | index`: squared distances are never negative, so their bits sort
/// as the numbers do). Only the nearest part is sorted when it is sure to
/// hold the circle (a selection first, sized from the mean weight), else
/// everything; either way the order is the same total order. Reports
/// progress over the centres.
pub(crate) fn each_circle(
    x: &[f64],
    y: &[f64],
    weight: &[f64],
    limit: f64,
    max_radius: Option<f64>,
    sink: &mut impl CircleSink,
) -> Result<(), AnalysisError> {
    let n = x.len();
    let mut keys: Vec<u128> = Vec::with_capacity(n);
    let r2 = max_radius.map(|r| r * r * (1.0 + 1e-12));
    let cap = limit * (1.0 + 1e-12);
    let total_w: f64 = weight.iter().sum();
    // Locations the circle is expected to hold (+ 25 % and a margin); a
    // first selection of that many nearest decides most circles.
    let guess = if total_w > 0.0 && n > 0 {
        ((limit / (total_w / n as f64)) * 1.25) as usize + 64
    } else {
        n
    };
    let d2_of = |key: u128| f64::from_bits((key >> 32) as u64);
    for i in 0..n {
        if i % 64 == 0 {
            crate::progress::report(i, n);
        }
        keys.clear();
        keys.extend((0..n).map(|j| {
            let d2 = (x[j] - x[i]).powi(2) + (y[j] - y[i]).powi(2);
            (u128::from(d2.to_bits()) << 32) | j as u128
        }));
        let mut m = guess.min(n);
        // The circle's end in `keys`, once the sorted part decides it.
        let end = loop {
            if m < n {
                keys.select_nth_unstable(m);
                keys[..m].sort_unstable();
            } else {
                keys.sort_unstable();
            }
            let mut pop = 0.0;
            let mut k = 0;
            let decided = loop {
                if k >= m {
                    // Every sorted location fits: only decided if there are no more.
                    break (m == n).then_some(k);
                }
                if r2.is_some_and(|r2| d2_of(keys[k]) > r2) {
                    break Some(k);
                }
                // A tie group [k, g).
                let mut g = k;
                let mut gp = 0.0;
                while g < m && d2_of(keys[g]) == d2_of(keys[k]) {
                    gp += weight[(keys[g] & 0xFFFF_FFFF) as usize];
                    g += 1;
                }
                if g == m && m < n {
                    // The group may go on past the sorted part.
                    break None;
                }
                if pop + gp > cap {
                    break Some(k);
                }
                pop += gp;
                k = g;
            };
            match decided {
                Some(end) => break end,
                None => m = n,
            }
        };
        let mut pop = 0.0;
        let mut k = 0;
        while k < end {
            let d2 = d2_of(keys[k]);
            let mut g = k;
            let mut gp = 0.0;
            while g < end && d2_of(keys[g]) == d2 {
                gp += weight[(keys[g] & 0xFFFF_FFFF) as usize];
                g += 1;
            }
            pop += gp;
            for (q, &key) in keys.iter().enumerate().take(g).skip(k) {
                sink.entry((key & 0xFFFF_FFFF) as u32, d2, (q == g - 1).then_some(pop));
            }
            k = g;
        }
        if sink.end_centre() > MAX_LIST_ENTRIES {
            return Err(bad(
                "max_share",
                "too many windows for this many locations: lower the largest window share \
                 or use grid regions",
            ));
        }
    }
    crate::progress::report(n, n);
    Ok(())
}

impl ScanJob {
    /// Scan of a study's events (cases), with controls if given, over the
    /// window. Chooses the model and regions as the options say.
    pub fn new(
        events: &Pattern,
        controls: Option<&Pattern>,
        window: &Window,
        o: &ScanOptions,
    ) -> Result<ScanJob, AnalysisError> {
        let counts = controls.and_then(|c| c.weights_or_zero());
        match (
            resolve_model(o.model, controls.is_some(), counts.is_some())?,
            controls,
        ) {
            (ScanModel::PoissonPopulation, Some(c)) => ScanJob::from_population(
                events.x(),
                events.y(),
                (c.x(), c.y()),
                counts.as_deref().unwrap_or(&[]),
                window,
                o,
            ),
            (model, _) => ScanJob::from_points(
                events.x(),
                events.y(),
                controls.map(|c| (c.x(), c.y())),
                window,
                &ScanOptions { model, ..*o },
            ),
        }
    }

    /// Cases `(x, y)` against population counts at points `(px, py)`
    /// (Poisson model; Kulldorff 1997). A count that is not finite or not
    /// more than 0 adds nothing (a missing count counts 0); points at the
    /// same location are merged. Each case is counted at its nearest
    /// population point with a count above 0 (the block it lies in, taken
    /// as the nearest centroid). Circles are centred at the population
    /// points (`centres: events` or `auto` up to 2 000 points) or at the
    /// cells of a grid into which points and their cases are summed.
    /// Expected cases in a circle `E = C·P_in/P`; replicates spread the `C`
    /// cases multinomially over the points in proportion to their counts.
    pub fn from_population(
        x: &[f64],
        y: &[f64],
        population: (&[f64], &[f64]),
        counts: &[f64],
        region: &Window,
        o: &ScanOptions,
    ) -> Result<ScanJob, AnalysisError> {
        if !matches!(o.model, ScanModel::Auto | ScanModel::PoissonPopulation) {
            return Err(bad(
                "model",
                "population counts are scanned with the model poisson_population",
            ));
        }
        let (px, py) = population;
        if x.len() != y.len() || px.len() != py.len() || px.len() != counts.len() {
            return Err(bad(
                "population",
                "the coordinate and count lists differ in length",
            ));
        }
        if x.is_empty() {
            return Err(AnalysisError::TooFewPoints {
                needed: 1,
                found: 0,
            });
        }
        let (regions, farthest) = population_regions(x, y, px, py, counts)?;
        let use_points = match o.centres {
            ScanCentres::Events => true,
            ScanCentres::Grid => false,
            ScanCentres::Auto => regions.x.len() <= 2000,
        };
        let (regions, centres, cell) = if use_points {
            (regions, ScanCentres::Events, None)
        } else {
            let (r, c) = sum_into_cells(&regions, region, o.cells_long_side)?;
            (r, ScanCentres::Grid, Some(c))
        };
        let mut job = ScanJob::from_regions(&regions, ScanModel::PoissonPopulation, o)?;
        job.centres_kind = centres;
        job.cell_m = cell;
        job.case_to_population_max_m = Some(farthest);
        Ok(job)
    }

    /// Point data: cases `(x, y)`, optional controls, study area.
    pub fn from_points(
        x: &[f64],
        y: &[f64],
        controls: Option<(&[f64], &[f64])>,
        region: &Window,
        o: &ScanOptions,
    ) -> Result<ScanJob, AnalysisError> {
        let model = match (o.model, controls.is_some()) {
            (ScanModel::Auto, true) | (ScanModel::Bernoulli, true) => ScanModel::Bernoulli,
            (ScanModel::Bernoulli, false) => {
                return Err(bad(
                    "model",
                    "the case–control (Bernoulli) model needs a controls file",
                ))
            }
            (ScanModel::PoissonPopulation, _) => {
                return Err(bad("model", NEEDS_COUNTS));
            }
            _ => ScanModel::Poisson,
        };
        if x.is_empty() {
            return Err(AnalysisError::TooFewPoints {
                needed: 1,
                found: 0,
            });
        }
        let (regions, centres, cell) = match model {
            ScanModel::Bernoulli => {
                let (kx, ky) = controls.unwrap_or((&[], &[]));
                let distinct = distinct_locations(x, y, kx, ky);
                let use_events = match o.centres {
                    ScanCentres::Events => true,
                    ScanCentres::Grid => false,
                    ScanCentres::Auto => distinct.x.len() <= AUTO_EVENTS_MAX,
                };
                if use_events {
                    (distinct, ScanCentres::Events, None)
                } else {
                    let (r, c) = grid_regions(x, y, Some((kx, ky)), region, o.cells_long_side)?;
                    (r, ScanCentres::Grid, Some(c))
                }
            }
            _ => {
                if o.centres == ScanCentres::Events {
                    return Err(bad(
                        "centres",
                        "the model against area needs grid regions (each region needs an area)",
                    ));
                }
                let (r, c) = grid_regions(x, y, None, region, o.cells_long_side)?;
                (r, ScanCentres::Grid, Some(c))
            }
        };
        let mut job = ScanJob::from_regions(&regions, model, o)?;
        job.centres_kind = centres;
        job.cell_m = cell;
        Ok(job)
    }

    /// Aggregated data. `model` must be `Bernoulli` or `Poisson`.
    pub fn from_regions(
        regions: &ScanRegions,
        model: ScanModel,
        o: &ScanOptions,
    ) -> Result<ScanJob, AnalysisError> {
        ScanJob::build(regions, model, o, true)
    }

    /// [`ScanJob::from_regions`]; `compact` lets case–control data use the
    /// compact circles and fast chance runs (the same results; `false`
    /// keeps the general lists, for tests that compare the two).
    fn build(
        regions: &ScanRegions,
        model: ScanModel,
        o: &ScanOptions,
        compact: bool,
    ) -> Result<ScanJob, AnalysisError> {
        let r = regions;
        let n = r.x.len();
        if r.y.len() != n || r.cases.len() != n || r.population.len() != n {
            return Err(bad("regions", "the region lists differ in length"));
        }
        if model == ScanModel::Auto {
            return Err(bad("model", "choose Bernoulli or Poisson for region data"));
        }
        if !(o.max_share > 0.0 && o.max_share <= 0.5) {
            return Err(bad(
                "max_share",
                "the largest window must be more than 0 and at most 50 % of the population",
            ));
        }
        for i in 0..n {
            let p = r.population[i];
            if !(p.is_finite() && p >= 0.0 && r.x[i].is_finite() && r.y[i].is_finite()) {
                return Err(bad(
                    "regions",
                    format!("region {} has a bad location or population", i + 1),
                ));
            }
            if model == ScanModel::Bernoulli && (p.fract() != 0.0 || p > 1.0e8) {
                return Err(bad(
                    "regions",
                    format!("region {} needs a whole number of people", i + 1),
                ));
            }
            if model == ScanModel::Bernoulli && (r.cases[i] as f64) > p {
                return Err(bad(
                    "regions",
                    format!("region {} has more cases than people", i + 1),
                ));
            }
            if model != ScanModel::Bernoulli && p == 0.0 && r.cases[i] > 0 {
                return Err(bad(
                    "regions",
                    format!("region {} has cases but no population (or area)", i + 1),
                ));
            }
        }
        let total_cases: u64 = r.cases.iter().map(|&c| c as u64).sum();
        let total_pop: f64 = r.population.iter().sum();
        if total_cases == 0 {
            return Err(AnalysisError::TooFewPoints {
                needed: 1,
                found: 0,
            });
        }
        if model == ScanModel::Bernoulli && total_cases as f64 >= total_pop {
            return Err(bad("controls", "there are no controls"));
        }
        // Neighbour lists.
        let limit = o.max_share * total_pop;
        let compact = (compact
            && model == ScanModel::Bernoulli
            && CompactCircles::fits(&r.population, total_cases))
        .then(|| {
            let mut c = CompactCircles::new(&r.population, total_cases, limit);
            each_circle(&r.x, &r.y, &r.population, limit, None, &mut c).map(|()| c)
        })
        .transpose()?;
        let Circles {
            start,
            list,
            pop_at,
            dist_at,
        } = if compact.is_some() {
            Circles::default()
        } else {
            growing_circles(&r.x, &r.y, &r.population, limit, None)?
        };
        let individuals = if model == ScanModel::Bernoulli {
            let mut v = Vec::with_capacity(total_pop as usize);
            for (i, &p) in r.population.iter().enumerate() {
                for _ in 0..(p.round() as usize) {
                    v.push(i as u32);
                }
            }
            v
        } else {
            Vec::new()
        };
        let mut cum_pop = Vec::with_capacity(n);
        let mut acc = 0.0;
        for &p in &r.population {
            acc += p;
            cum_pop.push(acc);
        }
        let mut job = ScanJob {
            model,
            centres_kind: ScanCentres::Events,
            o: *o,
            regions: r.clone(),
            cell_m: None,
            total_cases,
            total_pop,
            case_to_population_max_m: None,
            start,
            list,
            pop_at,
            dist_at,
            compact,
            best_per_centre: Vec::new(),
            observed_max: 0.0,
            individuals,
            cum_pop,
            null_max: Vec::with_capacity(o.n_sim),
        };
        job.score_observed();
        Ok(job)
    }

    fn llr(&self, c: f64, pop: f64) -> f64 {
        let cc = self.total_cases as f64;
        match self.model {
            ScanModel::Bernoulli => llr_bernoulli(c, pop, cc, self.total_pop),
            _ => llr_poisson(c, cc * pop / self.total_pop, cc),
        }
    }

    fn score_observed(&mut self) {
        let n = self.regions.x.len();
        let mut best = Vec::with_capacity(n);
        let mut top = 0.0f64;
        // Case–control data with up to 2²² people: a window is scored only
        // if it is of raised risk and its LLR from a table of `k ln k`
        // (the same number within rounding, far quicker) comes within a
        // margin of the centre's best so far; one that does not could not
        // have replaced it, so the result is the same bit for bit.
        let (cc, total) = (self.total_cases as f64, self.total_pop);
        let screen = self.compact.is_some() && total <= f64::from(1u32 << 22);
        let xlnx: Vec<f64> = if screen {
            (0..=total as u64)
                .map(|k| k as f64 * (k as f64).ln().max(0.0))
                .collect()
        } else {
            Vec::new()
        };
        let at = |k: f64| xlnx.get(k as usize).copied().unwrap_or(0.0);
        let l0 = at(cc) + at(total - cc) - at(total);
        let margin = 1e-9 + 1e-11 * total;
        for i in 0..n {
            let mut c = 0u64;
            let mut b = (0.0, usize::MAX);
            self.walk(i, |k, j, p| {
                c += self.regions.cases[j] as u64;
                if p.is_finite() {
                    let cf = c as f64;
                    if screen
                        && (!bernoulli_raised(cf, p, cc, total)
                            || at(cf) + at(p - cf) - at(p) + at(cc - cf) + at(total - p - cc + cf)
                                - at(total - p)
                                - l0
                                <= b.0 - margin)
                    {
                        return;
                    }
                    let l = self.llr(cf, p);
                    if l > b.0 {
                        b = (l, k);
                    }
                }
            });
            top = top.max(b.0);
            best.push(b);
        }
        self.best_per_centre = best;
        self.observed_max = top;
    }

    /// Walks centre i's largest circle nearest first: `f(position,
    /// region, population)` with the circle's population at the end of a
    /// tie group and +∞ inside one.
    fn walk(&self, i: usize, mut f: impl FnMut(usize, usize, f64)) {
        match &self.compact {
            Some(c) => c.walk(i, f),
            None => {
                for k in self.start[i]..self.start[i + 1] {
                    f(k, self.list[k] as usize, self.pop_at[k]);
                }
            }
        }
    }

    /// Centre i's first list position.
    fn walk_start(&self, i: usize) -> usize {
        match &self.compact {
            Some(c) => c.start[i],
            None => self.start[i],
        }
    }

    /// Number of windows (list positions that end a tie group).
    pub fn n_windows(&self) -> usize {
        let mut w = 0;
        for i in 0..self.regions.x.len() {
            self.walk(i, |_, _, p| w += usize::from(p.is_finite()));
        }
        w
    }

    /// Bytes held by the circles (the lists every chance run walks).
    pub fn circles_bytes(&self) -> usize {
        match &self.compact {
            Some(c) => c.bytes(),
            None => {
                self.start.len() * std::mem::size_of::<usize>()
                    + self.list.len() * 4
                    + (self.pop_at.len() + self.dist_at.len()) * 8
            }
        }
    }

    /// The largest LLR in the data.
    pub fn observed_statistic(&self) -> f64 {
        self.observed_max
    }

    /// Replicates done and asked for.
    pub fn progress(&self) -> ScanProgress {
        ScanProgress {
            done: self.null_max.len(),
            total: self.o.n_sim,
        }
    }

    /// Runs up to `k` more replicates; returns the progress.
    pub fn run_batch(&mut self, k: usize) -> ScanProgress {
        let from = self.null_max.len();
        let maxima = self.simulate_range(from, from + k);
        self.null_max.extend_from_slice(&maxima);
        self.progress()
    }

    /// The null maxima (largest LLR of a chance run) of replicates
    /// `from..to` (`to` at most the number asked for). Replicate j depends
    /// only on the seed and j, so a range computed here, by another job of
    /// the same data or by a [`ScanSimulator`] equals the job's own; the job
    /// is not changed.
    pub fn simulate_range(&self, from: usize, to: usize) -> Vec<f64> {
        let to = to.min(self.o.n_sim);
        if let Some(c) = &self.compact {
            return self.simulate_range_compact(c, from, to);
        }
        let n = self.regions.x.len();
        let cmax = self.total_cases as usize;
        let mut cases = vec![0u32; n];
        let mut min_pop = vec![f64::INFINITY; cmax + 1];
        // The Bernoulli draws swap individuals and put them back after each
        // replicate, so every replicate starts from the same order.
        let mut individuals = self.individuals.clone();
        let mut picks = Vec::with_capacity(if individuals.is_empty() { 0 } else { cmax });
        let mut out = Vec::with_capacity(to.saturating_sub(from));
        for j in from..to {
            let mut rng = replicate_rng(self.o.seed, j);
            self.simulate(&mut rng, &mut cases, &mut individuals, &mut picks);
            out.push(self.null_maximum(&cases, &mut min_pop));
        }
        out
    }

    /// [`ScanJob::simulate_range`] on the compact circles, [`LANES`] runs
    /// per pass over the lists (see `compact.rs`).
    fn simulate_range_compact(&self, c: &CompactCircles, from: usize, to: usize) -> Vec<f64> {
        let n = self.regions.x.len();
        let mut cases = vec![0u32; n];
        let mut individuals = self.individuals.clone();
        let mut picks = Vec::with_capacity(self.total_cases as usize);
        let mut lanes = Lanes::new(c);
        let mut out = Vec::with_capacity(to.saturating_sub(from));
        let mut j0 = from;
        while j0 < to {
            let k = (to - j0).min(LANES);
            for l in 0..k {
                let mut rng = replicate_rng(self.o.seed, j0 + l);
                self.simulate(&mut rng, &mut cases, &mut individuals, &mut picks);
                lanes.set(l, &cases);
            }
            let (cc, total) = (self.total_cases as f64, self.total_pop);
            let t = lanes.maxima(
                c,
                |cnt, p| self.llr(f64::from(cnt), f64::from(p)),
                |cnt, p| bernoulli_raised(f64::from(cnt), f64::from(p), cc, total),
                // Rounding of the LLR: terms of about N ln N (N people) summed.
                1e-9 + 1e-11 * total,
            );
            out.extend_from_slice(&t[..k]);
            j0 += k;
        }
        out
    }

    /// The largest LLR over all windows for the case counts `cases` per
    /// region (`min_pop`: scratch of `total_cases + 1` entries).
    fn null_maximum(&self, cases: &[u32], min_pop: &mut [f64]) -> f64 {
        min_pop.fill(f64::INFINITY);
        // For each count c, the smallest population of a window holding
        // exactly c cases (entries inside tie groups carry +∞). Branch
        // free: a running count and a minimum per list entry.
        for i in 0..self.regions.x.len() {
            let (s, e) = (self.start[i], self.start[i + 1]);
            let mut c = 0usize;
            for (&j, &p) in self.list[s..e].iter().zip(&self.pop_at[s..e]) {
                c += cases[j as usize] as usize;
                let slot = &mut min_pop[c];
                *slot = slot.min(p);
            }
        }
        let mut t = 0.0f64;
        for (c, &p) in min_pop.iter().enumerate().skip(1) {
            if p.is_finite() {
                t = t.max(self.llr(c as f64, p));
            }
        }
        t
    }

    /// Work of one chance run with the largest circle at `share` (at most
    /// the job's own) of the population: the neighbour-list entries it
    /// walks plus the cases it draws. A chance run's time is about
    /// proportional to it.
    pub fn replicate_work(&self, share: f64) -> f64 {
        let limit = share.min(self.o.max_share) * self.total_pop * (1.0 + 1e-12);
        let mut w = 0usize;
        for i in 0..self.regions.x.len() {
            let (mut n, mut over) = (0usize, false);
            self.walk(i, |q, _, p| {
                if p.is_finite() && !over {
                    if p > limit {
                        over = true;
                    } else {
                        n = q + 1;
                    }
                }
            });
            let s = self.walk_start(i);
            w += n.max(s) - s;
        }
        (w as u64 + self.total_cases) as f64
    }

    /// Runs chance runs one at a time (case–control data on compact
    /// circles: a batch of up to eight, which one pass over the lists
    /// serves) until `min_ms` passed on `clock()`
    /// (milliseconds) or `max` were run, and estimates from their time
    /// how long the rest take, and the faster settings: fewer chance runs
    /// (999, 199, 99) and a smaller largest circle (25 %, 10 % of the
    /// population), scaled by [`ScanJob::replicate_work`]. The timed runs
    /// are then forgotten, so the job is as before (its steps and result
    /// are unchanged; the measurement costs their time once).
    pub fn time_replicates(
        &mut self,
        clock: &mut dyn FnMut() -> f64,
        min_ms: f64,
        max: usize,
    ) -> ScanCost {
        let before = self.null_max.len();
        let t0 = clock();
        let mut dt = 0.0;
        let step = if self.compact.is_some() { LANES } else { 1 };
        while self.null_max.len() < self.o.n_sim && self.null_max.len() - before < max.max(1) {
            let done = self.null_max.len() - before;
            self.run_batch(step.min(max.max(1) - done));
            dt = clock() - t0;
            if dt >= min_ms {
                break;
            }
        }
        let timed = self.null_max.len() - before;
        self.null_max.truncate(before);
        let replicate_ms = if timed > 0 {
            (dt / timed as f64).max(0.0)
        } else {
            0.0
        };
        let left = self.o.n_sim - self.null_max.len();
        let mut faster = Vec::new();
        for k in [999usize, 199, 99] {
            if self.o.n_sim > k {
                faster.push(ScanFaster {
                    option: "n_sim".into(),
                    number: k as f64,
                    label: format!("{k} chance runs"),
                    run_ms: replicate_ms * k as f64,
                });
            }
        }
        let work = self.replicate_work(self.o.max_share);
        for share in [0.25, 0.1] {
            if self.o.max_share > share && work > 0.0 {
                let ratio = self.replicate_work(share) / work;
                faster.push(ScanFaster {
                    option: "max_share".into(),
                    number: share,
                    label: format!(
                        "biggest circle {} % of the population",
                        crate::params::num(share * 100.0)
                    ),
                    run_ms: replicate_ms * ratio * self.o.n_sim as f64,
                });
            }
        }
        let full = replicate_ms * self.o.n_sim as f64;
        faster.retain(|f| f.run_ms < full);
        ScanCost {
            timed,
            replicate_ms,
            left_ms: replicate_ms * left as f64,
            faster,
        }
    }

    /// Draws the null case counts per region. Bernoulli: `individuals` is
    /// left as it was given (`picks`: scratch).
    fn simulate(
        &self,
        rng: &mut Rng,
        cases: &mut [u32],
        individuals: &mut [u32],
        picks: &mut Vec<usize>,
    ) {
        cases.iter_mut().for_each(|c| *c = 0);
        let total = self.total_cases as usize;
        match self.model {
            ScanModel::Bernoulli => {
                // Partial Fisher–Yates: a uniform subset of C individuals,
                // then the swaps undone in reverse order.
                let nind = individuals.len();
                picks.clear();
                for a in 0..total {
                    let b = a + rng.random_range(0..nind - a);
                    individuals.swap(a, b);
                    picks.push(b);
                    cases[individuals[a] as usize] += 1;
                }
                for (a, &b) in picks.iter().enumerate().rev() {
                    individuals.swap(a, b);
                }
            }
            _ => {
                let p = self.total_pop;
                for _ in 0..total {
                    let u = rng.random::<f64>() * p;
                    let i = self.cum_pop.partition_point(|&v| v <= u);
                    let i = i.min(cases.len() - 1);
                    cases[i] += 1;
                }
            }
        }
    }

    /// Runs any replicates left and returns the result.
    pub fn finish(mut self) -> ScanResult {
        let left = self.o.n_sim - self.null_max.len();
        if left > 0 {
            self.run_batch(left);
        }
        let m = self.null_max.len();
        let pval = |t: f64| {
            (1 + self.null_max.iter().filter(|&&v| v >= t).count()) as f64 / (m + 1) as f64
        };
        let mut sorted = self.null_max.clone();
        sorted.sort_by(|a, b| a.total_cmp(b));
        let quant = |q: f64| {
            if sorted.is_empty() {
                None
            } else {
                // Type-1 (inverse of the empirical distribution) quantile.
                let k = ((q * m as f64).ceil() as usize).clamp(1, m) - 1;
                Some(sorted[k])
            }
        };
        // Candidates: best window per centre, by decreasing LLR.
        let mut cand: Vec<(f64, usize, usize)> = self
            .best_per_centre
            .iter()
            .enumerate()
            .filter(|(_, b)| b.0 > 0.0)
            .map(|(i, b)| (b.0, i, b.1))
            .collect();
        cand.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
        let mut used = vec![false; self.regions.x.len()];
        let mut clusters: Vec<ScanCluster> = Vec::new();
        let cc = self.total_cases as f64;
        for (l, i, k) in cand {
            if clusters.len() > self.o.max_secondary {
                break;
            }
            let mut members: Vec<usize> = Vec::new();
            let mut pop = 0.0;
            self.walk(i, |q, j, p| {
                if q <= k {
                    members.push(j);
                    pop = p;
                }
            });
            if members.iter().any(|&j| used[j]) {
                continue;
            }
            for &j in &members {
                used[j] = true;
            }
            let c: u64 = members.iter().map(|&j| self.regions.cases[j] as u64).sum();
            // Radius: the farthest member (the builder's own expression).
            let (cx, cy) = (self.regions.x[i], self.regions.y[i]);
            let radius_m = match self.compact {
                Some(_) => members.last().map_or(0.0, |&j| {
                    ((self.regions.x[j] - cx).powi(2) + (self.regions.y[j] - cy).powi(2)).sqrt()
                }),
                None => self.dist_at[k],
            };
            let e = match self.model {
                ScanModel::Bernoulli => cc * pop / self.total_pop,
                _ => cc * pop / self.total_pop,
            };
            let cf = c as f64;
            // Undefined (not Infinity) with no case or no expected case outside.
            let rr = (cc - e > 0.0 && cc - cf > 0.0 && e > 0.0)
                .then(|| (cf / e) / ((cc - cf) / (cc - e)))
                .filter(|v| v.is_finite());
            clusters.push(ScanCluster {
                rank: clusters.len(),
                centre_region: i,
                centre_x: self.regions.x[i],
                centre_y: self.regions.y[i],
                radius_m,
                regions: members,
                observed: c,
                expected: e,
                relative_risk: rr,
                population: pop,
                llr: l,
                p_value: pval(l),
            });
        }
        ScanResult {
            model: self.model,
            centres: self.centres_kind,
            n_sim: m,
            seed: self.o.seed,
            max_share: self.o.max_share,
            n_regions: self.regions.x.len(),
            n_windows: self.n_windows(),
            total_cases: self.total_cases,
            total_population: self.total_pop,
            statistic: self.observed_max,
            p_value: pval(self.observed_max),
            critical_95: quant(0.95),
            critical_99: quant(0.99),
            clusters,
            null_maxima: self.null_max,
            cell_m: self.cell_m,
            case_to_population_max_m: self.case_to_population_max_m,
        }
    }

    /// The regions scanned (for drawing grid cells or mapping members).
    pub fn regions(&self) -> &ScanRegions {
        &self.regions
    }

    /// Cases expected at each region under the null, `C·p_i/P` (Bernoulli:
    /// `C·n_i/N`); a window's expected count is the sum over its regions.
    pub fn expected_per_region(&self) -> Vec<f64> {
        let cc = self.total_cases as f64;
        self.regions
            .population
            .iter()
            .map(|&p| cc * p / self.total_pop)
            .collect()
    }
}

const NEEDS_COUNTS: &str = "the model against population counts (poisson_population) needs a \
     population file with a count column mapped (people at each point)";

/// The model a scan runs: `Auto` resolved from what is loaded (a controls
/// layer, and whether its count column is mapped), an impossible choice an
/// error.
pub fn resolve_model(
    model: ScanModel,
    has_controls: bool,
    has_counts: bool,
) -> Result<ScanModel, AnalysisError> {
    match (model, has_controls, has_counts) {
        (ScanModel::Auto, true, true) | (ScanModel::PoissonPopulation, true, true) => {
            Ok(ScanModel::PoissonPopulation)
        }
        (ScanModel::PoissonPopulation, _, _) => Err(bad("model", NEEDS_COUNTS)),
        (ScanModel::Auto, true, false) | (ScanModel::Bernoulli, true, false) => {
            Ok(ScanModel::Bernoulli)
        }
        (ScanModel::Bernoulli, true, true) => Err(bad(
            "model",
            "the case–control (Bernoulli) model needs one control per person, but the \
             population file has a count column: use poisson_population, or unmap the count \
             column if each row is one person",
        )),
        (ScanModel::Bernoulli, false, _) => Err(bad(
            "model",
            "the case–control (Bernoulli) model needs a controls file",
        )),
        (ScanModel::Auto, false, _) | (ScanModel::Poisson, _, _) => Ok(ScanModel::Poisson),
    }
}

/// Population points as regions: counts above 0 only (others add nothing),
/// points at one location merged, each case counted at its nearest point
/// (ties to the lower index, see [`crate::index::GridIndex::nearest`]).
/// Also returns the farthest distance from a case to its point, metres.
fn population_regions(
    x: &[f64],
    y: &[f64],
    px: &[f64],
    py: &[f64],
    counts: &[f64],
) -> Result<(ScanRegions, f64), AnalysisError> {
    use std::collections::HashMap;
    let mut at: HashMap<(u64, u64), usize> = HashMap::new();
    let mut r = ScanRegions::default();
    for i in 0..px.len() {
        let w = counts[i];
        if !(w.is_finite() && w > 0.0) {
            continue;
        }
        if !(px[i].is_finite() && py[i].is_finite()) {
            return Err(bad(
                "population",
                format!("population point {} has a bad location", i + 1),
            ));
        }
        // `+ 0.0` so that 0.0 and −0.0 are one place.
        let key = ((px[i] + 0.0).to_bits(), (py[i] + 0.0).to_bits());
        let k = *at.entry(key).or_insert_with(|| {
            r.x.push(px[i]);
            r.y.push(py[i]);
            r.cases.push(0);
            r.population.push(0.0);
            r.x.len() - 1
        });
        r.population[k] += w;
    }
    if r.x.is_empty() {
        return Err(bad(
            "population",
            "every population count is 0 or missing: there is no one at risk",
        ));
    }
    let index = crate::index::GridIndex::new(&r.x, &r.y);
    let mut farthest = 0.0f64;
    for i in 0..x.len() {
        let (k, d) = index
            .nearest(x[i], y[i])
            .ok_or_else(|| bad("events", format!("event {} has a bad location", i + 1)))?;
        r.cases[k] += 1;
        farthest = farthest.max(d);
    }
    Ok((r, farthest))
}

/// Regions summed into square cells (`cells_long_side` along the longer
/// side of the area's bounding box): each cell, at its centre, holds the
/// cases and population of the regions whose locations lie in it; empty
/// cells are dropped.
fn sum_into_cells(
    r: &ScanRegions,
    region: &Window,
    cells_long_side: usize,
) -> Result<(ScanRegions, f64), AnalysisError> {
    if !(2..=512).contains(&cells_long_side) {
        return Err(bad("cells_long_side", "must be between 2 and 512"));
    }
    let g = crate::intensity::GridOptions {
        cells_long_side,
        cell_m: None,
    };
    let (x0, y0, cell, nx, ny) = g.layout(region.bbox()).map_err(|d| bad("grid", d))?;
    let mut cases = vec![0u32; nx * ny];
    let mut pop = vec![0.0; nx * ny];
    for k in 0..r.x.len() {
        let i = (((r.x[k] - x0) / cell).floor().max(0.0) as usize).min(nx - 1);
        let j = (((r.y[k] - y0) / cell).floor().max(0.0) as usize).min(ny - 1);
        cases[j * nx + i] += r.cases[k];
        pop[j * nx + i] += r.population[k];
    }
    let mut out = ScanRegions::default();
    for j in 0..ny {
        for i in 0..nx {
            let k = j * nx + i;
            if pop[k] > 0.0 {
                out.x.push(x0 + (i as f64 + 0.5) * cell);
                out.y.push(y0 + (j as f64 + 0.5) * cell);
                out.cases.push(cases[k]);
                out.population.push(pop[k]);
            }
        }
    }
    Ok((out, cell))
}

/// One region per distinct location; cases counted, population = cases +
/// controls there.
fn distinct_locations(x: &[f64], y: &[f64], kx: &[f64], ky: &[f64]) -> ScanRegions {
    locate_distinct(x, y, kx, ky).0
}

/// [`distinct_locations`], also giving the region of each case.
pub(crate) fn locate_distinct(
    x: &[f64],
    y: &[f64],
    kx: &[f64],
    ky: &[f64],
) -> (ScanRegions, Vec<u32>) {
    use std::collections::HashMap;
    let mut at: HashMap<(u64, u64), usize> = HashMap::new();
    let mut r = ScanRegions::default();
    let mut add = |px: f64, py: f64, case: bool| {
        let key = (px.to_bits(), py.to_bits());
        let i = *at.entry(key).or_insert_with(|| {
            r.x.push(px);
            r.y.push(py);
            r.cases.push(0);
            r.population.push(0.0);
            r.x.len() - 1
        });
        r.population[i] += 1.0;
        if case {
            r.cases[i] += 1;
        }
        i as u32
    };
    let mut of_case = Vec::with_capacity(x.len());
    for i in 0..x.len() {
        of_case.push(add(x[i], y[i], true));
    }
    for i in 0..kx.len() {
        add(kx[i], ky[i], false);
    }
    (r, of_case)
}

/// Square cells over the area's bounding box as regions. Poisson (no
/// controls): population = cell area inside the area (4 × 4 sub-grid),
/// cells with no area dropped. Bernoulli: population = cases + controls,
/// empty cells dropped.
fn grid_regions(
    x: &[f64],
    y: &[f64],
    controls: Option<(&[f64], &[f64])>,
    region: &Window,
    cells_long_side: usize,
) -> Result<(ScanRegions, f64), AnalysisError> {
    if !(2..=512).contains(&cells_long_side) {
        return Err(bad("cells_long_side", "must be between 2 and 512"));
    }
    let g = crate::intensity::GridOptions {
        cells_long_side,
        cell_m: None,
    };
    let (x0, y0, cell, nx, ny) = g.layout(region.bbox()).map_err(|d| bad("grid", d))?;
    let idx = |px: f64, py: f64| -> usize {
        let i = (((px - x0) / cell).floor().max(0.0) as usize).min(nx - 1);
        let j = (((py - y0) / cell).floor().max(0.0) as usize).min(ny - 1);
        j * nx + i
    };
    let mut cases = vec![0u32; nx * ny];
    for k in 0..x.len() {
        cases[idx(x[k], y[k])] += 1;
    }
    let pop: Vec<f64> = match controls {
        Some((kx, ky)) => {
            let mut p: Vec<f64> = cases.iter().map(|&c| c as f64).collect();
            for k in 0..kx.len() {
                p[idx(kx[k], ky[k])] += 1.0;
            }
            p
        }
        None => {
            const SUB: usize = 4;
            let sub = region.raster_mask(x0, y0, cell / SUB as f64, nx * SUB, ny * SUB);
            let mut p = vec![0.0; nx * ny];
            for j in 0..ny * SUB {
                for i in 0..nx * SUB {
                    if sub[j * nx * SUB + i] {
                        p[(j / SUB) * nx + i / SUB] += 1.0;
                    }
                }
            }
            let a = cell * cell / (SUB * SUB) as f64;
            // Events in a cell the sub-grid missed (a sliver of the area):
            // give the cell the smallest positive area so it stays a region.
            p.iter_mut()
                .zip(&cases)
                .for_each(|(v, &c)| *v = if *v == 0.0 && c > 0 { 0.5 } else { *v } * a);
            p
        }
    };
    let mut r = ScanRegions::default();
    for j in 0..ny {
        for i in 0..nx {
            let k = j * nx + i;
            if pop[k] > 0.0 {
                r.x.push(x0 + (i as f64 + 0.5) * cell);
                r.y.push(y0 + (j as f64 + 0.5) * cell);
                r.cases.push(cases[k]);
                r.population.push(pop[k]);
            }
        }
    }
    Ok((r, cell))
}

#[cfg(test)]
mod tests;
#[cfg(test)]
mod tests_compact;
#[cfg(test)]
mod tests_population;
