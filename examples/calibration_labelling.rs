//! Heavy calibration of the random labelling test (run with `--release`):
//! the level under the null and the power against planted excesses, on
//! many more data sets than the few-second version in the unit tests.
//!
//! ```text
//! cargo run --release --example calibration_labelling            # 1,000 data sets each
//! cargo run --release --example calibration_labelling -- 200     # fewer
//! ```
//!
//! Each data set: an invented uneven population of 150 points in a 1 km
//! square (a third of them in a 300 m corner), 50 of them cases, 99
//! relabellings, D(r) to 250 m in 20 steps, isotropic correction, α = 0.05.
//! * Null: the cases are a random subset of the pooled points. The number
//!   of rejections should lie in the binomial 99 % interval for n data sets
//!   at p = 0.05 (computed here exactly from the binomial distribution).
//! * Power: `extra` of the 50 cases are placed instead in a 40 m disc around
//!   a random spot (an excess the population does not have); printed for
//!   extra = 4, 8, 12. Both the D and the cross-type L curves are run.

use cloister::distance::Correction;
use cloister::risk::{random_labelling, LabellingOptions, LabellingStatistic};
use cloister::rng::rng_from_seed;
use cloister::window::Window;
use rand::RngExt;

/// The smallest and largest counts k with P(X < k) ≤ 0.005 and P(X > k) ≤
/// 0.005 for X ~ Binomial(n, p): the central 99 % interval.
fn binomial_interval(n: u64, p: f64) -> (u64, u64) {
    let mut pmf = vec![0.0f64; n as usize + 1];
    // log pmf for stability
    let ln_fact = |k: u64| (1..=k).map(|i| (i as f64).ln()).sum::<f64>();
    for k in 0..=n {
        let l = ln_fact(n) - ln_fact(k) - ln_fact(n - k)
            + k as f64 * p.ln()
            + (n - k) as f64 * (1.0 - p).ln();
        pmf[k as usize] = l.exp();
    }
    let mut lo = 0;
    let mut acc = 0.0;
    for (k, &v) in pmf.iter().enumerate() {
        if acc + v > 0.005 {
            lo = k as u64;
            break;
        }
        acc += v;
    }
    let mut hi = n;
    acc = 0.0;
    for k in (0..=n as usize).rev() {
        if acc + pmf[k] > 0.005 {
            hi = k as u64;
            break;
        }
        acc += pmf[k];
    }
    (lo, hi)
}

fn data_set(seed: u64, extra: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>) {
    let mut rng = rng_from_seed(seed);
    let (mut x, mut y) = (vec![], vec![]);
    for i in 0..150 - extra {
        let s = if i % 3 == 0 { 300.0 } else { 1000.0 };
        x.push(s * rng.random::<f64>());
        y.push(s * rng.random::<f64>());
    }
    // Cases: a random choice of 50 − extra of the population points …
    let n = x.len();
    let mut idx: Vec<usize> = (0..n).collect();
    for i in 0..50 - extra {
        let j = rng.random_range(i..n);
        idx.swap(i, j);
    }
    let (mut cx, mut cy): (Vec<f64>, Vec<f64>) =
        idx[..50 - extra].iter().map(|&i| (x[i], y[i])).unzip();
    let (kx, ky): (Vec<f64>, Vec<f64>) = idx[50 - extra..].iter().map(|&i| (x[i], y[i])).unzip();
    // … and `extra` more in a 40 m disc the population does not have.
    let (hx, hy) = (
        100.0 + 800.0 * rng.random::<f64>(),
        100.0 + 800.0 * rng.random::<f64>(),
    );
    for _ in 0..extra {
        let (a, b) = (rng.random::<f64>(), rng.random::<f64>());
        let rad = 40.0 * a.sqrt();
        let t = std::f64::consts::TAU * b;
        cx.push(hx + rad * t.cos());
        cy.push(hy + rad * t.sin());
    }
    (cx, cy, kx, ky)
}

fn main() {
    let n: u64 = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(1000);
    let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).expect("square");
    let (lo, hi) = binomial_interval(n, 0.05);
    for statistic in [LabellingStatistic::Difference, LabellingStatistic::CrossL] {
        for extra in [0usize, 4, 8, 12] {
            let mut rejected = 0u64;
            for d in 0..n {
                let (cx, cy, kx, ky) = data_set(100_000 * extra as u64 + d, extra);
                let opts = LabellingOptions {
                    n_sim: 99,
                    seed: d,
                    r_max_m: Some(250.0),
                    n_steps: 20,
                    correction: Correction::Isotropic,
                    statistic,
                    ..Default::default()
                };
                if random_labelling((&cx, &cy), (&kx, &ky), &w, &opts)
                    .expect("labelling")
                    .mad
                    .rejects
                {
                    rejected += 1;
                }
            }
            let what = if extra == 0 { "level (null)" } else { "power" };
            let check = if extra == 0 {
                format!(
                    ", \"binomial_99_interval\": [{lo}, {hi}], \"inside\": {}",
                    (lo..=hi).contains(&rejected)
                )
            } else {
                String::new()
            };
            println!(
                "{{\"statistic\": \"{statistic:?}\", \"what\": \"{what}\", \"extra_cases_in_40m_disc\": {extra}, \"data_sets\": {n}, \"rejected\": {rejected}, \"rate\": {:.3}{check}}}",
                rejected as f64 / n as f64
            );
        }
    }
}
