//! Nanoseconds per pair: our K against a plain count-and-histogram loop.
//!
//! `cargo run --release --example bench_k_pairs [N] [R_MAX]`
//! (default 10,000 CSR points in a 1000 m square, r_max 250 m, 50 steps;
//! the portable build, no `target-cpu=native`).
//!
//! In one run, best of 5 each, wall clock:
//! * baseline: a plain loop written here for comparison only: points
//!   sorted into square cells of side r_max, every unordered pair in the
//!   same or a neighbouring cell (half the neighbourhood), squared
//!   distance, a square root and `ceil(d/step)` for those within r_max, one
//!   histogram increment. No edge correction, no checks;
//! * ours, K without correction and K with Ripley's isotropic correction:
//!   `EnvelopeJob::new` (prepares the window, computes the observed K
//!   once; no simulation), and the steady state of one simulation within a
//!   job (`run_batch`, 20 simulations, per simulation; the CSR patterns
//!   have about as many pairs as the observed one).
//!
//! Costs are divided by the number of unordered pairs within r_max of the
//! observed pattern (counted by the baseline). The baseline's cumulative
//! counts are checked against our uncorrected K (K(r)·n(n−1)/(2|W|)) and
//! the largest difference printed. Prints the load average with the figures.

use cloister::distance::{
    simulate_csr, Correction, EnvelopeJob, EnvelopeParams, FunctionParams, SummaryFunction,
};
use cloister::window::Window;
use std::time::Instant;

fn load() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .and_then(|s| s.split_whitespace().next().map(str::to_string))
        .unwrap_or_else(|| "?".into())
}

/// The baseline: histogram of unordered pair distances within r_max, bin
/// k = ceil(d/step) (the smallest grid value r_k = k·step with d ≤ r_k).
fn baseline(x: &[f64], y: &[f64], side: f64, r_max: f64, steps: usize) -> Vec<u64> {
    let n = x.len();
    let step = r_max / steps as f64;
    let nc = ((side / r_max).ceil() as usize).max(1);
    let cell = |v: f64| ((v / r_max) as usize).min(nc - 1);
    // Counting sort of the points into cells.
    let mut start = vec![0usize; nc * nc + 1];
    for i in 0..n {
        start[cell(y[i]) * nc + cell(x[i]) + 1] += 1;
    }
    for c in 0..nc * nc {
        start[c + 1] += start[c];
    }
    let mut fill = start.clone();
    let (mut xs, mut ys) = (vec![0.0; n], vec![0.0; n]);
    for i in 0..n {
        let c = cell(y[i]) * nc + cell(x[i]);
        xs[fill[c]] = x[i];
        ys[fill[c]] = y[i];
        fill[c] += 1;
    }
    let r2 = r_max * r_max;
    let mut hist = vec![0u64; steps + 1];
    for cy in 0..nc {
        for cx in 0..nc {
            let a = start[cy * nc + cx]..start[cy * nc + cx + 1];
            // Same cell (j > i), then right, and the three cells above.
            let mut others = vec![];
            if cx + 1 < nc {
                others.push(cy * nc + cx + 1);
            }
            if cy + 1 < nc {
                for dx in [-1isize, 0, 1] {
                    let ox = cx as isize + dx;
                    if ox >= 0 && (ox as usize) < nc {
                        others.push((cy + 1) * nc + ox as usize);
                    }
                }
            }
            for i in a.clone() {
                let (xi, yi) = (xs[i], ys[i]);
                let mut count = |j: usize| {
                    let (dx, dy) = (xs[j] - xi, ys[j] - yi);
                    let d2 = dx * dx + dy * dy;
                    if d2 <= r2 {
                        let k = (d2.sqrt() / step).ceil() as usize;
                        hist[k.min(steps)] += 1;
                    }
                };
                for j in i + 1..a.end {
                    count(j);
                }
                for &c in &others {
                    for j in start[c]..start[c + 1] {
                        count(j);
                    }
                }
            }
        }
    }
    hist
}

fn best_of<T>(reps: usize, mut f: impl FnMut() -> T) -> (f64, T) {
    let mut best = f64::INFINITY;
    let mut last = None;
    for _ in 0..reps {
        let t = Instant::now();
        let v = f();
        best = best.min(t.elapsed().as_secs_f64());
        last = Some(v);
    }
    (best, last.expect("at least one repetition"))
}

fn main() {
    let args: Vec<f64> = std::env::args()
        .skip(1)
        .filter_map(|a| a.parse().ok())
        .collect();
    let n = args.first().map_or(10_000, |v| *v as usize);
    let r_max = args.get(1).copied().unwrap_or(250.0);
    let (side, steps, reps) = (1000.0, 50, 5);
    let w = Window::rectangle(0.0, 0.0, side, side).expect("square");
    let p = simulate_csr(&w, n, 42).expect("points");
    println!("load average {} (start)", load());

    let (t_base, hist) = best_of(reps, || baseline(p.x(), p.y(), side, r_max, steps));
    let pairs: u64 = hist.iter().sum();

    let params = |c: Correction| EnvelopeParams {
        function: SummaryFunction::K,
        n_sim: 20,
        functions: FunctionParams {
            r_max: Some(r_max),
            n_steps: steps,
            correction: c,
            ..Default::default()
        },
        ..Default::default()
    };
    let observed =
        |c: Correction| best_of(reps, || EnvelopeJob::new(&p, &w, &params(c)).expect("job"));
    let per_sim = |c: Correction| {
        let mut best = f64::INFINITY;
        for _ in 0..3 {
            let mut job = EnvelopeJob::new(&p, &w, &params(c)).expect("job");
            let t = Instant::now();
            job.run_batch(20);
            best = best.min(t.elapsed().as_secs_f64() / 20.0);
        }
        best
    };
    let (t_none, job_none) = observed(Correction::None);
    let (t_iso, _) = observed(Correction::Isotropic);
    let s_none = per_sim(Correction::None);
    let s_iso = per_sim(Correction::Isotropic);

    // Check: the baseline's cumulative counts against our uncorrected K.
    let k_none = job_none.finish().observed;
    let nf = n as f64;
    let mut cum = 0u64;
    let mut worst: f64 = 0.0;
    for (k, &h) in hist.iter().enumerate() {
        cum += h;
        let ours = k_none[k] * nf * (nf - 1.0) / (2.0 * side * side);
        worst = worst.max((ours - cum as f64).abs());
    }
    println!("load average {} (end)", load());
    let ns = |t: f64| t * 1e9 / pairs as f64;
    println!(
        "n = {n}, r_max = {r_max} m, {steps} steps: {pairs} unordered pairs within r_max; \
         baseline counts vs our K without correction: largest difference {worst:.3e} pairs"
    );
    println!(
        "baseline count + histogram : {:.2} ns/pair ({t_base:.4} s)",
        ns(t_base)
    );
    println!(
        "ours K no correction       : {:.2} ns/pair observed ({t_none:.4} s), {:.2} ns/pair per simulation",
        ns(t_none),
        ns(s_none)
    );
    println!(
        "ours K isotropic           : {:.2} ns/pair observed ({t_iso:.4} s), {:.2} ns/pair per simulation",
        ns(t_iso),
        ns(s_iso)
    );
    println!(
        "{{\"n\":{n},\"r_max\":{r_max},\"pairs\":{pairs},\"baseline_ns\":{:.3},\"k_none_ns\":{:.3},\"k_none_sim_ns\":{:.3},\"k_iso_ns\":{:.3},\"k_iso_sim_ns\":{:.3},\"ratio_iso_sim_to_baseline\":{:.2},\"check_max_diff_pairs\":{worst:e}}}",
        ns(t_base),
        ns(t_none),
        ns(s_none),
        ns(t_iso),
        ns(s_iso),
        s_iso / t_base
    );
}
