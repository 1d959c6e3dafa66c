//! Benchmark of the random labelling test (run with `--release`).
//!
//! ```text
//! cargo run --release --example bench_labelling                 # 2,000 + 8,000 and 5,000 + 20,000
//! cargo run --release --example bench_labelling -- export       # also write target/bench-data/labelling-*.csv/json
//! python3 bench/labelling_vs_numpy.py                           # the same D(r) with scipy + numpy
//! ```
//!
//! The pooled points are an invented, uneven population in a 10 km × 6 km
//! rectangle (a dense centre, a gradient, a second small town; seeded), the
//! cases a random subset of them. Largest distance: a quarter of the shorter
//! side (1,500 m), 50 steps. Printed: one full K estimate of the pooled
//! points, the observed D (one visit of the pairs), one visit serving 1, 64
//! and 256 relabellings, and 199 relabellings as the page runs them; CPU
//! seconds beside wall seconds because the machine may be shared.

use cloister::distance::{distance_functions, Correction, FunctionParams};
use cloister::risk::{LabellingJob, LabellingOptions};
use cloister::rng::rng_from_seed;
use cloister::study::Pattern;
use cloister::window::Window;
use rand::RngExt;
use std::time::Instant;

const W: f64 = 10_000.0;
const H: f64 = 6_000.0;

/// CPU seconds used by this process so far (Linux /proc; None elsewhere).
fn cpu_seconds() -> Option<f64> {
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    let rest = &stat[stat.rfind(')')? + 2..];
    let f: Vec<&str> = rest.split_whitespace().collect();
    let ticks: f64 = f.get(11)?.parse::<f64>().ok()? + f.get(12)?.parse::<f64>().ok()?;
    Some(ticks / 100.0)
}

fn timed<T>(f: impl FnOnce() -> T) -> (T, f64, f64) {
    let (c0, t0) = (cpu_seconds().unwrap_or(f64::NAN), Instant::now());
    let v = f();
    let wall = t0.elapsed().as_secs_f64();
    (v, wall, cpu_seconds().unwrap_or(f64::NAN) - c0)
}

/// `n` points of an uneven invented population: 40 % around a centre, 15 %
/// around a second small town, the rest with density rising to the east.
fn population(n: usize, seed: u64) -> (Vec<f64>, Vec<f64>) {
    let mut rng = rng_from_seed(seed);
    let (mut x, mut y) = (Vec::with_capacity(n), Vec::with_capacity(n));
    while x.len() < n {
        let u: f64 = rng.random();
        let (px, py) = if u < 0.4 {
            let (a, b): (f64, f64) = (rng.random(), rng.random());
            let rad = 900.0 * (-2.0 * a.max(1e-12).ln()).sqrt();
            let t = std::f64::consts::TAU * b;
            (3_500.0 + rad * t.cos(), 3_000.0 + rad * t.sin())
        } else if u < 0.55 {
            let (a, b): (f64, f64) = (rng.random(), rng.random());
            let rad = 400.0 * (-2.0 * a.max(1e-12).ln()).sqrt();
            let t = std::f64::consts::TAU * b;
            (8_000.0 + rad * t.cos(), 1_500.0 + rad * t.sin())
        } else {
            let gx: f64 = rng.random::<f64>().max(rng.random::<f64>());
            (W * gx, H * rng.random::<f64>())
        };
        if (0.0..W).contains(&px) && (0.0..H).contains(&py) {
            x.push(px);
            y.push(py);
        }
    }
    (x, y)
}

fn run(n1: usize, n0: usize, correction: Correction, export: bool) {
    let n = n1 + n0;
    let (x, y) = population(n, 20261203);
    // Cases: a seeded random subset of the pooled points (first n1 after a shuffle).
    let mut idx: Vec<usize> = (0..n).collect();
    let mut rng = rng_from_seed(7);
    for i in 0..n1 {
        let j = rng.random_range(i..n);
        idx.swap(i, j);
    }
    let (cx, cy): (Vec<f64>, Vec<f64>) = idx[..n1].iter().map(|&i| (x[i], y[i])).unzip();
    let (kx, ky): (Vec<f64>, Vec<f64>) = idx[n1..].iter().map(|&i| (x[i], y[i])).unzip();
    let window = Window::rectangle(0.0, 0.0, W, H).expect("rectangle");
    let r_max = H / 4.0;
    let opts = LabellingOptions {
        n_sim: 199,
        seed: 42,
        r_max_m: Some(r_max),
        n_steps: 50,
        correction,
        ..Default::default()
    };
    let pattern = Pattern::from_xy(x.clone(), y.clone()).expect("pooled points");
    let fp = FunctionParams {
        r_max: Some(r_max),
        n_steps: 50,
        correction,
        ..Default::default()
    };
    // All four distance functions (K, g, G, F) of the pooled points: what
    // the clustering section computes for one pattern.
    let (_, k_wall, k_cpu) = timed(|| {
        distance_functions(&pattern, &window, &fp).expect("functions of the pooled points")
    });
    let (job, obs_wall, obs_cpu) =
        timed(|| LabellingJob::new((&cx, &cy), (&kx, &ky), &window, &opts).expect("labelling job"));
    let mut per_pass = Vec::new();
    for m in [1usize, 64, 256] {
        let mut j = LabellingJob::new(
            (&cx, &cy),
            (&kx, &ky),
            &window,
            &LabellingOptions {
                n_sim: m,
                ..opts.clone()
            },
        )
        .expect("labelling job");
        let (_, w, c) = timed(|| j.run_batch(m).expect("relabellings"));
        per_pass.push((m, w, c));
    }
    let (res, all_wall, all_cpu) = timed(|| job.finish().expect("finish"));
    println!(
        "{{\"cases\": {n1}, \"controls\": {n0}, \"correction\": \"{}\", \"r_max_m\": {r_max}, \
\"four_functions_pooled_wall_s\": {k_wall:.3}, \"four_functions_pooled_cpu_s\": {k_cpu:.3}, \"observed_d_wall_s\": {obs_wall:.3}, \"observed_d_cpu_s\": {obs_cpu:.3}, \
\"one_visit_1_relabelling_wall_s\": {:.3}, \"one_visit_64_wall_s\": {:.3}, \"one_visit_256_wall_s\": {:.3}, \
\"relabellings_199_wall_s\": {all_wall:.3}, \"relabellings_199_cpu_s\": {all_cpu:.3}, \"per_relabelling_in_199_ms\": {:.2}, \
\"per_relabelling_over_observed_d\": {:.3}, \"mad_p\": {:.3}}}",
        format!("{correction:?}").to_lowercase(),
        per_pass[0].1,
        per_pass[1].1,
        per_pass[2].1,
        1000.0 * all_wall / 199.0,
        (all_wall / 199.0) / obs_wall,
        res.mad.p_value
    );
    if export {
        let dir = std::path::Path::new("target/bench-data");
        std::fs::create_dir_all(dir).expect("target/bench-data");
        let mut csv = String::from("x,y,case\n");
        for (&px, &py) in cx.iter().zip(&cy) {
            csv.push_str(&format!("{px:.6},{py:.6},1\n"));
        }
        for (&px, &py) in kx.iter().zip(&ky) {
            csv.push_str(&format!("{px:.6},{py:.6},0\n"));
        }
        let tag = format!("{n1}-{n0}");
        std::fs::write(dir.join(format!("labelling-{tag}.csv")), csv).expect("write points");
        let json = serde_json::json!({
            "width": W, "height": H, "r": res.r, "d": res.observed,
            "correction": format!("{correction:?}").to_lowercase(),
            // CPU seconds (the Python side measures CPU time too).
            "seconds_observed_d": obs_cpu,
            "seconds_199_relabellings": all_cpu,
            "seconds_four_functions": k_cpu,
        });
        std::fs::write(dir.join(format!("labelling-{tag}.json")), json.to_string())
            .expect("write json");
    }
}

fn main() {
    let export = std::env::args().any(|a| a == "export");
    for (n1, n0) in [(2_000, 8_000), (5_000, 20_000)] {
        run(n1, n0, Correction::Isotropic, false);
        run(n1, n0, Correction::Translation, export);
    }
}
