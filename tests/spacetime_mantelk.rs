//! Tests of src/spacetime/mantel.rs and src/spacetime/stk.rs from outside
//! the crate: the Mantel statistic and its exact permutation moments
//! against numpy/scipy (`tests/reference/mantel_reference.py`, its JSON
//! committed), and the calibration of both tests under no interaction.

mod common;
use common::f;

use cloister::spacetime::mantel::{MantelJob, MantelOptions, Transform};
use cloister::spacetime::stk::{SpaceTimeKJob, SpaceTimeKOptions};
use cloister::spacetime::TimedEvents;
use cloister::Window;
use rand::RngExt;
use serde_json::Value;

fn vec(v: &Value) -> Vec<f64> {
    v.as_array().unwrap().iter().map(f).collect()
}

fn transform(s: &str) -> Transform {
    match s {
        "raw" => Transform::Raw,
        "reciprocal" => Transform::Reciprocal,
        other => panic!("{other}"),
    }
}

fn reference() -> Value {
    serde_json::from_str(include_str!("reference/mantel_reference.json")).unwrap()
}

/// Z, the exact moments and the correlation on 300 events, each pair of
/// transforms, against numpy/scipy (pdist, pearsonr) in
/// `mantel_reference.py`.
#[test]
fn mantel_matches_numpy_scipy_on_the_reference_set() {
    let r = reference();
    let ev = TimedEvents::from_xyt(vec(&r["x"]), vec(&r["y"]), vec(&r["t"])).unwrap();
    for c in r["cases"].as_array().unwrap() {
        let o = MantelOptions {
            space_transform: transform(c["space_transform"].as_str().unwrap()),
            time_transform: transform(c["time_transform"].as_str().unwrap()),
            space_constant_m: f(&r["space_constant_m"]),
            time_constant_days: f(&r["time_constant_days"]),
            n_sim: 1,
            ..Default::default()
        };
        let mut job = MantelJob::new(&ev, &o).unwrap();
        let (mean, var) = job.moments();
        let (z, m, v) = (f(&c["z"]), f(&c["mean"]), f(&c["variance"]));
        // Z from the single-precision batched loop: relative 5e-6.
        assert!(
            (job.observed() - z).abs() <= 5e-6 * z.abs(),
            "{c}: Z {}",
            job.observed()
        );
        assert!((mean - m).abs() <= 1e-9 * m.abs(), "{c}: mean {mean}");
        assert!((var - v).abs() <= 1e-7 * v.abs(), "{c}: variance {var}");
        job.run_batch(1);
        let res = job.finish().unwrap();
        assert!(
            (res.correlation - f(&c["correlation"])).abs() < 1e-5,
            "{c}: r {}",
            res.correlation
        );
    }
}

/// The exact moments against the mean and variance over all 8! = 40320
/// permutations (itertools in `mantel_reference.py`), and the exact upper
/// tail share.
#[test]
fn mantel_moments_match_python_enumeration_of_all_permutations() {
    let r = reference();
    let s = &r["small"];
    let ev = TimedEvents::from_xyt(vec(&s["x"]), vec(&s["y"]), vec(&s["t"])).unwrap();
    for c in s["cases"].as_array().unwrap() {
        let o = MantelOptions {
            space_transform: transform(c["space_transform"].as_str().unwrap()),
            time_transform: transform(c["time_transform"].as_str().unwrap()),
            space_constant_m: f(&r["space_constant_m"]),
            time_constant_days: f(&r["time_constant_days"]),
            n_sim: 4000,
            seed: 12,
            ..Default::default()
        };
        let mut job = MantelJob::new(&ev, &o).unwrap();
        let (mean, var) = job.moments();
        assert!(
            (mean - f(&c["mean"])).abs() <= 1e-9 * mean.abs(),
            "{c}: {mean}"
        );
        assert!(
            (var - f(&c["variance"])).abs() <= 1e-7 * var.abs(),
            "{c}: {var}"
        );
        assert!((job.observed() - f(&c["z"])).abs() <= 5e-6 * mean.abs());
        // 4000 random permutations: the upper-tail share within 4 SE of
        // the exact one.
        job.run_batch(4000);
        let res = job.finish().unwrap();
        let p = f(&c["share_at_least"]);
        let share = res.at_least as f64 / 4000.0;
        assert!(
            (share - p).abs() < 4.0 * (p * (1.0 - p) / 4000.0).sqrt(),
            "{c}: {share} vs {p}"
        );
    }
}

/// The 99 % interval of Binomial(n, p) (cumulative sums; outer 0.5 % each).
fn binomial_99(n: usize, p: f64) -> (usize, usize) {
    let mut pmf = vec![0.0; n + 1];
    pmf[0] = (1.0 - p).powi(n as i32);
    for k in 1..=n {
        pmf[k] = pmf[k - 1] * (n - k + 1) as f64 / k as f64 * p / (1.0 - p);
    }
    let mut cum = 0.0;
    let mut lo = 0;
    for (k, v) in pmf.iter().enumerate() {
        cum += v;
        if cum > 0.005 {
            lo = k;
            break;
        }
    }
    let mut cum = 0.0;
    let mut hi = n;
    for k in (0..=n).rev() {
        cum += pmf[k];
        if cum > 0.005 {
            hi = k;
            break;
        }
    }
    (lo, hi)
}

fn independent(n: usize, seed: u64) -> TimedEvents {
    let mut rng = cloister::rng::rng_from_seed(seed);
    let x: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..1000.0)).collect();
    let y: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..1000.0)).collect();
    let t: Vec<f64> = (0..n)
        .map(|_| rng.random_range(0.0..200.0f64).floor())
        .collect();
    TimedEvents::from_xyt(x, y, t).unwrap()
}

/// Level of both tests without interaction (locations and times drawn
/// independently): 300 data sets, 39 permutations each, rejection at
/// p ≤ 0.05; the count of rejections inside the 99 % interval of
/// Binomial(300, 0.05). (A rank test with the data among m + 1
/// exchangeable values has level exactly 2/40 = 0.05 here.) A heavier run
/// is `cargo run --release --example bench_mantel_stk -- calibrate`.
#[test]
fn both_tests_hold_their_level_without_interaction() {
    let (lo, hi) = binomial_99(300, 0.05);
    let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
    let (mut mantel, mut stk) = (0, 0);
    for r in 0..300u64 {
        let ev = independent(60, 5000 + r);
        let o = MantelOptions {
            n_sim: 39,
            seed: r,
            ..Default::default()
        };
        let mut job = MantelJob::new(&ev, &o).unwrap();
        job.run_batch(39);
        mantel += usize::from(job.finish().unwrap().p_value <= 0.05);
        let o = SpaceTimeKOptions {
            n_sim: 39,
            seed: r,
            s_steps: 5,
            t_steps: 5,
            ..Default::default()
        };
        let mut job = SpaceTimeKJob::new(&ev, &w, &o).unwrap();
        job.run_batch(39);
        stk += usize::from(job.finish().unwrap().global_p <= 0.05);
    }
    assert!(
        (lo..=hi).contains(&mantel),
        "Mantel: {mantel} of 300 outside [{lo}, {hi}]"
    );
    assert!(
        (lo..=hi).contains(&stk),
        "space–time K: {stk} of 300 outside [{lo}, {hi}]"
    );
}
