//! Near-repeat table and Knox test: how long a run takes natively.
//!
//! cargo run --release --example bench_near_repeat            # timings as JSON lines
//! cargo run --release --example bench_near_repeat -- export  # also write target/bench-data/near-repeat-*.csv/json
//!
//! Invented data, seeded: a uniform background over a 20 km × 20 km square
//! and one year, plus chains of near repeats (each seed event followed by a
//! few events within 150 m and 14 days). Table: "same location", then 10
//! distance bands of 100 m × 10 time bands of 7 days, 999 permutations, on
//! one thread and on every core (`run_parallel`; identical results, checked
//! here). Knox at 5,000 events, 100 m and 7 days, 999 permutations.

use cloister::spacetime::pairs::{
    KnoxJob, KnoxOptions, NearRepeatJob, NearRepeatOptions, NearRepeatResult,
};
use cloister::spacetime::TimedEvents;
use rand::{RngExt, SeedableRng};
use std::time::Instant;

fn events(n: usize, seed: u64) -> TimedEvents {
    let mut rng = rand_pcg::Pcg64Mcg::seed_from_u64(seed);
    let (mut x, mut y, mut t) = (Vec::new(), Vec::new(), Vec::new());
    let background = n * 7 / 10;
    for _ in 0..background {
        x.push(rng.random_range(0.0..20_000.0));
        y.push(rng.random_range(0.0..20_000.0));
        t.push(rng.random_range(0.0..365.0));
    }
    while x.len() < n {
        let k = rng.random_range(0..background);
        let (x0, y0, t0): (f64, f64, f64) = (x[k], y[k], t[k]);
        for _ in 0..4 {
            if x.len() == n {
                break;
            }
            let a = rng.random_range(0.0..std::f64::consts::TAU);
            let r = rng.random_range(0.0..150.0);
            x.push(x0 + r * a.cos());
            y.push(y0 + r * a.sin());
            let dt: f64 = rng.random_range(0.0..14.0);
            t.push((t0 + dt).min(365.0));
        }
    }
    TimedEvents::from_xyt(x, y, t).expect("finite")
}

fn key(r: &NearRepeatResult) -> Vec<(u32, f64, f64)> {
    r.cells
        .iter()
        .map(|c| (c.observed, c.p_value, c.sim_mean))
        .collect()
}

fn main() {
    let export = std::env::args().any(|a| a == "export");
    let m: usize = std::env::args()
        .find_map(|a| a.strip_prefix("perm=").and_then(|v| v.parse().ok()))
        .unwrap_or(999);
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    let ev = events(20_000, 2026);
    let o = NearRepeatOptions {
        band_m: 100.0,
        max_distance_m: 1000.0,
        band_days: 7.0,
        max_days: 70.0,
        same_location: true,
        n_perm: m,
        seed: 1,
        ..Default::default()
    };
    let t0 = Instant::now();
    let job = NearRepeatJob::new(&ev, &o).expect("job");
    let setup = t0.elapsed().as_secs_f64();
    let pairs = job.run.engine.close_pairs();
    let mut one = job.clone();
    let t1 = Instant::now();
    one.run.run_batch(m);
    let r1 = one.finish();
    let single = t1.elapsed().as_secs_f64();
    let mut many = job.clone();
    let t2 = Instant::now();
    many.run.run_parallel(threads);
    let rn = many.finish();
    let parallel = t2.elapsed().as_secs_f64();
    assert_eq!(key(&r1), key(&rn), "parallel run differs");
    println!(
        "{{\"bench\":\"near_repeat\",\"events\":20000,\"cells\":{},\"close_pairs\":{pairs},\"n_perm\":{m},\"setup_s\":{setup:.3},\"one_thread_s\":{single:.3},\"threads\":{threads},\"all_threads_s\":{parallel:.3},\"per_permutation_ms\":{:.3}}}",
        r1.cells.len(),
        1000.0 * single / m as f64
    );

    let kev = events(5_000, 7);
    let ko = KnoxOptions {
        distance_m: 100.0,
        days: 7.0,
        n_perm: 999,
        seed: 1,
        ..Default::default()
    };
    let t3 = Instant::now();
    let kr = KnoxJob::new(&kev, &ko).expect("knox").finish();
    let knox = t3.elapsed().as_secs_f64();
    println!(
        "{{\"bench\":\"knox\",\"events\":5000,\"x\":{},\"n_perm\":999,\"one_thread_s\":{knox:.3}}}",
        kr.x
    );

    if export {
        let dir = std::path::Path::new("target/bench-data");
        std::fs::create_dir_all(dir).expect("dir");
        let mut csv = String::from("x,y,t\n");
        for i in 0..ev.len() {
            csv.push_str(&format!("{:?},{:?},{:?}\n", ev.x[i], ev.y[i], ev.t[i]));
        }
        std::fs::write(dir.join("near-repeat-20000.csv"), csv).expect("csv");
        let obs: Vec<u32> = r1.cells.iter().map(|c| c.observed).collect();
        let json = serde_json::json!({
            "band_m": o.band_m, "max_distance_m": o.max_distance_m,
            "band_days": o.band_days, "max_days": o.max_days,
            "n_perm": m, "observed": obs,
            "setup_s": setup, "one_thread_s": single, "all_threads_s": parallel, "threads": threads,
            "close_pairs": pairs,
        });
        std::fs::write(dir.join("near-repeat-20000.json"), json.to_string()).expect("json");
        eprintln!("wrote target/bench-data/near-repeat-20000.csv/json");
    }
}
