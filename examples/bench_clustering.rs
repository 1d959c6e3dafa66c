//! Benchmark of the clustering tests (run with `--release`).
//!
//! Target A: K and L with the isotropic correction, n = 10,000 CSR points
//! in a 1000 m square, 199 simulations, 50 distance steps (51 values).
//!
//! ```text
//! cargo run --release --example bench_clustering            # target A and friends
//! cargo run --release --example bench_clustering -- export  # write bench/data/points.csv
//! ```
//! The export writes the points and the r grid used by
//! `bench/clustering_vs_scipy.py`, and prints our single-pattern K timing.

use cloister::distance::{
    distance_functions, simulate_csr, Correction, EnvelopeJob, EnvelopeParams, FunctionParams,
    SummaryFunction,
};
use cloister::window::{Window, WindowOrigin};
use std::time::Instant;

fn square(side: f64) -> Window {
    Window::rectangle(0.0, 0.0, side, side).expect("square window")
}

fn with_hole(side: f64) -> Window {
    let s = side;
    Window::from_polygons(
        vec![vec![
            vec![[0.0, 0.0], [s, 0.0], [s, 0.7 * s], [0.6 * s, s], [0.0, s]],
            vec![[0.4 * s, 0.4 * s], [0.55 * s, 0.4 * s], [0.5 * s, 0.6 * s]],
        ]],
        WindowOrigin::File,
    )
    .expect("polygon window")
}

fn envelope_time(w: &Window, n: usize, f: SummaryFunction, c: Correction, n_sim: usize) -> f64 {
    let p = simulate_csr(w, n, 42).expect("points");
    let params = EnvelopeParams {
        function: f,
        n_sim,
        seed: 7,
        functions: FunctionParams {
            n_steps: 50,
            correction: c,
            ..Default::default()
        },
        ..Default::default()
    };
    let t = Instant::now();
    let mut job = EnvelopeJob::new(&p, w, &params).expect("job");
    while job.run_batch(10) < job.total() {}
    let res = job.finish();
    let secs = t.elapsed().as_secs_f64();
    println!(
        "{:<18} {:<12} n={:<6} sims={:<4} {:>8.3} s   (MAD p={:.3}, DCLF p={:.3})",
        res.label,
        format!("{c:?}"),
        n,
        n_sim,
        secs,
        res.mad.p_value,
        res.dclf.p_value
    );
    secs
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if args.get(1).map(String::as_str) == Some("export") {
        let w = square(1000.0);
        let p = simulate_csr(&w, 10_000, 42).expect("points");
        std::fs::create_dir_all("bench/data").expect("bench/data");
        let mut s = String::from("x,y\n");
        for i in 0..p.len() {
            s.push_str(&format!("{:.17e},{:.17e}\n", p.x()[i], p.y()[i]));
        }
        std::fs::write("bench/data/points.csv", s).expect("write points");
        let params = FunctionParams {
            n_steps: 50,
            ..Default::default()
        };
        let reps = 10;
        let t = Instant::now();
        let mut out = None;
        for _ in 0..reps {
            out = Some(distance_functions(&p, &w, &params).expect("functions"));
        }
        let per = t.elapsed().as_secs_f64() / reps as f64;
        let out = out.expect("ran");
        let json = serde_json::json!({
            "r": out.r, "k_iso": out.k, "area": out.area_m2, "seconds_all_functions": per
        });
        std::fs::write("bench/data/rust_k.json", json.to_string()).expect("write json");
        // Time K alone (isotropic), as the envelope job does per pattern.
        let params = EnvelopeParams {
            function: SummaryFunction::K,
            n_sim: 1,
            functions: FunctionParams {
                n_steps: 50,
                ..Default::default()
            },
            ..Default::default()
        };
        let t = Instant::now();
        for _ in 0..reps {
            let _ = EnvelopeJob::new(&p, &w, &params).expect("job");
        }
        let k_only = t.elapsed().as_secs_f64() / reps as f64;
        println!(
            "single pattern, n=10000: all functions {per:.4} s, K isotropic only {k_only:.4} s"
        );
        std::fs::write("bench/data/rust_k_seconds.txt", format!("{k_only}\n")).expect("write");
        return;
    }
    println!("Target A: K and L, isotropic, n = 10,000, 199 simulations, 50 steps");
    let sq = square(1000.0);
    envelope_time(&sq, 10_000, SummaryFunction::K, Correction::Isotropic, 199);
    envelope_time(&sq, 10_000, SummaryFunction::L, Correction::Isotropic, 199);
    println!("Other settings");
    envelope_time(
        &with_hole(1000.0),
        10_000,
        SummaryFunction::L,
        Correction::Isotropic,
        199,
    );
    envelope_time(
        &sq,
        10_000,
        SummaryFunction::L,
        Correction::Translation,
        199,
    );
    envelope_time(&sq, 10_000, SummaryFunction::L, Correction::Border, 199);
    envelope_time(
        &sq,
        10_000,
        SummaryFunction::PairCorrelation,
        Correction::Isotropic,
        199,
    );
    envelope_time(
        &sq,
        10_000,
        SummaryFunction::NearestNeighbour,
        Correction::Isotropic,
        199,
    );
    envelope_time(
        &sq,
        10_000,
        SummaryFunction::EmptySpace,
        Correction::Isotropic,
        199,
    );
    envelope_time(&sq, 1_000, SummaryFunction::L, Correction::Isotropic, 999);
}
