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
//!    [`PROBE_EVENTS`] events and on a third of them, and on as many
//!    simulated (uniform) events, each after one untimed run, keeping the
//!    shortest of at least 3 repeats that take [`PROBE_MIN_MS`] together;
//! 3. scales by work: time = a·events + b·pairs, a and b solved from the
//!    two sizes (pairs grow as the square of the events, so the two
//!    separate); when noise makes either negative, one cost per
//!    event-or-pair from the larger size. The pairs of one simulation
//!    n(n − 1)/(m(m − 1)) times those of the m simulated events (exact in
//!    expectation under complete spatial randomness). G, F and J do not
//!    visit pairs: their time is scaled by the number of events.
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
use super::functions::{checked_region, default_bandwidth, default_r_max, Context};
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

    /// The cost that gives times `t1` for (events `n1`, pairs `p1`) and
    /// `t2` for (`n2`, `p2`) (two equations, two unknowns); when the
    /// solution is not two non-negative finite numbers (noise, or pairs
    /// that do not grow faster than events), one cost per event-or-pair
    /// from the larger measurement.
    pub(crate) fn fit(n1: f64, p1: f64, t1: f64, n2: f64, p2: f64, t2: f64) -> Cost {
        let det = n1 * p2 - n2 * p1;
        let a = (t1 * p2 - t2 * p1) / det;
        let b = (n1 * t2 - n2 * t1) / det;
        if a.is_finite() && b.is_finite() && a >= 0.0 && b >= 0.0 && det.abs() > 0.0 {
            Cost {
                per_event: a,
                per_pair: b,
            }
        } else {
            let u = t2 / (n2 + p2).max(1.0);
            Cost {
                per_event: u,
                per_pair: u,
            }
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

    // A third of the subsample (the first m/3 of the same draw) for the
    // second size; none when there are too few events to tell the two apart.
    let m_small = if m >= 300 { m / 3 } else { 0 };
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
    let small_obs_pairs = pairs_at(&sx[..m_small], &sy[..m_small], reach);
    let small_sim_pairs = pairs_at(&cx[..m_small], &cy[..m_small], reach);
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
        let mut measure = |k: usize, clock: &mut dyn FnMut() -> f64| {
            let ctx = Context::new(region.clone(), k, &fp, needs)?;
            let t_obs = timed(clock, || {
                std::hint::black_box(ctx.compute(&sx[..k], &sy[..k], needs));
            });
            let t_sim = timed(clock, || {
                let (x, y) = region.sample_uniform(k, &mut stream_rng(p.seed, j));
                j += 1;
                std::hint::black_box(ctx.compute(&x, &y, needs));
            });
            Ok::<_, AnalysisError>((t_obs, t_sim))
        };
        let (t_obs, t_sim) = measure(m, clock)?;
        let mf = m as f64;
        if m_small < 2 {
            return Ok(UnitCost {
                observed: Cost::fit(0.0, 0.0, 0.0, mf, probe_obs_pairs, t_obs),
                simulated: Cost::fit(0.0, 0.0, 0.0, mf, probe_sim_pairs, t_sim),
            });
        }
        let (s_obs, s_sim) = measure(m_small, clock)?;
        let ms = m_small as f64;
        Ok(UnitCost {
            observed: Cost::fit(ms, small_obs_pairs, s_obs, mf, probe_obs_pairs, t_obs),
            simulated: Cost::fit(ms, small_sim_pairs, s_sim, mf, probe_sim_pairs, t_sim),
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

    let mut faster = Vec::new();
    for (k, what) in [(99usize, "usual for a first look"), (39, "a rough answer")] {
        if p.n_sim > k {
            let (c, r) = times(&unit, pairs, simulated_pairs, k);
            faster.push(FasterSetting {
                option: "n_sim".into(),
                number: Some(k as f64),
                choice: None,
                label: format!("{k} simulations ({what})"),
                curve_ms: c,
                run_ms: r,
            });
        }
    }
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
    Ok(EnvelopeCost {
        events: n,
        n_sim: p.n_sim,
        workers,
        r_max_m: r_max,
        r_max_rule,
        pairs,
        simulated_pairs,
        curve_ms,
        simulation_ms,
        run_ms,
        probe_events: m,
        probe_ms: (clock() - t_start).max(0.0),
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

    fn rect() -> Window {
        Window::rectangle(0.0, 0.0, 2000.0, 1000.0).unwrap()
    }

    #[test]
    fn run_is_one_curve_plus_simulations_over_workers() {
        let w = rect();
        let pat = simulate_csr(&w, 8000, 5).unwrap();
        let o = EnvelopeOptions {
            n_sim: 199,
            ..Default::default()
        };
        let one = estimate_envelope_cost(&pat, &w, &o, 1, &mut fake_clock()).unwrap();
        let four = estimate_envelope_cost(&pat, &w, &o, 4, &mut fake_clock()).unwrap();
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
        // 1 ms per probe curve of 3000 events scaled by work: more than
        // (8000/3000)² times less a little for the events term.
        assert!(one.curve_ms > 5.0 && one.curve_ms < (8000.0f64 / 3000.0).powi(2) * 1.05);
    }

    /// The two-size fit recovers a known cost, and falls back to one cost
    /// per event-or-pair when the measurements contradict it.
    #[test]
    fn cost_fit_solves_the_two_sizes() {
        // 0.01 ms per event, 0.0002 ms per pair: 1000 events with 50,000
        // pairs take 10 + 10 = 20 ms; 3000 with 450,000 take 30 + 90 = 120.
        let c = Cost::fit(1000.0, 50_000.0, 20.0, 3000.0, 450_000.0, 120.0);
        assert!(
            (c.per_event - 0.01).abs() < 1e-12 && (c.per_pair - 2e-4).abs() < 1e-15,
            "{c:?}"
        );
        assert!((c.of(30_000.0, 4.5e7) - (300.0 + 9000.0)).abs() < 1e-6);
        // The same time at both sizes: no non-negative solution.
        let c = Cost::fit(1000.0, 50_000.0, 20.0, 3000.0, 450_000.0, 20.0);
        assert_eq!(c.per_event, c.per_pair);
        assert!((c.per_event - 20.0 / 453_000.0).abs() < 1e-15);
    }

    #[test]
    fn faster_settings_are_faster_and_fit_the_function() {
        let w = rect();
        let pat = simulate_csr(&w, 8000, 6).unwrap();
        let o = EnvelopeOptions {
            n_sim: 999,
            ..Default::default()
        };
        // A slow fake clock so that the run is long: 100 ms per reading
        // for the first 17 readings (the start, then four readings for
        // each of the four timings of the chosen correction, two sizes of
        // observed and simulated events: three repeats), then 50 ms (the
        // border timings),
        // as if the border correction took half the time.
        let (mut t, mut reads) = (0.0, 0);
        let mut slow = || {
            reads += 1;
            t += if reads <= 17 { 100.0 } else { 50.0 };
            t
        };
        let c = estimate_envelope_cost(&pat, &w, &o, 1, &mut slow).unwrap();
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
