//! Benchmark of the clustering tests (run with `--release`).
//!
//! Target A: K and L with the isotropic correction, n = 10,000 CSR points
//! in a 1000 m square, 199 simulations, 50 distance steps (51 values).
//!
//! ```text
//! cargo run --release --example bench_clustering            # target A (K and L)
//! cargo run --release --example bench_clustering -- quick   # other settings, 19 sims
//! cargo run --release --example bench_clustering -- export  # write target/bench-data/points.csv
//! ```
//! The export writes the points and the r grid used by
//! `bench/clustering_vs_scipy.py`, and prints our single-pattern K timing.

use cloister::distance::{
    distance_functions, simulate_csr, Correction, EnvelopeJob, EnvelopeParams, Estimator,
    FunctionParams, SummaryFunction,
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

/// CPU seconds used by this process so far (Linux /proc; None elsewhere).
/// Reported beside wall time because the benchmark machine is shared.
fn cpu_seconds() -> Option<f64> {
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    // Fields after the command name (which is in parentheses).
    let rest = &stat[stat.rfind(')')? + 2..];
    let f: Vec<&str> = rest.split_whitespace().collect();
    let utime: f64 = f.get(11)?.parse().ok()?;
    let stime: f64 = f.get(12)?.parse().ok()?;
    Some((utime + stime) / 100.0) // clock ticks, 100 per second on Linux
}

fn envelope_time(w: &Window, n: usize, f: SummaryFunction, c: Correction, n_sim: usize) -> f64 {
    envelope_time_threads(w, n, f, c, n_sim, 1)
}

/// As [`envelope_time`], with the simulations spread over `threads` native
/// threads (`EnvelopeJob::run_batch_parallel`; identical results).
fn envelope_time_threads(
    w: &Window,
    n: usize,
    f: SummaryFunction,
    c: Correction,
    n_sim: usize,
    threads: usize,
) -> f64 {
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
    let c0 = cpu_seconds();
    let mut job = EnvelopeJob::new(&p, w, &params).expect("job");
    while job.run_batch_parallel(10 * threads, threads) < job.total() {}
    let res = job.finish();
    let secs = t.elapsed().as_secs_f64();
    let cpu = match (c0, cpu_seconds()) {
        (Some(a), Some(b)) => format!("{:>8.2} s CPU", b - a),
        _ => "CPU n/a".to_string(),
    };
    println!(
        "{:<6} {:<12} n={:<6} sims={:<4} threads={threads} {:>8.2} s wall {}  ({:.1} ms CPU per pattern; MAD p={:.3}, DCLF p={:.3})",
        res.label,
        format!("{c:?}"),
        n,
        n_sim,
        secs,
        cpu,
        match (c0, cpu_seconds()) {
            (Some(a), Some(b)) => 1000.0 * (b - a) / (n_sim as f64 + 1.0),
            _ => f64::NAN,
        },
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
        std::fs::create_dir_all("target/bench-data").expect("target/bench-data");
        let mut s = String::from("x,y\n");
        for i in 0..p.len() {
            s.push_str(&format!("{:.17e},{:.17e}\n", p.x()[i], p.y()[i]));
        }
        std::fs::write("target/bench-data/points.csv", s).expect("write points");
        let reps = 5;
        let time_k = |c: Correction| -> f64 {
            let params = EnvelopeParams {
                function: SummaryFunction::K,
                n_sim: 1,
                functions: FunctionParams {
                    n_steps: 50,
                    correction: c,
                    ..Default::default()
                },
                ..Default::default()
            };
            let t = Instant::now();
            let c0 = cpu_seconds();
            for _ in 0..reps {
                // new() computes the observed K once (no simulation is run).
                let _ = EnvelopeJob::new(&p, &w, &params).expect("job");
            }
            // CPU seconds when /proc is available (the machine is shared),
            // wall-clock seconds otherwise.
            match (c0, cpu_seconds()) {
                (Some(a), Some(b)) => (b - a) / reps as f64,
                _ => t.elapsed().as_secs_f64() / reps as f64,
            }
        };
        let k_iso = time_k(Correction::Isotropic);
        let k_none = time_k(Correction::None);
        let fp = |c| FunctionParams {
            n_steps: 50,
            correction: c,
            ..Default::default()
        };
        let iso = distance_functions(&p, &w, &fp(Correction::Isotropic)).expect("functions");
        let none = distance_functions(&p, &w, &fp(Correction::None)).expect("functions");
        let json = serde_json::json!({
            "n": p.len(), "area": iso.area_m2, "r": iso.r, "k_iso": iso.k, "k_none": none.k,
            "seconds_k_isotropic": k_iso, "seconds_k_none": k_none
        });
        std::fs::write("target/bench-data/rust_k.json", json.to_string()).expect("write json");
        println!(
            "single pattern, n = 10,000, 51 distances: K isotropic {k_iso:.4} s, \
             K no correction {k_none:.4} s"
        );
        return;
    }
    if args.get(1).map(String::as_str) == Some("binned-error") {
        binned_error();
        return;
    }
    if args.get(1).map(String::as_str) == Some("binned") {
        // L envelope, translation correction, polygon with a hole, r up to
        // a quarter of the shorter side: every pair against the grid at
        // 10,000 events, and the grid at 100,000 (`binned [n_sim]`).
        let n_sim: usize = args.get(2).and_then(|a| a.parse().ok()).unwrap_or(19);
        let hole = with_hole(1000.0);
        let run = |n: usize, e: Estimator, threads: usize| {
            let p = simulate_csr(&hole, n, 42).expect("points");
            let params = EnvelopeParams {
                function: SummaryFunction::L,
                n_sim,
                seed: 7,
                estimator: e,
                functions: FunctionParams {
                    n_steps: 50,
                    r_max: Some(250.0),
                    correction: Correction::Translation,
                    ..Default::default()
                },
                ..Default::default()
            };
            let t = Instant::now();
            let mut job = EnvelopeJob::new(&p, &hole, &params).expect("job");
            let t_start = t.elapsed().as_secs_f64();
            while job.run_batch_parallel(10 * threads, threads) < job.total() {}
            let res = job.finish();
            let secs = t.elapsed().as_secs_f64();
            println!(
                "{}",
                serde_json::json!({
                    "n": n, "n_sim": n_sim, "threads": threads, "estimator": res.estimator,
                    "cell_m": res.cell_m, "seconds_start": t_start, "seconds_total": secs,
                    "ms_per_simulated_pattern": 1000.0 * (secs - t_start) / n_sim as f64,
                    "mad_p": res.mad.p_value, "dclf_p": res.dclf.p_value
                })
            );
        };
        run(10_000, Estimator::Exact, 1);
        run(10_000, Estimator::Binned, 1);
        run(100_000, Estimator::Binned, 1);
        run(100_000, Estimator::Binned, 2);
        return;
    }
    let sq = square(1000.0);
    if args.get(1).map(String::as_str) == Some("square") {
        // One path at a time, for profiling: `square iso` or `square none`
        // (add `g` for the pair-correlation function).
        let c = if args.get(2).map(String::as_str) == Some("none") {
            Correction::None
        } else {
            Correction::Isotropic
        };
        let f = if args.get(3).map(String::as_str) == Some("g") {
            SummaryFunction::PairCorrelation
        } else {
            SummaryFunction::L
        };
        envelope_time(&sq, 10_000, f, c, 19);
        return;
    }
    if args.get(1).map(String::as_str) == Some("iso") {
        // The isotropic K path alone (19 simulations), for tuning.
        envelope_time(&sq, 10_000, SummaryFunction::L, Correction::None, 19);
        envelope_time(&sq, 10_000, SummaryFunction::L, Correction::Isotropic, 19);
        let hole = with_hole(1000.0);
        envelope_time(&hole, 10_000, SummaryFunction::L, Correction::Isotropic, 19);
        return;
    }
    if args.get(1).map(String::as_str) == Some("quick") {
        // Per-pattern costs with 19 simulations (the machine is shared).
        let corrections = [
            Correction::Isotropic,
            Correction::None,
            Correction::Border,
            Correction::Translation,
        ];
        for c in corrections {
            envelope_time(&sq, 10_000, SummaryFunction::L, c, 19);
        }
        let hole = with_hole(1000.0);
        envelope_time(&hole, 10_000, SummaryFunction::L, Correction::Isotropic, 19);
        envelope_time(
            &hole,
            10_000,
            SummaryFunction::L,
            Correction::Translation,
            19,
        );
        let functions = [
            SummaryFunction::PairCorrelation,
            SummaryFunction::NearestNeighbour,
            SummaryFunction::EmptySpace,
            SummaryFunction::J,
        ];
        for f in functions {
            envelope_time(&sq, 10_000, f, Correction::Isotropic, 19);
        }
        envelope_time(&sq, 1_000, SummaryFunction::L, Correction::Isotropic, 199);
        return;
    }
    let cores = std::thread::available_parallelism().map_or(1, |c| c.get());
    println!("Target A: K and L, isotropic, n = 10,000, 199 simulations, 50 steps ({cores} cores)");
    envelope_time(&sq, 10_000, SummaryFunction::K, Correction::Isotropic, 199);
    envelope_time_threads(
        &sq,
        10_000,
        SummaryFunction::K,
        Correction::Isotropic,
        199,
        cores,
    );
    envelope_time_threads(
        &sq,
        10_000,
        SummaryFunction::L,
        Correction::Isotropic,
        199,
        cores,
    );
}

/// The grid (binned) estimator against the exact translation estimator on
/// 10,000 events in the polygon with a hole (CSR and Thomas, seeded): the
/// largest relative error of K, L and g at distances of at least c cells,
/// and the time of one pattern each way.
fn binned_error() {
    use cloister::distance::binned::binned_functions;
    use cloister::distance::{simulate_thomas, ThomasParams};
    let w = with_hole(1000.0);
    let params = FunctionParams {
        n_steps: 50,
        correction: Correction::Translation,
        ..Default::default()
    };
    let area = w.area();
    let csr = simulate_csr(&w, 10_000, 7).expect("csr");
    // Thomas: 100 parents, σ = 15 m, about 10,000 events.
    let thomas = simulate_thomas(
        &w,
        ThomasParams {
            kappa: 100.0 / area,
            mu: 100.0,
            sigma: 15.0,
        },
        8,
    )
    .expect("thomas");
    for (name, p) in [("csr", &csr), ("thomas", &thomas)] {
        let t = Instant::now();
        let exact = distance_functions(p, &w, &params).expect("exact");
        let t_exact = t.elapsed().as_secs_f64();
        let t = Instant::now();
        let b =
            binned_functions(p, &w, &params, cloister::distance::binned::FFT_SIDE).expect("binned");
        let t_binned = t.elapsed().as_secs_f64();
        let rel = |a: f64, e: f64| ((a - e) / e).abs();
        let mut rows = Vec::new();
        for c in [1.0, 2.0, 3.0, 5.0, 10.0, 20.0, 50.0] {
            let (mut k, mut l, mut g) = (0.0f64, 0.0f64, 0.0f64);
            for i in 1..b.r.len() {
                if b.r[i] / b.cell_m < c {
                    continue;
                }
                k = k.max(rel(b.k[i], exact.k[i]));
                l = l.max(rel(b.l[i], exact.l[i]));
                if b.r[i] >= exact.bandwidth_m {
                    g = g.max(rel(b.pcf[i], exact.pcf[i]));
                }
            }
            rows.push(serde_json::json!({"from_cells": c, "k": k, "l": l, "g": g}));
        }
        println!(
            "{}",
            serde_json::json!({
                "pattern": name, "n": p.len(), "cell_m": b.cell_m, "r_max": exact.r_max,
                "bandwidth_m": exact.bandwidth_m,
                "seconds_exact_all_functions": t_exact, "seconds_binned_k_g": t_binned,
                "max_relative_error_from": rows
            })
        );
    }
}
