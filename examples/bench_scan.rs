//! Benchmark of Kulldorff's scan centred on every event (cases against
//! controls, Bernoulli model; run with `--release`).
//!
//! ```text
//! cargo run --release --example bench_scan                   # 10,000 events, 999 chance runs
//! cargo run --release --example bench_scan -- 5000 999 2    # events, chance runs, threads
//! ```
//!
//! Invented data: `n` events at distinct places uniform in a 10 km square
//! (seeded), every second one a case, the rest controls; circles centred on
//! every event up to 50 % of the people (the default). Printed as one JSON
//! line: the time to prepare the circles and score the data, the time of
//! the chance runs (on one thread, and spread over `threads` threads by
//! ranges of chance runs, as the page's helper workers split them), the
//! statistic, the p-value and a checksum of the chance runs' maxima, so a
//! run of an older build can be compared with this one number for number.
//! `BENCH_SCAN_RUNS_ONE` caps the chance runs timed on one thread (the
//! per-run time is printed, so an old slow build can be timed on fewer).

use cloister::rng::rng_from_seed;
use cloister::scan::{ScanCentres, ScanJob, ScanModel, ScanOptions};
use cloister::window::Window;
use rand::RngExt;
use std::time::Instant;

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let n: usize = args.first().and_then(|s| s.parse().ok()).unwrap_or(10_000);
    let n_sim: usize = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(999);
    let threads: usize = args.get(2).and_then(|s| s.parse().ok()).unwrap_or(2);
    let one_cap: usize = std::env::var("BENCH_SCAN_RUNS_ONE")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(n_sim);
    let mut rng = rng_from_seed(20_251_203);
    let (mut x, mut y) = (Vec::with_capacity(n), Vec::with_capacity(n));
    for _ in 0..n {
        x.push(rng.random::<f64>() * 10_000.0);
        y.push(rng.random::<f64>() * 10_000.0);
    }
    let cases = n / 2;
    let w = Window::rectangle(0.0, 0.0, 10_000.0, 10_000.0).expect("square");
    let o = ScanOptions {
        model: ScanModel::Bernoulli,
        centres: ScanCentres::Events,
        n_sim,
        seed: 7,
        ..Default::default()
    };
    let t0 = Instant::now();
    let job = ScanJob::from_points(
        &x[..cases],
        &y[..cases],
        Some((&x[cases..], &y[cases..])),
        &w,
        &o,
    )
    .expect("scan");
    let prepare_s = t0.elapsed().as_secs_f64();
    // One thread (perhaps on fewer chance runs).
    let one = one_cap.min(n_sim);
    let t1 = Instant::now();
    let first = job.simulate_range(0, one);
    let one_s = t1.elapsed().as_secs_f64();
    // Spread over threads by contiguous ranges of chance runs.
    let t2 = Instant::now();
    let per = n_sim.div_ceil(threads.max(1));
    let maxima: Vec<f64> = std::thread::scope(|s| {
        let hs: Vec<_> = (0..threads.max(1))
            .map(|t| {
                let job = &job;
                s.spawn(move || job.simulate_range(t * per, ((t + 1) * per).min(n_sim)))
            })
            .collect();
        hs.into_iter()
            .flat_map(|h| h.join().expect("thread"))
            .collect()
    });
    let spread_s = t2.elapsed().as_secs_f64();
    assert_eq!(first, maxima[..one], "a run split over threads differs");
    let mut job = job;
    job.add_simulated(0, &maxima).expect("add");
    let r = job.finish();
    let checksum: f64 = r
        .null_maxima
        .iter()
        .enumerate()
        .map(|(j, v)| v * (1.0 + j as f64 / 1000.0))
        .sum();
    println!(
        "{{\"events\":{n},\"cases\":{cases},\"n_sim\":{n_sim},\"regions\":{},\"windows\":{},\"prepare_s\":{:.3},\"one_thread_runs\":{one},\"one_thread_s\":{:.3},\"ms_per_run_one_thread\":{:.2},\"threads\":{threads},\"spread_s\":{:.3},\"statistic\":{},\"p_value\":{},\"mlc_centre\":{},\"mlc_regions\":{},\"maxima_checksum\":{}}}",
        r.n_regions,
        r.n_windows,
        prepare_s,
        one_s,
        one_s * 1000.0 / one.max(1) as f64,
        spread_s,
        r.statistic,
        r.p_value,
        r.clusters.first().map_or(-1, |c| c.centre_region as i64),
        r.clusters.first().map_or(0, |c| c.regions.len()),
        checksum
    );
}
