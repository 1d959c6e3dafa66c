use super::*;

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol
}

#[test]
fn llr_check_values() {
    // docs/methods.md#scan [C] (a numerical check kept outside the repository).
    assert!(close(llr_poisson(30.0, 15.0, 200.0), 6.419659, 5e-7));
    assert_eq!(llr_poisson(10.0, 15.0, 200.0), 0.0);
    assert!(close(
        llr_bernoulli(40.0, 100.0, 200.0, 1000.0),
        11.894918,
        5e-7
    ));
    assert_eq!(llr_bernoulli(20.0, 100.0, 200.0, 1000.0), 0.0);
}

#[test]
fn llr_by_hand() {
    // Kulldorff (1997), Commun Stat Theory Methods 26:1481–1496, Poisson LLR
    // worked by hand: C = 20 cases in all, c = 10 observed where E = 5 were
    // expected.
    //   c·ln(c/E)             = 10·ln 2       = 6.931472
    //   (C−c)·ln((C−c)/(C−E)) = 10·ln(10/15)  = −4.054651
    //   LLR                                   = 2.876821
    assert!(close(llr_poisson(10.0, 5.0, 20.0), 2.876821, 5e-7));
    // Bernoulli by hand: N = 10 people, C = 4 cases; window of n = 4 holding
    // c = 3 cases (rest: 1 case among 6).
    //   inside  3·ln(3/4) + 1·ln(1/4) = −0.863046 − 1.386294 = −2.249340
    //   outside 1·ln(1/6) + 5·ln(5/6) = −1.791759 − 0.911608 = −2.703367
    //   null    4·ln(4/10) + 6·ln(6/10) = −3.665163 − 3.064954 = −6.730117
    //   LLR = −2.249340 − 2.703367 + 6.730117 = 1.777410
    assert!(close(llr_bernoulli(3.0, 4.0, 4.0, 10.0), 1.777410, 5e-6));
}

fn s25() -> ScanRegions {
    // docs/methods.md#fixtures, fixture S25.
    let cases = [
        4, 3, 5, 4, 2, 3, 12, 14, 4, 5, 5, 11, 9, 3, 4, 4, 3, 4, 5, 3, 2, 4, 3, 5, 4,
    ];
    ScanRegions {
        x: (0..25).map(|i| (i % 5) as f64).collect(),
        y: (0..25).map(|i| (i / 5) as f64).collect(),
        cases: cases.to_vec(),
        population: vec![1000.0; 25],
    }
}

#[test]
fn s25_fixture() {
    // docs/methods.md#scan check values on S25 [C]: 127 windows; most likely cluster
    // centre 7, radius 1, regions {2,6,7,8,12}, c = 44, E = 25,
    // LLR = 7.805404, RR = 2.1728; Monte Carlo p (m = 999) about 0.003,
    // tested loosely (p < 0.02) as docs/methods.md#scan advises.
    let o = ScanOptions {
        n_sim: 999,
        seed: 2024,
        ..Default::default()
    };
    let job = ScanJob::from_regions(&s25(), ScanModel::Poisson, &o).unwrap();
    assert_eq!(job.n_windows(), 127);
    let r = job.finish();
    assert_eq!(r.total_cases, 125);
    let mlc = &r.clusters[0];
    assert_eq!(mlc.centre_region, 7);
    assert_eq!(mlc.radius_m, 1.0);
    let mut regs = mlc.regions.clone();
    regs.sort();
    assert_eq!(regs, vec![2, 6, 7, 8, 12]);
    assert_eq!(mlc.observed, 44);
    assert!(close(mlc.expected, 25.0, 1e-9));
    assert!(close(mlc.llr, 7.805404, 5e-7));
    assert!(close(mlc.relative_risk.unwrap(), 2.1728, 5e-5));
    assert!(r.p_value < 0.02, "p = {}", r.p_value);
    // docs/methods.md#scan: the null 95th percentile is about 5.09 (seed-dependent).
    let c95 = r.critical_95.unwrap();
    assert!((4.0..6.5).contains(&c95), "{c95}");
    // Secondary clusters share no region with earlier ones.
    let mut seen = std::collections::HashSet::new();
    for c in &r.clusters {
        for &g in &c.regions {
            assert!(seen.insert(g));
        }
        assert!(c.p_value >= r.p_value);
    }
}

#[test]
fn batches_do_not_change_results() {
    let o = ScanOptions {
        n_sim: 57,
        seed: 9,
        ..Default::default()
    };
    let a = ScanJob::from_regions(&s25(), ScanModel::Poisson, &o)
        .unwrap()
        .finish();
    let mut job = ScanJob::from_regions(&s25(), ScanModel::Poisson, &o).unwrap();
    for k in [1, 7, 0, 20] {
        job.run_batch(k);
    }
    assert_eq!(job.progress().done, 28);
    let b = job.finish();
    assert_eq!(a, b);
    let o2 = ScanOptions { seed: 10, ..o };
    let c = ScanJob::from_regions(&s25(), ScanModel::Poisson, &o2)
        .unwrap()
        .finish();
    assert_ne!(a.null_maxima, c.null_maxima);
}

/// Maximum LLR over every window by explicit evaluation (the oracle for the
/// per-count shortcut used in replicates).
fn explicit_max(job: &ScanJob, cases: &[u32]) -> f64 {
    let mut t = 0.0f64;
    for i in 0..job.regions.x.len() {
        let mut c = 0u64;
        job.walk(i, |_, j, p| {
            c += cases[j] as u64;
            if p.is_finite() {
                t = t.max(job.llr(c as f64, p));
            }
        });
    }
    t
}

#[test]
fn replicate_maximum_equals_explicit_maximum() {
    use rand::RngExt;
    let mut rng = crate::rng::rng_from_seed(3);
    // Bernoulli on points with ties (coordinates on a coarse lattice).
    let n = 300;
    let px: Vec<f64> = (0..n)
        .map(|_| (rng.random::<f64>() * 12.0).floor())
        .collect();
    let py: Vec<f64> = (0..n)
        .map(|_| (rng.random::<f64>() * 12.0).floor())
        .collect();
    let regions = {
        let (cx, cy) = (&px[..120], &py[..120]);
        distinct_locations(cx, cy, &px[120..], &py[120..])
    };
    for model in [ScanModel::Bernoulli, ScanModel::Poisson] {
        let o = ScanOptions {
            n_sim: 30,
            seed: 5,
            ..Default::default()
        };
        let mut job = ScanJob::from_regions(&regions, model, &o).unwrap();
        let mut cases = vec![0u32; regions.x.len()];
        for j in 0..30 {
            let mut r = replicate_rng(o.seed, j);
            let mut individuals = job.individuals.clone();
            job.simulate(&mut r, &mut cases, &mut individuals, &mut Vec::new());
            let want = explicit_max(&job, &cases);
            job.run_batch(1);
            let got = job.null_max[j];
            assert!(
                (got - want).abs() <= 1e-12 * want.max(1.0),
                "{model:?} {j}: {got} {want}"
            );
            assert_eq!(
                cases.iter().map(|&c| c as u64).sum::<u64>(),
                job.total_cases
            );
        }
        // The observed statistic too.
        assert!((explicit_max(&job, &regions.cases) - job.observed_statistic()).abs() < 1e-12);
    }
}

#[test]
fn bernoulli_null_keeps_case_total_and_region_caps() {
    let regions = ScanRegions {
        x: vec![0.0, 1.0, 2.0],
        y: vec![0.0; 3],
        cases: vec![2, 0, 1],
        population: vec![2.0, 3.0, 4.0],
    };
    let o = ScanOptions::default();
    let job = ScanJob::from_regions(&regions, ScanModel::Bernoulli, &o).unwrap();
    let mut cases = vec![0u32; 3];
    let mut individuals = job.individuals.clone();
    let mut picks = Vec::new();
    let mut rng = crate::rng::rng_from_seed(1);
    for _ in 0..200 {
        job.simulate(&mut rng, &mut cases, &mut individuals, &mut picks);
        assert_eq!(cases.iter().sum::<u32>(), 3);
        for (c, p) in cases.iter().zip(&regions.population) {
            assert!(*c as f64 <= *p);
        }
    }
}

#[test]
fn edge_cases_return_errors_not_panics() {
    let r = Window::rectangle(0.0, 0.0, 10.0, 10.0).unwrap();
    let o = ScanOptions::default();
    assert!(ScanJob::from_points(&[], &[], None, &r, &o).is_err());
    assert!(ScanJob::from_points(
        &[1.0],
        &[1.0],
        None,
        &r,
        &ScanOptions {
            max_share: 0.9,
            ..o
        }
    )
    .is_err());
    assert!(ScanJob::from_points(
        &[1.0],
        &[1.0],
        None,
        &r,
        &ScanOptions {
            model: ScanModel::Bernoulli,
            ..o
        }
    )
    .is_err());
    // One event: a valid, unremarkable scan.
    let res = ScanJob::from_points(&[1.0], &[1.0], None, &r, &ScanOptions { n_sim: 19, ..o })
        .unwrap()
        .finish();
    assert_eq!(res.n_sim, 19);
    assert!(res.p_value > 0.0 && res.p_value <= 1.0);
}

/// Seeded CSR runs: share with most-likely-cluster p ≥ 0.05, and mean p.
fn calibration(runs: usize, n: usize, n_sim: usize, seed0: u64) -> (usize, f64) {
    let region = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
    let mut ok = 0;
    let mut psum = 0.0;
    for run in 0..runs {
        let mut rng = crate::rng::rng_from_seed(seed0 + run as u64);
        let (x, y) = region.sample_uniform(n, &mut rng);
        let o = ScanOptions {
            n_sim,
            seed: 1000 + run as u64,
            cells_long_side: 10,
            ..Default::default()
        };
        let r = ScanJob::from_points(&x, &y, None, &region, &o)
            .unwrap()
            .finish();
        if r.p_value >= 0.05 {
            ok += 1;
        }
        psum += r.p_value;
    }
    (ok, psum / runs as f64)
}

#[test]
fn calibration_under_csr() {
    // Under CSR the Monte Carlo test is exact (Kulldorff 1997): P(p < 0.05)
    // = 0.05 up to the discreteness of p (m = 99: exactly 5/100). With 60
    // runs the count of p ≥ 0.05 is Binomial(60, 0.95): P(X ≤ 52) ≈ 0.0098
    // (scipy.stats.binom.cdf(52, 60, 0.95)), so we require X ≥ 53. The mean p
    // is 0.505 with SD 0.289/√60 = 0.037 for uniform p; we allow ±4 SD.
    let (ok, mean_p) = calibration(60, 80, 99, 77);
    assert!(ok >= 53, "{ok} of 60 runs had p ≥ 0.05");
    assert!((mean_p - 0.505).abs() < 0.15, "mean p {mean_p}");
}

#[test]
#[ignore = "heavier calibration: cargo test --release -- --ignored"]
fn calibration_under_csr_heavy() {
    // 1000 runs: X ~ Binomial(1000, 0.95), SD 6.9; require 950 ± 4 SD.
    let (ok, mean_p) = calibration(1000, 150, 199, 5000);
    assert!((922..=978).contains(&ok), "{ok} of 1000");
    assert!(
        (mean_p - 0.5025).abs() < 4.0 * 0.289 / 1000f64.sqrt(),
        "{mean_p}"
    );
}

#[test]
fn planted_cluster_is_found() {
    // A dense disc of 40 extra events at (700, 300) in CSR background.
    let region = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
    let mut rng = crate::rng::rng_from_seed(42);
    let (mut x, mut y) = region.sample_uniform(200, &mut rng);
    use rand::RngExt;
    for _ in 0..40 {
        let a = rng.random::<f64>() * std::f64::consts::TAU;
        let r = 60.0 * rng.random::<f64>().sqrt();
        x.push(700.0 + r * a.cos());
        y.push(300.0 + r * a.sin());
    }
    let o = ScanOptions {
        n_sim: 99,
        ..Default::default()
    };
    let r = ScanJob::from_points(&x, &y, None, &region, &o)
        .unwrap()
        .finish();
    let m = &r.clusters[0];
    assert!(r.p_value <= 0.02);
    assert!(((m.centre_x - 700.0).powi(2) + (m.centre_y - 300.0).powi(2)).sqrt() < 80.0);
    assert!(m.relative_risk.unwrap() > 2.0);
}

/// The work of a chance run: every list entry at the job's own largest
/// circle, only each centre's own region when the circle holds one region
/// (S25: 1000 people of 25,000 = 4 %), and less for smaller circles.
#[test]
fn replicate_work_follows_the_largest_circle() {
    let r = s25();
    let cases: u64 = r.cases.iter().map(|&c| c as u64).sum();
    let job = ScanJob::from_regions(&r, ScanModel::Poisson, &ScanOptions::default()).unwrap();
    assert_eq!(
        job.replicate_work(0.5),
        (job.list.len() as u64 + cases) as f64
    );
    assert_eq!(job.replicate_work(0.04), (25 + cases) as f64);
    assert!(job.replicate_work(0.25) < job.replicate_work(0.5));
    assert!(job.replicate_work(0.1) < job.replicate_work(0.25));
    // Never more than the job's own circle.
    let small = ScanOptions {
        max_share: 0.1,
        ..Default::default()
    };
    let job = ScanJob::from_regions(&r, ScanModel::Poisson, &small).unwrap();
    assert_eq!(job.replicate_work(0.5), job.replicate_work(0.1));
}

/// Timing the first chance runs: on a clock that advances 1 ms per
/// reading each run takes 1 ms, so 5 runs pass 5 ms; the estimate is the
/// rest at that pace, the faster settings are cheaper, and the timed runs
/// leave the job as it was: the result equals a run that was never timed.
#[test]
fn timed_replicates_estimate_the_rest_and_count() {
    let o = ScanOptions {
        n_sim: 999,
        seed: 7,
        ..Default::default()
    };
    let mut job = ScanJob::from_regions(&s25(), ScanModel::Poisson, &o).unwrap();
    let mut t = 0.0;
    let mut clock = || {
        t += 1.0;
        t
    };
    let cost = job.time_replicates(&mut clock, 5.0, 50);
    assert_eq!(cost.timed, 5);
    assert_eq!(cost.replicate_ms, 1.0);
    assert_eq!(cost.left_ms, 999.0);
    assert_eq!(job.progress().done, 0);
    let names: Vec<(&str, f64)> = cost
        .faster
        .iter()
        .map(|f| (f.option.as_str(), f.number))
        .collect();
    assert_eq!(
        names,
        [
            ("n_sim", 199.0),
            ("n_sim", 99.0),
            ("max_share", 0.25),
            ("max_share", 0.1)
        ]
    );
    assert_eq!(cost.faster[0].run_ms, 199.0);
    assert!(cost.faster.iter().all(|f| f.run_ms < 999.0));
    let timed = job.finish();
    let plain = ScanJob::from_regions(&s25(), ScanModel::Poisson, &o)
        .unwrap()
        .finish();
    assert_eq!(timed.null_maxima, plain.null_maxima);
    assert_eq!(timed.p_value, plain.p_value);
    // The same for the case–control model, whose draws shuffle a list of
    // individuals in place (S25 with 1000 people per region, cases among them).
    let b = ScanOptions {
        n_sim: 99,
        seed: 8,
        ..Default::default()
    };
    let mut job = ScanJob::from_regions(&s25(), ScanModel::Bernoulli, &b).unwrap();
    job.time_replicates(&mut || 0.0, 5.0, 7);
    let timed = job.finish();
    let plain = ScanJob::from_regions(&s25(), ScanModel::Bernoulli, &b)
        .unwrap()
        .finish();
    assert_eq!(timed.null_maxima, plain.null_maxima);
    // At most `max` runs, and never past the total.
    let few = ScanOptions { n_sim: 3, ..o };
    let mut job = ScanJob::from_regions(&s25(), ScanModel::Poisson, &few).unwrap();
    let cost = job.time_replicates(&mut || 0.0, 5.0, 50);
    assert_eq!((cost.timed, cost.left_ms), (3, 0.0));
    assert_eq!(job.progress().done, 0);
    assert!(cost.faster.is_empty());
}
