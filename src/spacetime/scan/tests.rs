use super::*;
use crate::rng::rng_from_seed;
use rand::RngExt;

fn events(xy: &[(f64, f64)], days: &[f64]) -> TimedEvents {
    TimedEvents::from_xyt(
        xy.iter().map(|p| p.0).collect(),
        xy.iter().map(|p| p.1).collect(),
        days.to_vec(),
    )
    .unwrap()
}

fn opts(mode: StScanMode, n_sim: usize) -> StScanOptions {
    StScanOptions {
        mode,
        n_sim,
        seed: 5,
        ..Default::default()
    }
}

/// Independent enumeration of every cylinder (circles by the stated rule:
/// centred on each location, growing by distance with ties entering
/// together, at most `max_share` of the events): the largest LLR and, per
/// centre, the best LLR. Straight from the formulas of Kulldorff et al.
/// (2005): μ = N_circle · N_interval / C.
fn brute_force(ev: &TimedEvents, o: &StScanOptions) -> (f64, Vec<f64>) {
    let n = ev.len();
    let cc = n as f64;
    let day: Vec<i64> = ev.t.iter().map(|t| t.floor() as i64).collect();
    let first = *day.iter().min().unwrap();
    let last = *day.iter().max().unwrap();
    let mut locs: Vec<(f64, f64)> = Vec::new();
    for i in 0..n {
        if !locs.contains(&(ev.x[i], ev.y[i])) {
            locs.push((ev.x[i], ev.y[i]));
        }
    }
    let d2 = |a: (f64, f64), b: (f64, f64)| (a.0 - b.0).powi(2) + (a.1 - b.1).powi(2);
    let mut per_centre = Vec::new();
    for &c0 in &locs {
        let mut radii: Vec<f64> = locs.iter().map(|&z| d2(z, c0)).collect();
        radii.sort_by(|a, b| a.total_cmp(b));
        radii.dedup();
        let mut best = 0.0f64;
        for r in radii {
            let inside = |i: usize| d2((ev.x[i], ev.y[i]), c0) <= r;
            let nc = (0..n).filter(|&i| inside(i)).count() as f64;
            if nc > o.max_share * cc * (1.0 + 1e-12) {
                break;
            }
            for e in first..=last {
                for s in (e - o.max_days as i64 + 1).max(first)..=e {
                    if o.mode == StScanMode::Prospective && e != last {
                        continue;
                    }
                    let within = |i: usize| day[i] >= s && day[i] <= e;
                    let t = (0..n).filter(|&i| within(i)).count() as f64;
                    let c = (0..n).filter(|&i| inside(i) && within(i)).count() as f64;
                    let mu = nc * t / cc;
                    if c > mu {
                        let l = c * (c / mu).ln()
                            + if c < cc {
                                (cc - c) * ((cc - c) / (cc - mu)).ln()
                            } else {
                                0.0
                            };
                        best = best.max(l);
                    }
                }
            }
        }
        per_centre.push(best);
    }
    (per_centre.iter().copied().fold(0.0, f64::max), per_centre)
}

/// Hand example. Four locations on a line 3 km apart, C = 10 events:
/// A (0 m): 4 events on day 0; B (3000 m): days 1 and 3; C (6000 m): days 1
/// and 3; D (9000 m): days 0 and 2. Largest circle 50 % = 5 events, so A's
/// circle is A alone (adding B would make 6).
/// Cylinder A × [day 0, day 0]: c = 4; N_circle = 4, N_day0 = 5 (four at A,
/// one at D); μ = 4·5/10 = 2 (Kulldorff et al. 2005, PLoS Med 2:e59,
/// expected count from the margins). LLR = 4·ln(4/2) + 6·ln(6/8)
/// = 2.7725887 − 1.7260924 = 1.0464963. Ratio 4/2 = 2. The enumeration of
/// every cylinder (brute_force) agrees that no other is larger.
#[test]
fn hand_example_most_likely_cluster() {
    let mut xy = vec![(0.0, 0.0); 4];
    let mut t = vec![0.0; 4];
    for (x, ds) in [
        (3000.0, [1.0, 3.0]),
        (6000.0, [1.0, 3.0]),
        (9000.0, [0.0, 2.0]),
    ] {
        for d in ds {
            xy.push((x, 0.0));
            t.push(d + 0.4); // times inside a day are floored
        }
    }
    let ev = events(&xy, &t);
    let o = opts(StScanMode::Retrospective, 99);
    let job = StScanJob::new(&ev, &o).unwrap();
    let want = 4.0 * 2f64.ln() + 6.0 * (6.0f64 / 8.0).ln();
    assert!((want - 1.046_496_3).abs() < 1e-7);
    assert!((job.observed_statistic() - want).abs() < 1e-12);
    assert!((brute_force(&ev, &o).0 - want).abs() < 1e-12);
    let r = job.finish();
    let top = &r.clusters[0];
    assert_eq!((top.centre_x, top.radius_m, top.n_locations), (0.0, 0.0, 1));
    assert_eq!((top.start_day, top.end_day, top.days), (0.0, 0.0, 1));
    assert_eq!(top.start_date, "1970-01-01");
    assert_eq!(top.observed, 4);
    assert!((top.expected - 2.0).abs() < 1e-12 && (top.ratio - 2.0).abs() < 1e-12);
    assert_eq!(top.events, vec![0, 1, 2, 3]);
    assert_eq!(r.n_days, 4);
    assert_eq!(r.n_events, 10);
    assert_eq!(r.n_locations, 4);
}

fn random_events(n: usize, nloc: usize, days: f64, seed: u64) -> TimedEvents {
    let mut rng = rng_from_seed(seed);
    let locs: Vec<(f64, f64)> = (0..nloc)
        .map(|_| (rng.random::<f64>() * 1000.0, rng.random::<f64>() * 1000.0))
        .collect();
    let xy: Vec<(f64, f64)> = (0..n).map(|_| locs[rng.random_range(0..nloc)]).collect();
    let t: Vec<f64> = (0..n).map(|_| rng.random::<f64>() * days).collect();
    events(&xy, &t)
}

/// The table of smallest circles per (interval, count) gives exactly the
/// largest LLR of the enumeration, in both modes, and so does each centre's
/// best cylinder; and the replicate routine on the data's own days gives
/// the observed statistic.
#[test]
fn fast_maximum_equals_enumeration() {
    for seed in 0..6u64 {
        let ev = random_events(40, 12, 20.0, seed);
        for mode in [StScanMode::Retrospective, StScanMode::Prospective] {
            for (share, max_days) in [(0.5, 7), (0.3, 30), (0.5, 1)] {
                let o = StScanOptions {
                    max_share: share,
                    max_days,
                    ..opts(mode, 9)
                };
                let job = StScanJob::new(&ev, &o).unwrap();
                let (top, per) = brute_force(&ev, &o);
                assert!(
                    (job.observed_statistic() - top).abs() < 1e-9,
                    "{seed} {mode:?}"
                );
                for (b, p) in job.best.iter().zip(&per) {
                    assert!((b.0 - p).abs() < 1e-9);
                }
                let mut table = vec![0; job.sim.table_len];
                let again = job.sim.maximum(&job.sim.s.day, &mut table);
                assert_eq!(again, job.observed_statistic());
            }
        }
    }
}

/// Every reported cluster's observed count is the count of its events, its
/// expected count N_circle·N_interval/C, recomputed here from the events.
#[test]
fn reported_counts_match_the_events() {
    let ev = random_events(200, 40, 60.0, 3);
    let job = StScanJob::new(&ev, &opts(StScanMode::Retrospective, 19)).unwrap();
    let r = job.finish();
    assert!(!r.clusters.is_empty());
    for c in &r.clusters {
        let inside = |i: usize| {
            ((ev.x[i] - c.centre_x).powi(2) + (ev.y[i] - c.centre_y).powi(2)).sqrt()
                <= c.radius_m + 1e-9
        };
        let within = |i: usize| (c.start_day..=c.end_day).contains(&ev.t[i].floor());
        let n_circle = (0..200).filter(|&i| inside(i)).count() as f64;
        let n_int = (0..200).filter(|&i| within(i)).count() as f64;
        let obs: Vec<usize> = (0..200).filter(|&i| inside(i) && within(i)).collect();
        assert_eq!(obs, c.events);
        assert_eq!(c.observed as usize, obs.len());
        assert!((c.expected - n_circle * n_int / 200.0).abs() < 1e-9);
    }
}

/// μ_zd = N_z·N_d/C summed over every location and day is C, over the
/// days of one location N_z and over the locations of one day N_d (the
/// expected counts keep both margins; Kulldorff et al. 2005).
#[test]
fn expected_counts_keep_the_margins() {
    let ev = random_events(150, 20, 30.0, 9);
    let o = StScanOptions {
        max_share: 0.5,
        max_days: 1,
        ..opts(StScanMode::Retrospective, 1)
    };
    let job = StScanJob::new(&ev, &o).unwrap();
    let sim = &job.sim;
    let s = &sim.s;
    let cc = s.loc.len() as f64;
    // One-day intervals: t_int[e·m] is N_e (m = 1); circle = one location.
    let nd: Vec<u32> = (0..s.n_days).map(|e| sim.t_int[e]).collect();
    let mut total = 0.0;
    for (z, &nz) in sim.loc_total.iter().enumerate() {
        let row: f64 = nd.iter().map(|&t| expected(nz, t, cc)).sum();
        assert!((row - nz as f64).abs() < 1e-9, "location {z}");
        total += row;
    }
    assert!((total - cc).abs() < 1e-9);
    for &t in &nd {
        let col: f64 = sim.loc_total.iter().map(|&nz| expected(nz, t, cc)).sum();
        assert!((col - t as f64).abs() < 1e-9);
    }
    assert_eq!(nd.iter().sum::<u32>() as usize, s.loc.len());
}

/// Prospective mode only considers intervals that end on the last day: a
/// strong cluster in the middle of the period is found retrospectively but
/// not prospectively, whose clusters all end on the last day.
#[test]
fn prospective_intervals_end_on_the_last_day() {
    let mut ev = random_events(300, 60, 100.0, 4);
    // 25 events at one place on days 40–44.
    for k in 0..25 {
        ev.x.push(500.0);
        ev.y.push(500.0);
        ev.t.push(40.0 + (k % 5) as f64);
        ev.index.push(ev.index.len());
    }
    let retro = StScanJob::new(&ev, &opts(StScanMode::Retrospective, 99))
        .unwrap()
        .finish();
    let top = &retro.clusters[0];
    assert!(top.start_day >= 38.0 && top.end_day <= 46.0, "{top:?}");
    assert!(top.p_value < 0.05);
    assert!(retro.recurrence_days.is_none() && top.recurrence_days.is_none());
    let pro = StScanJob::new(&ev, &opts(StScanMode::Prospective, 99))
        .unwrap()
        .finish();
    let last = ev.t.iter().map(|t| t.floor()).fold(0.0, f64::max);
    assert_eq!(pro.last_date, crate::input::time::format_days(last, false));
    assert!(!pro.clusters.is_empty());
    for c in &pro.clusters {
        assert_eq!(c.end_day, last);
        assert!(
            c.start_day > 46.0,
            "the middle cluster must not be seen: {c:?}"
        );
        let p = c.p_value;
        assert_eq!(c.recurrence_days, Some(7.0 / p));
    }
    assert_eq!(pro.recurrence_days, Some(7.0 / pro.p_value));
    assert!(pro.verdict.contains("repeated every 7 days"));
}

/// Permutations split in pieces, computed by a simulator rebuilt from the
/// share (through JSON, as a helper worker gets it) and added back in
/// order, give exactly the one-run result.
#[test]
fn split_runs_equal_one_run() {
    let ev = random_events(120, 30, 40.0, 8);
    for mode in [StScanMode::Retrospective, StScanMode::Prospective] {
        let o = opts(mode, 40);
        let one = StScanJob::new(&ev, &o).unwrap().finish();
        let mut job = StScanJob::new(&ev, &o).unwrap();
        let json = serde_json::to_string(job.share()).unwrap();
        assert!(!json.contains("\"x\""), "no coordinates in the share");
        let helper = StScanSimulator::new(serde_json::from_str(&json).unwrap()).unwrap();
        job.run_batch(7);
        let a = helper.simulate_range(7, 20);
        let b = job.simulate_range(20, 40);
        assert_eq!(job.add_simulated(7, &a).unwrap(), 20);
        assert!(job.add_simulated(7, &b).is_err(), "out of order");
        assert_eq!(job.add_simulated(20, &b).unwrap(), 40);
        assert_eq!(job.finish(), one);
    }
}

#[test]
fn bad_input_is_refused() {
    let ev = random_events(1, 1, 1.0, 1);
    assert!(StScanJob::new(&ev, &StScanOptions::default()).is_err());
    let ev = random_events(50, 10, 10.0, 1);
    for o in [
        StScanOptions {
            max_share: 0.0,
            ..Default::default()
        },
        StScanOptions {
            max_share: 0.7,
            ..Default::default()
        },
        StScanOptions {
            max_days: 0,
            ..Default::default()
        },
        StScanOptions {
            n_sim: 0,
            ..Default::default()
        },
        StScanOptions {
            repeat_days: 0.0,
            ..Default::default()
        },
        StScanOptions {
            max_radius_m: Some(-1.0),
            ..Default::default()
        },
    ] {
        assert!(StScanJob::new(&ev, &o).is_err(), "{o:?}");
    }
    let e: Result<StScanOptions, _> = serde_json::from_str(r#"{"modes":"prospective"}"#);
    assert!(e.is_err(), "unknown option");
    let mut sh = StScanJob::new(&ev, &StScanOptions::default())
        .unwrap()
        .share()
        .clone();
    sh.day[0] = 10_000;
    assert!(StScanSimulator::new(sh).is_err());
}

/// A radius limit keeps every circle within it.
#[test]
fn radius_limit_is_kept() {
    let ev = random_events(200, 50, 30.0, 2);
    let o = StScanOptions {
        max_radius_m: Some(150.0),
        ..opts(StScanMode::Retrospective, 9)
    };
    let r = StScanJob::new(&ev, &o).unwrap().finish();
    assert!(r.clusters.iter().all(|c| c.radius_m <= 150.0));
    let (top, _) = brute_force(
        &ev,
        &StScanOptions {
            max_share: 0.5,
            ..o
        },
    );
    // The radius-limited scan sees fewer circles: at most the unlimited maximum.
    assert!(r.statistic <= top + 1e-12);
}

/// Secondary clusters share no (location, day) with a cluster kept before them.
#[test]
fn secondary_clusters_do_not_overlap() {
    let ev = random_events(300, 60, 50.0, 6);
    let r = StScanJob::new(&ev, &opts(StScanMode::Retrospective, 9))
        .unwrap()
        .finish();
    assert!(r.clusters.len() > 2);
    for (a, ca) in r.clusters.iter().enumerate() {
        for cb in &r.clusters[..a] {
            assert!(ca.events.iter().all(|i| !cb.events.contains(i)));
        }
    }
}

/// No space–time interaction (locations and times drawn independently):
/// the most likely cluster should have p ≥ 0.05 in about 95 % of runs. 200
/// runs of 99 permutations; the count with p ≥ 0.05 must lie in the 99 %
/// binomial interval of Binomial(200, 0.95) (p < 0.05 means rank ≤ 4 of
/// 100, probability exactly 0.05 under the null: 5/100).
#[test]
fn null_calibration() {
    use statrs::distribution::{Binomial, DiscreteCDF};
    let runs = 200u64;
    let mut not_small = 0u64;
    for run in 0..runs {
        let ev = random_events(60, 25, 40.0, 1000 + run);
        let o = StScanOptions {
            max_days: 10,
            seed: run,
            ..opts(StScanMode::Retrospective, 99)
        };
        if StScanJob::new(&ev, &o).unwrap().finish().p_value >= 0.05 {
            not_small += 1;
        }
    }
    let b = Binomial::new(0.95, runs).unwrap();
    let lo = b.inverse_cdf(0.005);
    let hi = b.inverse_cdf(0.995);
    eprintln!("null calibration: {not_small} of {runs} with p ≥ 0.05 (99 % interval {lo}–{hi})");
    assert!(
        (lo..=hi).contains(&not_small),
        "{not_small} of {runs} not in [{lo}, {hi}]"
    );
}
