//! How long will an envelope run take? A quick measurement before the long
//! work, and what faster settings would cost.
//!
//! # Description
//! The K, L and g curves visit every pair of events within the largest
//! distance (plus the kernel half-width for g), so their time grows with
//! the number of such pairs, which for n events is about n²·πr²/(2·area):
//! at 200,000 events in 200 km² and the default largest distance of
//! 2.5 km that is about two billion pairs. [`estimate_envelope_cost`]
//! 1. counts the pairs of the events without visiting them
//!    ([`GridIndex::estimate_pairs_within`], O(cells));
//! 2. times the same computation (same study area, distances and
//!    correction) on a seeded random subsample of at most
//!    [`PROBE_EVENTS`] events and on as many simulated (uniform) events,
//!    at the largest distance and at a second one (half of it, or when the
//!    subsample has fewer than [`BIG_PAIRS_PER_EVENT`] pairs per event,
//!    one that gives about that many), each after one untimed run, keeping
//!    the shortest of at least 3 repeats that take [`PROBE_MIN_MS`]
//!    together;
//! 3. scales by work: time = a·events + b·pairs, b being the difference
//!    in time of the two distances over the difference in pairs and a the
//!    rest per event (when noise makes b negative, the other subsample's
//!    cost stands in, else one cost per event-or-pair). The pairs of one simulation are n(n − 1)/(m(m − 1))
//!    times those of the m simulated events (exact in expectation under
//!    complete spatial randomness). G, F and J visit no pairs: their time
//!    is scaled by the number of events.
//!
//! With the grid estimator (`estimator` binned, or auto when it chooses the
//! grid: [`super::envelope::AUTO_BINNED_PAIRS`]) the time does not depend on
//! the pairs: the lag table once, and per curve a fixed part (one curve of
//! the subsample's simulated events: the FFT) plus the time to draw n events
//! (drawing the subsample's events timed alone, scaled by n/m).
//!
//! One run then takes one observed curve plus n_sim simulated ones shared
//! by the workers. The faster settings offered are fewer simulations (99,
//! 39), a largest distance chosen so that the run takes about
//! [`FAST_RUN_MS`] (rounded down to 1, 2 or 5 times a power of ten), and
//! for K and L the border correction (timed on the same subsamples).
//!
//! # Notes
//! The clock is passed in (milliseconds, e.g. `performance.now()` in the
//! page), so the core does no I/O and tests can use a fake clock. The
//! estimate is rough (within a factor of about two in our measurements,
//! see README); it is for choosing settings, not a promise.

use super::csr::stream_rng;
use super::edge::Correction;
use super::envelope::{EnvelopeOptions, SummaryFunction};
use super::functions::{checked_region, default_bandwidth, default_r_max, Context, FunctionParams};
use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::rng::rng_from_seed;
use crate::study::Pattern;
use crate::window::Window;
use rand::RngExt;
use serde::Serialize;

/// Events in the timed subsample (fewer when there are fewer events).
pub const PROBE_EVENTS: usize = 3000;
/// Each timing repeats the computation (at least 3 times) until this many
/// milliseconds passed (at most [`PROBE_MAX_REPEATS`] times) and keeps the
/// shortest.
pub const PROBE_MIN_MS: f64 = 25.0;
pub const PROBE_MAX_REPEATS: usize = 8;
/// The second timing distance: half the largest when the subsample has at
/// least this many pairs per event, else one giving about this many.
pub const BIG_PAIRS_PER_EVENT: f64 = 100.0;
/// The largest distance offered as faster aims at a run of about this long.
pub const FAST_RUN_MS: f64 = 10_000.0;

/// A faster setting and what the run would take with it (the other
/// settings unchanged).
#[derive(Debug, Clone, Serialize)]
pub struct FasterSetting {
    /// `"n_sim"`, `"r_max_m"` or `"correction"`.
    pub option: String,
    /// The new value: a number for `n_sim` and `r_max_m`, else null.
    pub number: Option<f64>,
    /// The new value for `correction`, else null.
    pub choice: Option<String>,
    /// In words, e.g. "39 simulations".
    pub label: String,
    pub curve_ms: f64,
    pub run_ms: f64,
}

/// The estimated time of an envelope run.
#[derive(Debug, Clone, Serialize)]
pub struct EnvelopeCost {
    pub events: usize,
    pub n_sim: usize,
    pub workers: usize,
    pub r_max_m: f64,
    pub r_max_rule: String,
    /// Estimated pairs of events within reach (0 for G, F and J).
    pub pairs: f64,
    /// Expected pairs within reach of one simulated pattern.
    pub simulated_pairs: f64,
    /// The observed curve, ms.
    pub curve_ms: f64,
    /// One simulated curve, ms.
    pub simulation_ms: f64,
    /// The whole run: curve + n_sim × simulation / workers, ms.
    pub run_ms: f64,
    /// Events in the timed subsample.
    pub probe_events: usize,
    /// Time the measurement itself took, ms.
    pub probe_ms: f64,
    pub faster: Vec<FasterSetting>,
    /// The estimator the run will use (`exact` or `binned`, `auto`
    /// settled as the run settles it).
    pub estimator: super::envelope::Estimator,
}

/// Time of a curve as `per_event`·events + `per_pair`·pairs, ms.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Cost {
    pub per_event: f64,
    pub per_pair: f64,
}

impl Cost {
    fn of(&self, events: f64, pairs: f64) -> f64 {
        self.per_event * events + self.per_pair * pairs
    }

    /// The cost from one number of events `n` timed at two distances:
    /// `t1` with `p1` pairs and `t2` with `p2` ≠ `p1` pairs. A pair costs
    /// the difference in time over the difference in pairs; an event the
    /// rest of `t1`. When that is not a non-negative number (or the pairs
    /// are equal: G, F, J), one cost per event-or-pair from the first
    /// timing.
    pub(crate) fn from_extra_pairs(n: f64, p1: f64, t1: f64, p2: f64, t2: f64) -> Cost {
        Cost::fitted(n, p1, t1, p2, t2).unwrap_or_else(|| Cost::flat(n, p1, t1))
    }

    /// As [`Cost::from_extra_pairs`], or None instead of the fallback.
    fn fitted(n: f64, p1: f64, t1: f64, p2: f64, t2: f64) -> Option<Cost> {
        let b = (t2 - t1) / (p2 - p1);
        (b.is_finite() && b >= 0.0 && p2 != p1).then(|| Cost {
            per_event: ((t1 - b * p1) / n.max(1.0)).max(0.0),
            per_pair: b,
        })
    }

    /// One cost per event-or-pair.
    fn flat(n: f64, p: f64, t: f64) -> Cost {
        let u = t / (n + p).max(1.0);
        Cost {
            per_event: u,
            per_pair: u,
        }
    }
}

/// The costs of the observed and of a simulated curve, for one correction.
struct UnitCost {
    observed: Cost,
    simulated: Cost,
}

/// Shortest time of `f` over at least 3 repeats that together take
/// [`PROBE_MIN_MS`] (at most [`PROBE_MAX_REPEATS`]), after one untimed run
/// (the engine's code warms up on its first runs). The shortest, not the
/// mean: on a busy machine other work only ever adds time.
fn timed(clock: &mut dyn FnMut() -> f64, mut f: impl FnMut()) -> f64 {
    f();
    let mut last = clock();
    let (mut best, mut total, mut reps) = (f64::INFINITY, 0.0, 0);
    loop {
        f();
        let now = clock();
        let dt = (now - last).max(0.0);
        last = now;
        best = best.min(dt);
        total += dt;
        reps += 1;
        if (total >= PROBE_MIN_MS && reps >= 3) || reps >= PROBE_MAX_REPEATS {
            return best;
        }
    }
}

/// `x` rounded down to 1, 2 or 5 times a power of ten.
fn nice_floor(x: f64) -> f64 {
    let p = 10f64.powf(x.log10().floor());
    let m = x / p;
    let f = if m >= 5.0 {
        5.0
    } else if m >= 2.0 {
        2.0
    } else {
        1.0
    };
    f * p
}

fn metres_text(r: f64) -> String {
    if r >= 1000.0 {
        format!("{} km", crate::params::num(r / 1000.0))
    } else {
        format!("{} m", crate::params::num(r))
    }
}

/// Estimates how long [`super::EnvelopeJob`] with options `o` will take on
/// `pattern` in `window` with `workers` workers sharing the simulations,
/// from a quick measurement (see the module doc). `clock()` returns
/// milliseconds. Errors as [`super::EnvelopeJob::new`] (bad options, fewer
/// than two events, an unusable study area).
pub fn estimate_envelope_cost(
    pattern: &Pattern,
    window: &Window,
    o: &EnvelopeOptions,
    workers: usize,
    clock: &mut dyn FnMut() -> f64,
) -> Result<EnvelopeCost, AnalysisError> {
    use crate::params::Params;
    o.validate()?;
    let t_start = clock();
    let region = checked_region(pattern, window)?;
    let workers = workers.max(1);
    let p = o.params();
    let needs = p.function.needs();
    let n = pattern.len();
    let (r_max, r_max_rule) = match p.functions.r_max {
        Some(r) => (r, "set by the user".to_string()),
        None => default_r_max(&region),
    };
    let lambda = n as f64 / region.area();
    let bandwidth = p
        .functions
        .bandwidth
        .unwrap_or_else(|| default_bandwidth(lambda));
    let pairs_based = needs.k || needs.pcf;
    let extra = if needs.pcf { bandwidth } else { 0.0 };

    // The seeded subsample (partial Fisher–Yates) and m simulated events.
    let m = n.min(PROBE_EVENTS);
    let mut idx: Vec<usize> = (0..n).collect();
    let mut rng = rng_from_seed(p.seed);
    for a in 0..m {
        let b = a + rng.random_range(0..n - a);
        idx.swap(a, b);
    }
    let sx: Vec<f64> = idx[..m].iter().map(|&i| pattern.x()[i]).collect();
    let sy: Vec<f64> = idx[..m].iter().map(|&i| pattern.y()[i]).collect();
    let (cx, cy) = region.sample_uniform(m, &mut stream_rng(p.seed, 0));
    let choice = super::envelope::choose(&p, &region, pattern.x(), pattern.y())?;
    if choice.estimator == super::envelope::Estimator::Binned {
        let timing = binned_cost(
            pattern,
            region,
            &p,
            choice.correction,
            workers,
            clock,
            r_max,
        )?;
        return Ok(timing.cost(
            (n, workers),
            &p,
            (r_max, r_max_rule),
            choice.estimator,
            clock() - t_start,
        ));
    }

    let pairs_at = |x: &[f64], y: &[f64], r: f64| -> f64 {
        if pairs_based {
            GridIndex::with_cell(x, y, r / 4.0).estimate_pairs_within(r)
        } else {
            0.0
        }
    };
    let scale_sim = if m >= 2 {
        (n as f64 * (n as f64 - 1.0)) / (m as f64 * (m as f64 - 1.0))
    } else {
        1.0
    };
    let reach = r_max + extra;
    let probe_obs_pairs = pairs_at(&sx, &sy, reach);
    let probe_sim_pairs = pairs_at(&cx, &cy, reach);
    let pairs = if m == n {
        probe_obs_pairs
    } else {
        pairs_at(pattern.x(), pattern.y(), reach)
    };
    let simulated_pairs = probe_sim_pairs * scale_sim;

    let unit_cost = |correction: Correction,
                     clock: &mut dyn FnMut() -> f64|
     -> Result<UnitCost, AnalysisError> {
        let mut fp = p.functions.clone();
        fp.r_max = Some(r_max);
        fp.bandwidth = Some(bandwidth);
        fp.correction = correction;
        let mut j = 1u64;
        let mut measure = |k: usize, r: f64, clock: &mut dyn FnMut() -> f64| {
            let (sx, sy) = (&sx[..k], &sy[..k]);
            let fp = FunctionParams {
                r_max: Some(r),
                ..fp.clone()
            };
            let ctx = Context::new(region.clone(), k, &fp, needs)?;
            let t_obs = timed(clock, || {
                std::hint::black_box(ctx.compute(sx, sy, needs));
            });
            let t_sim = timed(clock, || {
                let (x, y) = region.sample_uniform(k, &mut stream_rng(p.seed, j));
                j += 1;
                std::hint::black_box(ctx.compute(&x, &y, needs));
            });
            Ok::<_, AnalysisError>((t_obs, t_sim))
        };
        let (t_obs, t_sim) = measure(m, r_max, clock)?;
        let mf = m as f64;
        if !pairs_based || m < 2 {
            return Ok(UnitCost {
                observed: Cost::from_extra_pairs(mf, 0.0, t_obs, 0.0, t_obs),
                simulated: Cost::from_extra_pairs(mf, 0.0, t_sim, 0.0, t_sim),
            });
        }
        // The same subsample at a second distance: half the largest one
        // when its pairs already dominate, else one giving about
        // BIG_PAIRS_PER_EVENT pairs per event (a small largest distance:
        // too few pairs for their cost to show). The difference in time
        // over the difference in pairs is the cost of a pair.
        let r2 = if probe_sim_pairs >= BIG_PAIRS_PER_EVENT * mf {
            0.5 * r_max
        } else {
            let [bx0, by0, bx1, by1] = region.bbox();
            let widest = 0.5 * (bx1 - bx0).min(by1 - by0);
            let grow = (BIG_PAIRS_PER_EVENT * mf / probe_sim_pairs.max(1.0)).sqrt();
            (reach * grow).min(widest.max(reach)) - extra
        };
        let obs2 = pairs_at(&sx, &sy, r2 + extra);
        let sim2 = pairs_at(&cx, &cy, r2 + extra);
        let (t2_obs, t2_sim) = measure(m, r2, clock)?;
        // The observed and simulated subsamples have the same events, area
        // and settings: when noise spoils one fit, the other stands in.
        let obs = Cost::fitted(mf, probe_obs_pairs, t_obs, obs2, t2_obs);
        let sim = Cost::fitted(mf, probe_sim_pairs, t_sim, sim2, t2_sim);
        Ok(UnitCost {
            observed: obs
                .or(sim)
                .unwrap_or_else(|| Cost::flat(mf, probe_obs_pairs, t_obs)),
            simulated: sim
                .or(obs)
                .unwrap_or_else(|| Cost::flat(mf, probe_sim_pairs, t_sim)),
        })
    };
    let unit = unit_cost(p.functions.correction, clock)?;
    let nf = n as f64;
    let times = |u: &UnitCost, obs_pairs: f64, sim_pairs: f64, n_sim: usize| -> (f64, f64) {
        let curve = u.observed.of(nf, obs_pairs);
        let sim = u.simulated.of(nf, sim_pairs);
        (curve, curve + n_sim as f64 * sim / workers as f64)
    };
    let (curve_ms, run_ms) = times(&unit, pairs, simulated_pairs, p.n_sim);
    let simulation_ms = unit.simulated.of(nf, simulated_pairs);

    let mut faster = fewer_simulations(p.n_sim, |k| times(&unit, pairs, simulated_pairs, k));
    if pairs_based && run_ms > FAST_RUN_MS {
        // Pairs grow about as r², so this r gives about FAST_RUN_MS.
        let s = (FAST_RUN_MS / run_ms).sqrt().clamp(0.02, 0.5);
        let r_new = nice_floor(r_max * s);
        // Above the start of the tested distances (h for g).
        let floor = p.r_min.unwrap_or(extra);
        if r_new.is_finite() && r_new > floor && r_new < r_max {
            let reach_new = r_new + extra;
            let obs_new = if m == n {
                pairs_at(&sx, &sy, reach_new)
            } else {
                pairs_at(pattern.x(), pattern.y(), reach_new)
            };
            let sim_new = pairs_at(&cx, &cy, reach_new) * scale_sim;
            let (c, r) = times(&unit, obs_new, sim_new, p.n_sim);
            faster.push(FasterSetting {
                option: "r_max_m".into(),
                number: Some(r_new),
                choice: None,
                label: format!("largest distance {}", metres_text(r_new)),
                curve_ms: c,
                run_ms: r,
            });
        }
    }
    let border_possible = matches!(p.function, SummaryFunction::K | SummaryFunction::L);
    if border_possible && p.functions.correction != Correction::Border {
        let u = unit_cost(Correction::Border, clock)?;
        let (c, r) = times(&u, pairs, simulated_pairs, p.n_sim);
        if r < run_ms {
            faster.push(FasterSetting {
                option: "correction".into(),
                number: None,
                choice: Some("border".into()),
                label: "border correction".into(),
                curve_ms: c,
                run_ms: r,
            });
        }
    }
    faster.retain(|f| f.run_ms < run_ms);
    let timing = Timing {
        pairs,
        simulated_pairs,
        curve_ms,
        simulation_ms,
        run_ms,
        probe_events: m,
        faster,
    };
    Ok(timing.cost(
        (n, workers),
        &p,
        (r_max, r_max_rule),
        choice.estimator,
        clock() - t_start,
    ))
}

/// What the two estimators' timings give (see [`EnvelopeCost`]).
struct Timing {
    pairs: f64,
    simulated_pairs: f64,
    curve_ms: f64,
    simulation_ms: f64,
    run_ms: f64,
    probe_events: usize,
    faster: Vec<FasterSetting>,
}

impl Timing {
    /// The estimate for `events` events and `workers` workers with the
    /// largest distance and its rule, the estimator and the time the
    /// measurement took.
    fn cost(
        self,
        (events, workers): (usize, usize),
        p: &super::envelope::EnvelopeParams,
        (r_max_m, r_max_rule): (f64, String),
        estimator: super::envelope::Estimator,
        probe_ms: f64,
    ) -> EnvelopeCost {
        EnvelopeCost {
            events,
            n_sim: p.n_sim,
            workers,
            r_max_m,
            r_max_rule,
            pairs: self.pairs,
            simulated_pairs: self.simulated_pairs,
            curve_ms: self.curve_ms,
            simulation_ms: self.simulation_ms,
            run_ms: self.run_ms,
            probe_events: self.probe_events,
            probe_ms: probe_ms.max(0.0),
            faster: self.faster,
            estimator,
        }
    }
}

/// The settings with fewer simulations (99, usual for a first look, and
/// 39, a rough answer) fewer than the run's, with `times(k)` the curve's
/// and the whole run's time with k simulations.
fn fewer_simulations(n_sim: usize, times: impl Fn(usize) -> (f64, f64)) -> Vec<FasterSetting> {
    [(99usize, "usual for a first look"), (39, "a rough answer")]
        .into_iter()
        .filter(|&(k, _)| n_sim > k)
        .map(|(k, what)| {
            let (curve_ms, run_ms) = times(k);
            FasterSetting {
                option: "n_sim".into(),
                number: Some(k as f64),
                choice: None,
                label: format!("{k} simulations ({what})"),
                curve_ms,
                run_ms,
            }
        })
        .collect()
}

/// The run's time with the grid estimator: the lag table once (timed), and
/// per curve a fixed part (a curve of m = min(n, [`PROBE_EVENTS`]) simulated
/// events: the FFT, whose size does not depend on n) plus a part per event
/// (drawing m events, timed alone, scaled to n).
fn binned_cost(
    pattern: &Pattern,
    region: Window,
    p: &super::envelope::EnvelopeParams,
    correction: Correction,
    workers: usize,
    clock: &mut dyn FnMut() -> f64,
    r_max: f64,
) -> Result<Timing, AnalysisError> {
    let needs = p.function.needs();
    let n = pattern.len();
    let mut fp = p.functions.clone();
    fp.correction = correction;
    let t0 = clock();
    let ctx = Context::new(region.clone(), n, &fp, needs)?;
    let table = super::binned::Binned::new(&ctx, needs, p.binned_fft_side)?;
    let table_ms = (clock() - t0).max(0.0);
    let m = n.clamp(8, PROBE_EVENTS);
    let mut j = 1u64;
    // The fixed part: a whole curve of m simulated events (the FFT
    // dominates; the m events' own share is negligible beside it).
    let fixed = timed(clock, || {
        let (x, y) = region.sample_uniform(m, &mut stream_rng(p.seed, j));
        j += 1;
        std::hint::black_box(table.compute(&x, &y, needs));
    });
    // The part per event: drawing the events (binning them costs far
    // less), timed alone so that the noise of the FFT's time does not
    // enter it.
    let t_draw = timed(clock, || {
        std::hint::black_box(region.sample_uniform(m, &mut stream_rng(p.seed, j)));
        j += 1;
    });
    let per_event = t_draw / m as f64;
    let simulation_ms = fixed + per_event * n as f64;
    let curve_ms = table_ms + simulation_ms;
    let run_ms = curve_ms + p.n_sim as f64 * simulation_ms / workers as f64;
    let faster = fewer_simulations(p.n_sim, |k| {
        (
            curve_ms,
            curve_ms + k as f64 * simulation_ms / workers as f64,
        )
    });
    // For information (the grid's time does not depend on them): the
    // observed pairs estimated from cell counts, and the CSR expectation
    // ½·n(n − 1)·πr²/|W| (edges ignored) for a simulated pattern.
    let pairs =
        GridIndex::with_cell(pattern.x(), pattern.y(), r_max / 4.0).estimate_pairs_within(r_max);
    let nf = n as f64;
    let simulated_pairs =
        0.5 * nf * (nf - 1.0) * std::f64::consts::PI * r_max * r_max / region.area();
    Ok(Timing {
        pairs,
        simulated_pairs,
        curve_ms,
        simulation_ms,
        run_ms,
        probe_events: m,
        faster,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::distance::simulate_csr;

    /// A clock that advances 1 ms each time it is read: every timing then
    /// measures exactly 1 ms per computation, so the scaling is checked
    /// without depending on the machine.
    fn fake_clock() -> impl FnMut() -> f64 {
        let mut t = 0.0;
        move || {
            t += 1.0;
            t
        }
    }

    /// A fake clock whose step changes with the number of readings:
    /// `plan` lists (last reading, step). The timings come in this order:
    /// observed and simulated at the largest distance, the same at the
    /// second distance, then the same four for the border correction; each
    /// test says how many readings a timing takes.
    fn planned_clock(plan: &'static [(usize, f64)]) -> impl FnMut() -> f64 {
        let (mut t, mut reads) = (0.0, 0usize);
        move || {
            reads += 1;
            t += plan
                .iter()
                .find(|(last, _)| reads <= *last)
                .map_or(0.0, |(_, step)| *step);
            t
        }
    }

    fn rect() -> Window {
        Window::rectangle(0.0, 0.0, 2000.0, 1000.0).unwrap()
    }

    #[test]
    fn binned_run_is_table_plus_curves_without_pairs() {
        // The grid estimator: with a clock that advances 1 ms per reading,
        // the table takes 1 ms, a curve 1 ms and drawing 500 events 1 ms
        // (2 µs each), so a simulated curve 1 + 500·0.002 = 2 ms and the run
        // is table + curve + n_sim curves / workers.
        let w = rect();
        let pat = simulate_csr(&w, 500, 5).unwrap();
        let o = EnvelopeOptions {
            n_sim: 99,
            estimator: crate::distance::Estimator::Binned,
            correction: Correction::Translation,
            ..Default::default()
        };
        let c = estimate_envelope_cost(&pat, &w, &o, 2, &mut fake_clock()).unwrap();
        assert_eq!(c.estimator, crate::distance::Estimator::Binned);
        assert!((c.simulation_ms - 2.0).abs() < 1e-12, "{c:?}");
        assert!((c.curve_ms - 3.0).abs() < 1e-12, "{c:?}");
        assert!((c.run_ms - (3.0 + 99.0 * 2.0 / 2.0)).abs() < 1e-9, "{c:?}");
        // The same options with every pair: the exact path, which says so.
        let o = EnvelopeOptions {
            estimator: crate::distance::Estimator::Exact,
            ..o
        };
        let c = estimate_envelope_cost(&pat, &w, &o, 2, &mut fake_clock()).unwrap();
        assert_eq!(c.estimator, crate::distance::Estimator::Exact);
    }

    #[test]
    fn run_is_one_curve_plus_simulations_over_workers() {
        let w = rect();
        let pat = simulate_csr(&w, 8000, 5).unwrap();
        let o = EnvelopeOptions {
            n_sim: 199,
            ..Default::default()
        };
        // 1 ms per repeat at the largest distance, 0.25 at half of it (a
        // quarter of the pairs): all the time is the pairs'. With 1 ms
        // steps the three repeats do not reach PROBE_MIN_MS, so each
        // timing reads the clock 9 times: readings 2–19 and 20–37.
        const PLAN: &[(usize, f64)] = &[(1, 0.0), (19, 1.0), (37, 0.25), (55, 1.0), (73, 0.25)];
        let one = estimate_envelope_cost(&pat, &w, &o, 1, &mut planned_clock(PLAN)).unwrap();
        let four = estimate_envelope_cost(&pat, &w, &o, 4, &mut planned_clock(PLAN)).unwrap();
        assert_eq!(one.probe_events, PROBE_EVENTS);
        let want = one.curve_ms + 199.0 * one.simulation_ms;
        assert!((one.run_ms - want).abs() <= 1e-9 * want, "{one:?}");
        let want4 = one.curve_ms + 199.0 * one.simulation_ms / 4.0;
        assert!((four.run_ms - want4).abs() <= 1e-9 * want4, "{four:?}");
        // Uniform events: the observed curve costs about one simulation,
        // and its pairs are about n²·πr²/(2·area) less the edge loss
        // (r = 250 m, the default: a quarter of the shorter side).
        assert!(
            (one.curve_ms / one.simulation_ms - 1.0).abs() < 0.1,
            "{one:?}"
        );
        let interior = 8000.0 * 7999.0 * std::f64::consts::PI * 250.0 * 250.0 / (2.0 * 2.0e6);
        let q = one.pairs / interior;
        assert!(
            (0.7..=1.0).contains(&q),
            "pairs {} vs {interior}",
            one.pairs
        );
        // 1 ms per probe curve of 3000 events, all of it pairs: scaled by
        // the pairs, about (8000/3000)² = 7.1 times.
        assert!(
            one.curve_ms > 6.0 && one.curve_ms < (8000.0f64 / 3000.0).powi(2) * 1.05,
            "{one:?}"
        );
    }

    /// Two distances recover a known cost, and a negative cost of a pair
    /// falls back to one cost per event-or-pair.
    #[test]
    fn cost_from_two_distances() {
        // One size at two distances: 3000 events with 20,000 then 60,000
        // pairs take 30 + 4 = 34 and 30 + 12 = 42 ms.
        let c = Cost::from_extra_pairs(3000.0, 20_000.0, 34.0, 60_000.0, 42.0);
        assert!(
            (c.per_pair - 2e-4).abs() < 1e-15 && (c.per_event - 0.01).abs() < 1e-12,
            "{c:?}"
        );
        let c = Cost::from_extra_pairs(3000.0, 20_000.0, 34.0, 60_000.0, 30.0);
        assert_eq!(c.per_event, c.per_pair);
    }

    #[test]
    fn faster_settings_are_faster_and_fit_the_function() {
        let w = rect();
        let pat = simulate_csr(&w, 8000, 6).unwrap();
        let o = EnvelopeOptions {
            n_sim: 999,
            ..Default::default()
        };
        // A slow fake clock so that the run is long (three repeats pass
        // PROBE_MIN_MS: 4 readings per timing): 100 ms per repeat at the
        // largest distance and 25 at half of it (the time is the pairs'),
        // and half that with the border correction.
        const PLAN: &[(usize, f64)] = &[(1, 0.0), (9, 100.0), (17, 25.0), (25, 50.0), (33, 12.5)];
        let c = estimate_envelope_cost(&pat, &w, &o, 1, &mut planned_clock(PLAN)).unwrap();
        assert!(c.run_ms > FAST_RUN_MS, "{c:?}");
        let options: Vec<&str> = c.faster.iter().map(|f| f.option.as_str()).collect();
        assert_eq!(
            options,
            ["n_sim", "n_sim", "r_max_m", "correction"],
            "{c:?}"
        );
        for f in &c.faster {
            assert!(f.run_ms < c.run_ms, "{f:?}");
        }
        let r = c.faster[2].number.unwrap();
        assert!(r < 250.0 && [1.0, 2.0, 5.0].contains(&(r / 10f64.powf(r.log10().floor()))));
        assert_eq!(c.faster[3].choice.as_deref(), Some("border"));
        // G does not visit pairs: no largest distance, no border offer.
        let g = EnvelopeOptions {
            function: SummaryFunction::NearestNeighbour,
            ..o.clone()
        };
        let c = estimate_envelope_cost(&pat, &w, &g, 1, &mut fake_clock()).unwrap();
        assert_eq!(c.pairs, 0.0);
        assert!(c.faster.iter().all(|f| f.option == "n_sim"), "{c:?}");
        // Already the border correction: not offered again.
        let b = EnvelopeOptions {
            correction: Correction::Border,
            ..o
        };
        let c = estimate_envelope_cost(&pat, &w, &b, 1, &mut fake_clock()).unwrap();
        assert!(c.faster.iter().all(|f| f.option != "correction"), "{c:?}");
    }

    #[test]
    fn few_events_are_measured_whole_and_bad_input_is_refused() {
        let w = rect();
        let pat = simulate_csr(&w, 200, 7).unwrap();
        let c = estimate_envelope_cost(&pat, &w, &EnvelopeOptions::default(), 1, &mut fake_clock())
            .unwrap();
        assert_eq!(c.probe_events, 200);
        // The probe is the observed curve itself: 1 ms on the fake clock.
        assert!((c.curve_ms - 1.0).abs() < 1e-12, "{c:?}");
        // A tiny largest distance (few pairs in the subsample: the cost of a
        // pair is timed at a larger distance): still finite and positive.
        let many = simulate_csr(&w, 8000, 7).unwrap();
        let tiny = EnvelopeOptions {
            r_max_m: Some(5.0),
            ..Default::default()
        };
        let c = estimate_envelope_cost(&many, &w, &tiny, 1, &mut fake_clock()).unwrap();
        assert!(
            c.curve_ms.is_finite() && c.curve_ms > 0.0 && c.run_ms > c.curve_ms,
            "{c:?}"
        );
        let one = simulate_csr(&w, 1, 7).unwrap();
        assert!(estimate_envelope_cost(
            &one,
            &w,
            &EnvelopeOptions::default(),
            1,
            &mut fake_clock()
        )
        .is_err());
        let bad = EnvelopeOptions {
            n_sim: 0,
            ..Default::default()
        };
        assert!(estimate_envelope_cost(&pat, &w, &bad, 1, &mut fake_clock()).is_err());
    }
}
