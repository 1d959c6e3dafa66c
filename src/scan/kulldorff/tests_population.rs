//! The Poisson model against population counts at points
//! ([`ScanJob::from_population`], [`ScanModel::PoissonPopulation`]).

use super::*;
use crate::rng::rng_from_seed;

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol
}

/// Case x, y; population x, y, counts.
type Places = (Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>);

/// Three population places on a line (one given as two rows at one place,
/// one with a missing count beside it) and C = 20 cases.
fn three_places() -> Places {
    // Population: A (0, 0) 150 + 100 = 250 people; a point at (100, 0)
    // with a missing count (counts 0); B (1000, 0) 250; C (5000, 0) 500.
    let px = vec![0.0, 100.0, 1000.0, 5000.0, 0.0];
    let py = vec![0.0, 0.0, 0.0, 0.0, 0.0];
    let counts = vec![150.0, f64::NAN, 250.0, 500.0, 100.0];
    // Cases: 10 by A (one of them at (90, 0), nearest to the point without
    // people, so it is counted at A), 2 by B, 8 by C.
    let mut x = vec![10.0, -10.0, 0.0, 0.0, 5.0, -5.0, 20.0, -20.0, 0.0, 90.0];
    let mut y = vec![0.0, 0.0, 10.0, -10.0, 5.0, -5.0, 0.0, 0.0, 20.0, 0.0];
    x.extend([1010.0, 990.0]);
    y.extend([0.0, 5.0]);
    for k in 0..8 {
        x.push(5000.0 + 10.0 * k as f64);
        y.push(-30.0);
    }
    (x, y, px, py, counts)
}

#[test]
fn llr_by_hand_against_population_counts() {
    // Kulldorff (1997), Commun Stat Theory Methods 26:1481–1496, Poisson
    // model, worked by hand. P = 250 + 250 + 500 = 1000 people, C = 20.
    // Windows (at most 50 % of P): {A}, {B}, {A, B} (from either centre), {C}.
    //   {A}: c = 10, E = 20·250/1000 = 5
    //        LLR = 10·ln(10/5) + 10·ln(10/15) = 6.931472 − 4.054651 = 2.876821
    //        RR  = (10/5)/((20−10)/(20−5)) = 3
    //   {A, B}: c = 12, E = 10: 12·ln 1.2 + 8·ln 0.8 = 2.187859 − 1.785148 = 0.402711
    //   {B}: c = 2 < E = 5 and {C}: c = 8 < E = 10 → 0
    let (x, y, px, py, counts) = three_places();
    let w = Window::rectangle(-1000.0, -1000.0, 6000.0, 1000.0).unwrap();
    let o = ScanOptions {
        model: ScanModel::PoissonPopulation,
        n_sim: 99,
        seed: 3,
        ..Default::default()
    };
    let job = ScanJob::from_population(&x, &y, (&px, &py), &counts, &w, &o).unwrap();
    assert_eq!(
        job.regions().x.len(),
        3,
        "A merged, the point without people dropped"
    );
    assert_eq!(job.n_windows(), 5);
    let r = job.finish();
    assert_eq!(r.model, ScanModel::PoissonPopulation);
    assert_eq!(r.centres, ScanCentres::Events);
    assert_eq!((r.total_cases, r.total_population), (20, 1000.0));
    assert!(close(r.statistic, 2.876821, 5e-7), "{}", r.statistic);
    let m = &r.clusters[0];
    assert_eq!((m.centre_x, m.centre_y, m.radius_m), (0.0, 0.0, 0.0));
    assert_eq!(m.observed, 10);
    assert!(close(m.expected, 5.0, 1e-12));
    assert!(close(m.population, 250.0, 1e-12));
    assert!(close(m.relative_risk.unwrap(), 3.0, 1e-12));
    // The farthest case from its point: (90, 0), 90 m from A (the point at
    // (100, 0) holds no one); the cases by C lie up to √(70² + 30²) = 76.2 m
    // from C, those by B up to 11.2 m from B.
    assert!(close(r.case_to_population_max_m.unwrap(), 90.0, 1e-9));
    // Every other window overlaps {A} or has no excess: one cluster.
    assert_eq!(r.clusters.len(), 1);
    // The window {A, B} by hand, through the same scoring path.
    let r2 = ScanJob::from_population(
        &x[..12],
        &y[..12],
        (&px, &py),
        &counts,
        &w,
        &ScanOptions { n_sim: 1, ..o },
    )
    .unwrap();
    // Without the 8 cases by C: C = 12, {A}: c = 10, E = 3
    //   LLR = 10·ln(10/3) + 2·ln(2/9) = 12.039728 − 3.008155 = 9.031573
    assert!(close(r2.observed_statistic(), 9.031573, 5e-6));
    assert!(close(llr_poisson(12.0, 10.0, 20.0), 0.402711, 5e-6));
}

#[test]
fn expected_counts_sum_to_the_cases() {
    // Over a circle holding everything, E = C·P/P = C: the expected counts
    // of all regions sum to C, whether the regions are the population
    // points or grid cells; a cluster's E is the sum over its regions.
    let w = Window::rectangle(0.0, 0.0, 2000.0, 1000.0).unwrap();
    let mut rng = rng_from_seed(41);
    let (px, py) = w.sample_uniform(300, &mut rng);
    let counts: Vec<f64> = (0..300)
        .map(|i| match i % 10 {
            0 => 0.0,
            1 => f64::NAN,
            _ => (1 + rng.random_range(0..80u32)) as f64,
        })
        .collect();
    let (x, y) = w.sample_uniform(77, &mut rng);
    let people: f64 = counts.iter().filter(|v| v.is_finite()).sum();
    for centres in [ScanCentres::Events, ScanCentres::Grid] {
        let o = ScanOptions {
            model: ScanModel::Auto,
            centres,
            cells_long_side: 12,
            n_sim: 9,
            ..Default::default()
        };
        let job = ScanJob::from_population(&x, &y, (&px, &py), &counts, &w, &o).unwrap();
        let e = job.expected_per_region();
        assert!(close(e.iter().sum::<f64>(), 77.0, 1e-9), "{centres:?}");
        let cases: u32 = job.regions().cases.iter().sum();
        assert_eq!(cases, 77);
        let r = job.clone().finish();
        assert_eq!(r.centres, centres);
        assert!(close(r.total_population, people, 1e-9));
        for c in &r.clusters {
            let sum: f64 = c.regions.iter().map(|&k| e[k]).sum();
            assert!(close(c.expected, sum, 1e-9));
            let obs: u64 = c
                .regions
                .iter()
                .map(|&k| job.regions().cases[k] as u64)
                .sum();
            assert_eq!(c.observed, obs);
        }
    }
}

#[test]
fn impossible_models_are_errors() {
    // Population counts asked for without a counts layer; Bernoulli asked
    // for with one (a row would count as one person).
    assert!(resolve_model(ScanModel::PoissonPopulation, false, false).is_err());
    assert!(resolve_model(ScanModel::PoissonPopulation, true, false).is_err());
    assert!(resolve_model(ScanModel::Bernoulli, true, true).is_err());
    assert_eq!(
        resolve_model(ScanModel::Auto, true, true).unwrap(),
        ScanModel::PoissonPopulation
    );
    assert_eq!(
        resolve_model(ScanModel::Auto, true, false).unwrap(),
        ScanModel::Bernoulli
    );
    assert_eq!(
        resolve_model(ScanModel::Auto, false, false).unwrap(),
        ScanModel::Poisson
    );
    assert_eq!(
        resolve_model(ScanModel::Poisson, true, true).unwrap(),
        ScanModel::Poisson
    );
    let w = Window::rectangle(0.0, 0.0, 10.0, 10.0).unwrap();
    let o = ScanOptions {
        model: ScanModel::PoissonPopulation,
        ..Default::default()
    };
    // Other models have no population points to be counted at.
    let area = ScanJob::from_points(
        &[1.0],
        &[1.0],
        None,
        &w,
        &ScanOptions {
            n_sim: 9,
            ..Default::default()
        },
    )
    .unwrap()
    .finish();
    assert_eq!(area.case_to_population_max_m, None);
    let e = ScanJob::from_points(&[1.0], &[1.0], None, &w, &o).unwrap_err();
    assert!(e.to_string().contains("count column"), "{e}");
    // Through a study's patterns: controls without a count column.
    let ev = Pattern::from_xy(vec![1.0], vec![1.0]).unwrap();
    let ct = Pattern::from_xy(vec![2.0, 3.0], vec![2.0, 3.0]).unwrap();
    assert!(ScanJob::new(&ev, Some(&ct), &w, &o).is_err());
    assert!(ScanJob::new(&ev, None, &w, &o).is_err());
    // Every count 0 or missing: no one at risk.
    let e = ScanJob::from_population(
        &[1.0],
        &[1.0],
        (&[2.0, 3.0], &[2.0, 3.0]),
        &[0.0, f64::NAN],
        &w,
        &o,
    )
    .unwrap_err();
    assert!(e.to_string().contains("no one at risk"), "{e}");
    // No cases.
    assert!(ScanJob::from_population(&[], &[], (&[2.0], &[2.0]), &[5.0], &w, &o).is_err());
}

/// Exact binomial quantile: the smallest k with P(X ≤ k) ≥ q.
fn binom_ppf(q: f64, n: u64, p: f64) -> u64 {
    let mut pmf = (1.0 - p).powi(n as i32);
    let mut cdf = pmf;
    let mut k = 0;
    while cdf < q && k < n {
        pmf *= (n - k) as f64 / (k + 1) as f64 * p / (1.0 - p);
        k += 1;
        cdf += pmf;
    }
    k
}

#[test]
fn binomial_quantiles_match_scipy() {
    // scipy.stats.binom.interval(0.99, 200, 0.05) = (3, 19), as quoted for
    // the random labelling test (src/risk/labelling.rs).
    assert_eq!(binom_ppf(0.005, 200, 0.05), 3);
    assert_eq!(binom_ppf(0.995, 200, 0.05), 19);
}

#[test]
fn null_rejection_rate_is_nominal() {
    // Under the null (cases drawn in proportion to the population), the
    // Monte Carlo test rejects at 0.05 with probability 5/100 (m = 99;
    // Kulldorff 1997; at most that with tied maxima). Over 200 seeded
    // datasets the rejection count must lie in the binomial 99 % interval.
    let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
    let datasets = 200u64;
    let mut rejected = 0u64;
    for d in 0..datasets {
        let mut rng = rng_from_seed(90_000 + d);
        let (px, py) = w.sample_uniform(100, &mut rng);
        let counts: Vec<f64> = (0..100)
            .map(|_| (1 + rng.random_range(0..200u32)) as f64)
            .collect();
        let total: f64 = counts.iter().sum();
        let (mut x, mut y) = (Vec::new(), Vec::new());
        for _ in 0..40 {
            let u = rng.random::<f64>() * total;
            let mut acc = 0.0;
            let mut k = counts.len() - 1;
            for (i, &c) in counts.iter().enumerate() {
                acc += c;
                if u < acc {
                    k = i;
                    break;
                }
            }
            x.push(px[k]);
            y.push(py[k]);
        }
        let o = ScanOptions {
            n_sim: 99,
            seed: 7_000 + d,
            ..Default::default()
        };
        let r = ScanJob::from_population(&x, &y, (&px, &py), &counts, &w, &o)
            .unwrap()
            .finish();
        if r.p_value <= 0.05 {
            rejected += 1;
        }
    }
    let (lo, hi) = (
        binom_ppf(0.005, datasets, 0.05),
        binom_ppf(0.995, datasets, 0.05),
    );
    eprintln!("null rejections at 0.05: {rejected} of {datasets} (99 % interval {lo}..={hi})");
    assert!((lo..=hi).contains(&rejected), "{rejected} of {datasets}");
}
