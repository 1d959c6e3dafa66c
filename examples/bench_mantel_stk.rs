//! Native timings of the Mantel test and the space–time K function on
//! invented events (uniform in a 10 km × 6 km rectangle, dates uniform over
//! one year, no interaction).
//!
//! ```text
//! cargo run --release --example bench_mantel_stk              # timings (JSON lines)
//! cargo run --release --example bench_mantel_stk -- export    # also writes target/bench-data/spacetime-5000.csv
//! cargo run --release --example bench_mantel_stk -- calibrate [data sets]
//! ```
//!
//! Timings: Mantel, 5,000 events, 999 permutations; space–time K, 5,000
//! events, 20 × 20 grid, 199 permutations; each on one thread and spread
//! over the machine's threads in pieces (as the page's helper workers do:
//! the same permutations, so the same result). `calibrate`: the share of
//! data sets without interaction where each test rejects at 0.05 (99
//! permutations; 1,000 data sets of 100 events unless given), with the
//! binomial 99 % interval.

use cloister::spacetime::mantel::{MantelJob, MantelOptions};
use cloister::spacetime::stk::{SpaceTimeKJob, SpaceTimeKOptions, StkSimulator};
use cloister::spacetime::TimedEvents;
use cloister::Window;
use rand::RngExt;
use std::time::Instant;

fn events(n: usize, seed: u64) -> TimedEvents {
    let mut rng = cloister::rng::rng_from_seed(seed);
    let x: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..10_000.0)).collect();
    let y: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..6_000.0)).collect();
    let t: Vec<f64> = (0..n)
        .map(|_| 20_089.0 + rng.random_range(0.0..365.0f64).floor())
        .collect();
    TimedEvents::from_xyt(x, y, t).unwrap()
}

/// Civil date of days since 1970-01-01 (H. Hinnant's algorithm).
fn date(days: i64) -> String {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    format!("{:04}-{:02}-{:02}", if m <= 2 { y + 1 } else { y }, m, d)
}

fn threads() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get())
}

/// Pieces `0..total` split into `k` ranges, each run on its own thread.
fn spread<T: Send>(total: usize, k: usize, f: impl Fn(usize, usize) -> T + Sync) -> Vec<T> {
    let per = total.div_ceil(k);
    std::thread::scope(|s| {
        let hs: Vec<_> = (0..k)
            .map(|i| {
                let f = &f;
                s.spawn(move || f((i * per).min(total), ((i + 1) * per).min(total)))
            })
            .collect();
        hs.into_iter().map(|h| h.join().unwrap()).collect()
    })
}

fn calibrate(sets: usize) {
    let w = Window::rectangle(0.0, 0.0, 10_000.0, 6_000.0).unwrap();
    let (mut m, mut k) = (0usize, 0usize);
    for r in 0..sets as u64 {
        let ev = events(100, 90_000 + r);
        let mut job = MantelJob::new(
            &ev,
            &MantelOptions {
                n_sim: 99,
                seed: r,
                ..Default::default()
            },
        )
        .unwrap();
        job.run_batch(99);
        m += usize::from(job.finish().unwrap().p_value <= 0.05);
        let o = SpaceTimeKOptions {
            n_sim: 99,
            seed: r,
            ..Default::default()
        };
        let mut job = SpaceTimeKJob::new(&ev, &w, &o).unwrap();
        job.run_batch(99);
        k += usize::from(job.finish().unwrap().global_p <= 0.05);
    }
    let sd = (sets as f64 * 0.05 * 0.95).sqrt();
    let (lo, hi) = (
        sets as f64 * 0.05 - 2.576 * sd,
        sets as f64 * 0.05 + 2.576 * sd,
    );
    println!(
        "{{\"what\":\"level at 0.05 without interaction\",\"data_sets\":{sets},\"events\":100,\"n_sim\":99,\"mantel_rejections\":{m},\"stk_rejections\":{k},\"binomial_99_interval\":[{lo:.1},{hi:.1}]}}"
    );
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.first().map(String::as_str) == Some("calibrate") {
        let sets = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(1000);
        calibrate(sets);
        return;
    }
    let n = 5000;
    let ev = events(n, 2026);
    if args.first().map(String::as_str) == Some("export") {
        std::fs::create_dir_all("target/bench-data").unwrap();
        let mut s = String::from("x,y,date\n");
        for i in 0..n {
            s.push_str(&format!(
                "{:.2},{:.2},{}\n",
                ev.x[i],
                ev.y[i],
                date(ev.t[i] as i64)
            ));
        }
        std::fs::write("target/bench-data/spacetime-5000.csv", s).unwrap();
    }
    let th = threads();
    // Mantel, 999 permutations.
    let o = MantelOptions {
        n_sim: 999,
        seed: 1,
        ..Default::default()
    };
    let t0 = Instant::now();
    let mut job = MantelJob::new(&ev, &o).unwrap();
    let start = t0.elapsed().as_secs_f64();
    job.run_batch(999);
    let one = t0.elapsed().as_secs_f64();
    let r1 = job.finish().unwrap();
    let t0 = Instant::now();
    let mut job = MantelJob::new(&ev, &o).unwrap();
    let share = job.share().clone();
    let pieces = spread(999, th, |a, b| share.simulate_range(a, b));
    let mut from = 0;
    for p in pieces {
        from = job.add_simulated(from, &p).unwrap();
    }
    let many = t0.elapsed().as_secs_f64();
    let r2 = job.finish().unwrap();
    assert_eq!(r1.p_value, r2.p_value);
    println!(
        "{{\"what\":\"Mantel, reciprocal transforms\",\"events\":{n},\"n_sim\":999,\"start_s\":{start:.3},\"one_thread_s\":{one:.2},\"threads\":{th},\"spread_s\":{many:.2},\"p\":{}}}",
        r1.p_value
    );
    // Space–time K, 20 × 20, 199 permutations.
    let w = Window::rectangle(0.0, 0.0, 10_000.0, 6_000.0).unwrap();
    let o = SpaceTimeKOptions {
        n_sim: 199,
        seed: 1,
        s_steps: 20,
        t_steps: 20,
        ..Default::default()
    };
    let t0 = Instant::now();
    let mut job = SpaceTimeKJob::new(&ev, &w, &o).unwrap();
    let start = t0.elapsed().as_secs_f64();
    job.run_batch(199);
    let one = t0.elapsed().as_secs_f64();
    let r1 = job.finish().unwrap();
    let t0 = Instant::now();
    let mut job = SpaceTimeKJob::new(&ev, &w, &o).unwrap();
    let share = job.share().clone();
    let pieces = spread(199, th, |a, b| {
        StkSimulator::new(share.clone())
            .unwrap()
            .simulate_range(a, b)
    });
    let mut from = 0;
    for p in pieces {
        let k = p.len() / 400;
        job.add_simulated(from, &p).unwrap();
        from += k;
    }
    let many = t0.elapsed().as_secs_f64();
    let r2 = job.finish().unwrap();
    assert_eq!(r1.global_p, r2.global_p);
    println!(
        "{{\"what\":\"space-time K, 20 x 20\",\"events\":{n},\"pairs_within_s_max\":{},\"s_max_m\":{},\"n_sim\":199,\"start_s\":{start:.3},\"one_thread_s\":{one:.2},\"threads\":{th},\"spread_s\":{many:.2},\"global_p\":{}}}",
        r1.pairs_within_s_max, r1.s_max_m, r1.global_p
    );
}
