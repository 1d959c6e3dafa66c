//! Benchmark of the space–time permutation scan (run with `--release`).
//!
//! ```text
//! cargo run --release --example bench_st_scan                       # both modes, the sizes below
//! cargo run --release --example bench_st_scan -- 10000 1000 999 99  # events, locations, perms (prospective, retrospective)
//! cargo run --release --example bench_st_scan -- calibration 1000   # level over 1,000 seeded null data sets
//! ```
//!
//! Invented data: `locations` distinct places uniform in a 10 km square,
//! each event at one of them at random, its time uniform over one year
//! (2025), all seeded: no space–time interaction. Prospective: intervals
//! up to 30 days ending on the last day; retrospective: intervals up to 30
//! days anywhere; largest circle 50 % of the events (the defaults). Printed
//! as JSON lines: the start (circles and the data's statistic), the
//! permutations on one thread and spread over threads (the same result).

use cloister::rng::rng_from_seed;
use cloister::spacetime::scan::{StScanJob, StScanMode, StScanOptions, StScanSimulator};
use cloister::spacetime::TimedEvents;
use rand::RngExt;
use std::time::Instant;

fn data(n: usize, nloc: usize, seed: u64) -> TimedEvents {
    let mut rng = rng_from_seed(seed);
    let locs: Vec<(f64, f64)> = (0..nloc)
        .map(|_| {
            (
                rng.random::<f64>() * 10_000.0,
                rng.random::<f64>() * 10_000.0,
            )
        })
        .collect();
    let t0 = 20_089.0; // 2025-01-01
    let (mut x, mut y, mut t) = (Vec::new(), Vec::new(), Vec::new());
    for _ in 0..n {
        let p = locs[rng.random_range(0..nloc)];
        x.push(p.0);
        y.push(p.1);
        t.push(t0 + rng.random::<f64>() * 365.0);
    }
    TimedEvents::from_xyt(x, y, t).unwrap()
}

fn run(n: usize, nloc: usize, mode: StScanMode, n_sim: usize) {
    let ev = data(n, nloc, 7);
    let o = StScanOptions {
        mode,
        n_sim,
        seed: 1,
        ..Default::default()
    };
    let t0 = Instant::now();
    let job = StScanJob::new(&ev, &o).unwrap();
    let start_s = t0.elapsed().as_secs_f64();
    let t1 = Instant::now();
    let one = job.clone().finish();
    let one_s = t1.elapsed().as_secs_f64();
    // Spread over threads: each computes its share of the permutations
    // from the (coordinate-free) share, added back in order.
    let threads = std::thread::available_parallelism()
        .map_or(1, |v| v.get())
        .min(8);
    let t2 = Instant::now();
    let sim = StScanSimulator::new(job.share().clone()).unwrap();
    let per = n_sim.div_ceil(threads);
    let pieces: Vec<Vec<f64>> = std::thread::scope(|s| {
        let hs: Vec<_> = (0..threads)
            .map(|k| {
                let sim = &sim;
                s.spawn(move || sim.simulate_range(k * per, ((k + 1) * per).min(n_sim)))
            })
            .collect();
        hs.into_iter().map(|h| h.join().unwrap()).collect()
    });
    let mut job2 = job;
    let mut from = 0;
    for p in &pieces {
        from = job2.add_simulated(from, p).unwrap();
    }
    let spread = job2.finish();
    let spread_s = t2.elapsed().as_secs_f64();
    assert_eq!(spread, one, "spread run differs from one thread");
    println!(
        "{{\"mode\":\"{:?}\",\"events\":{n},\"locations\":{nloc},\"days\":{},\"circles\":{},\"intervals\":{},\"n_sim\":{n_sim},\"start_s\":{start_s:.3},\"permutations_one_thread_s\":{one_s:.3},\"per_permutation_ms\":{:.2},\"threads\":{threads},\"permutations_spread_s\":{spread_s:.3},\"p\":{:.4}}}",
        mode,
        one.n_days,
        one.n_circles,
        one.n_intervals,
        one_s * 1000.0 / n_sim as f64,
        one.p_value
    );
}

fn calibration(runs: u64) {
    // Level: share of null data sets whose most likely cluster has p < 0.05.
    for mode in [StScanMode::Retrospective, StScanMode::Prospective] {
        let mut small = 0;
        let t0 = Instant::now();
        for r in 0..runs {
            let ev = data(300, 60, 10_000 + r);
            let o = StScanOptions {
                mode,
                n_sim: 99,
                seed: r,
                max_days: 14,
                ..Default::default()
            };
            if StScanJob::new(&ev, &o).unwrap().finish().p_value < 0.05 {
                small += 1;
            }
        }
        println!(
            "{{\"calibration\":\"{mode:?}\",\"runs\":{runs},\"p_below_0.05\":{small},\"share\":{:.4},\"s\":{:.1}}}",
            small as f64 / runs as f64,
            t0.elapsed().as_secs_f64()
        );
    }
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.first().map(String::as_str) == Some("calibration") {
        calibration(args.get(1).and_then(|v| v.parse().ok()).unwrap_or(1000));
        return;
    }
    let num = |i: usize, d: usize| args.get(i).and_then(|v| v.parse().ok()).unwrap_or(d);
    let (n, nloc) = (num(0, 10_000), num(1, 1_000));
    run(n, nloc, StScanMode::Prospective, num(2, 999));
    run(n, nloc, StScanMode::Retrospective, num(3, 9));
}
