//! The near-repeat table and the Knox test (src/spacetime/pairs.rs) against
//! outside references: brute force over all pairs with numpy, scipy's
//! Poisson tail, statsmodels' Benjamini–Hochberg, full enumeration of the
//! permutations of a small fixture, calibration under the null, and the
//! planted structure of the demo data.

use cloister::input::{read_points, ReadOptions};
use cloister::spacetime::pairs::{
    bh_q_values, poisson_upper, Bands, KnoxJob, KnoxOptions, NearRepeatJob, NearRepeatOptions,
    NearRepeatOutcome, PairEngine,
};
use cloister::spacetime::{TimedEvents, UncertainTimes};
use cloister::study::{AreaFallback, Study};
use serde_json::Value;

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(1e-300)
}

fn reference() -> Value {
    serde_json::from_str(include_str!("reference/near_repeat_reference.json")).unwrap()
}

fn nums(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

/// Counts, margins and expectations against a brute-force count over all
/// pairs with numpy (tests/reference/near_repeat_reference.py).
#[test]
fn table_matches_numpy_brute_force() {
    let r = reference();
    let (x, y, t) = (nums(&r["x"]), nums(&r["y"]), nums(&r["t"]));
    let bands = Bands {
        same_location: true,
        space_edges: nums(&r["space_edges"]),
        time_edges: nums(&r["time_edges"]),
    };
    let e = PairEngine::new(&x, &y, &t, bands).unwrap();
    let table: Vec<u32> = r["table"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(|row| nums(row).into_iter().map(|v| v as u32))
        .collect();
    assert_eq!(e.observed(), &table[..]);
    let sm: Vec<u64> = nums(&r["space_margin"]).iter().map(|&v| v as u64).collect();
    let tm: Vec<u64> = nums(&r["time_margin"]).iter().map(|&v| v as u64).collect();
    assert_eq!(e.space_margin(), &sm[..]);
    assert_eq!(e.time_margin(), &tm[..]);
    assert_eq!(e.n_pairs(), r["n_pairs"].as_u64().unwrap());
    let want: Vec<f64> = r["expected"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(nums)
        .collect();
    for (a, b) in e.expected().iter().zip(&want) {
        assert!(close(*a, *b, 1e-12), "{a} vs {b}");
    }
    // Same location band is not empty in this set (20 exact repeats).
    assert!(sm[0] >= 20);
}

/// Knox X, margins, E, ratio against numpy; the Poisson p against
/// scipy.stats.poisson.sf (same script).
#[test]
fn knox_matches_numpy_and_scipy() {
    let r = reference();
    let k = &r["knox"];
    let ev = TimedEvents::from_xyt(nums(&r["x"]), nums(&r["y"]), nums(&r["t"])).unwrap();
    let o = KnoxOptions {
        distance_m: k["distance_m"].as_f64().unwrap(),
        days: k["days"].as_f64().unwrap(),
        n_perm: 99,
        seed: 3,
        ..Default::default()
    };
    let res = KnoxJob::new(&ev, &o).unwrap().finish();
    assert_eq!(res.x as u64, k["x"].as_u64().unwrap());
    assert_eq!(res.n_s, k["n_s"].as_u64().unwrap());
    assert_eq!(res.n_t, k["n_t"].as_u64().unwrap());
    assert_eq!(res.n_pairs, k["n_pairs"].as_u64().unwrap());
    assert!(close(res.expected, k["expected"].as_f64().unwrap(), 1e-12));
    assert!(close(
        res.ratio.unwrap(),
        k["ratio"].as_f64().unwrap(),
        1e-12
    ));
    assert!(close(res.p_poisson, k["p_poisson"].as_f64().unwrap(), 1e-9));
    // Strongly clustered groups: every permutation falls short.
    assert_eq!(res.at_least_as_extreme, 0);
    assert_eq!(res.p_value, 0.01);
}

/// Knox (1964) arithmetic for n = 50, n_s = 100, n_t = 150, X = 25:
/// E = 100·150/1225 = 12.244898, ratio 2.041667, P(Poisson(E) ≥ 25) =
/// 9.037e-4 (the values computed with scipy.stats.poisson.sf in the
/// reference script; E and the ratio also by hand).
#[test]
fn knox_arithmetic_n50() {
    let r = reference();
    let e: f64 = 100.0 * 150.0 / 1225.0;
    assert!((e - 12.244898).abs() < 5e-7);
    assert!((25.0 / e - 2.041667).abs() < 5e-7);
    let p = poisson_upper(25, e);
    assert!((p - 9.037e-4).abs() < 5e-8, "{p}");
    assert!(close(p, r["knox50"]["p_poisson"].as_f64().unwrap(), 1e-9));
}

/// Benjamini–Hochberg q-values against
/// statsmodels.stats.multitest.multipletests(p, method='fdr_bh').
#[test]
fn bh_matches_statsmodels() {
    let r = reference();
    let q = bh_q_values(&nums(&r["bh_p"]));
    for (a, b) in q.iter().zip(nums(&r["bh_q"])) {
        assert!(close(*a, b, 1e-12), "{a} vs {b}");
    }
}

/// Fixture K7: 7 invented events (unit square, days), Knox with δ = 0.4 and
/// τ = 3. Counted by hand from the 21 pairs: n_s = 7, n_t = 8, X = 4,
/// E = 7·8/21 = 2.666667. The exact permutation p, #{X* ≥ 4}/7! = 1272/5040,
/// by enumerating all 5040 permutations here.
fn k7() -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let pts = [
        (0.0856, 0.2368, 7.3784),
        (0.8013, 0.5822, 9.5627),
        (0.0941, 0.4331, 2.8420),
        (0.4791, 0.1597, 6.4855),
        (0.7346, 0.1137, 6.9622),
        (0.3912, 0.5167, 2.9272),
        (0.4306, 0.5868, 0.0149),
    ];
    (
        pts.iter().map(|p| p.0).collect(),
        pts.iter().map(|p| p.1).collect(),
        pts.iter().map(|p| p.2).collect(),
    )
}

fn all_permutations(n: usize) -> Vec<Vec<usize>> {
    cloister::spacetime::permute::all_permutations(n).unwrap()
}

#[test]
fn k7_knox_exact_permutation_p_by_enumeration() {
    let (x, y, t) = k7();
    let e = PairEngine::new(&x, &y, &t, Bands::knox(0.4, 3.0)).unwrap();
    assert_eq!(e.observed(), &[4]);
    assert_eq!(e.space_margin(), &[7]);
    assert_eq!(e.time_margin(), &[8]);
    assert!((e.expected()[0] - 2.666667).abs() < 5e-7);
    let perms = all_permutations(7);
    assert_eq!(perms.len(), 5040);
    let mut ge = 0;
    let mut sum = 0u64;
    for p in &perms {
        let tp: Vec<f64> = p.iter().map(|&k| t[k]).collect();
        let v = e.table_for(&tp)[0];
        ge += usize::from(v >= 4);
        sum += v as u64;
    }
    assert_eq!(ge, 1272);
    // The enumerated mean is the exact expectation n_s·n_t/N.
    assert!((sum as f64 / 5040.0 - 56.0 / 21.0).abs() < 1e-12);
    // Monte Carlo p with 9999 permutations within 4 standard errors of the
    // exact 1272/5040 (SE = √(p(1 − p)/m)).
    let ev = TimedEvents::from_xyt(x, y, t).unwrap();
    let o = KnoxOptions {
        distance_m: 0.4,
        days: 3.0,
        n_perm: 9999,
        seed: 11,
        ..Default::default()
    };
    let r = KnoxJob::new(&ev, &o).unwrap().finish();
    let exact: f64 = 1272.0 / 5040.0;
    let se = (exact * (1.0 - exact) / 9999.0).sqrt();
    assert!(
        (r.p_value - exact).abs() < 4.0 * se,
        "{} vs {exact}",
        r.p_value
    );
    // Poisson p of the same numbers: P(Poisson(8/3) ≥ 4) = 0.278573 (scipy).
    assert!((r.p_poisson - 0.278573).abs() < 5e-7, "{}", r.p_poisson);
}

/// K7 cell (0.2, 0.4] × (1, 3]: O = 1, and the mean over all 5040
/// permutations equals n_s,a·n_t,b/N = 0.952381.
#[test]
fn k7_cell_mean_by_enumeration() {
    let (x, y, t) = k7();
    let bands = Bands {
        same_location: false,
        space_edges: vec![0.2, 0.4],
        time_edges: vec![1.0, 3.0],
    };
    let e = PairEngine::new(&x, &y, &t, bands).unwrap();
    let cell = 2 + 1; // distance band 1, time band 1
    assert_eq!(e.observed()[cell], 1);
    let mut sum = [0u64; 4];
    for p in all_permutations(7) {
        let tp: Vec<f64> = p.iter().map(|&k| t[k]).collect();
        for (s, v) in sum.iter_mut().zip(e.table_for(&tp)) {
            *s += v as u64;
        }
    }
    let ex = e.expected();
    for c in 0..4 {
        assert!((sum[c] as f64 / 5040.0 - ex[c]).abs() < 1e-12, "cell {c}");
    }
    assert!((ex[cell] - 0.952381).abs() < 5e-7, "{}", ex[cell]);
}

/// With no interaction (times drawn independently of places), a test at
/// α = 0.05 must reject in about 5 % of data sets: over 300 seeded data sets
/// the number of rejections lies in the central 99 % binomial(300, 0.05)
/// interval, computed here from the binomial probabilities. m = 99 makes
/// α = 0.05 an attainable level (5/100).
#[test]
fn calibrated_under_no_interaction() {
    use rand::{RngExt, SeedableRng};
    let datasets = 300usize;
    let (mut rej_table, mut rej_knox) = (0usize, 0usize);
    for s in 0..datasets as u64 {
        let mut rng = rand_pcg::Pcg64Mcg::seed_from_u64(1000 + s);
        let n = 100;
        let x: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..1000.0)).collect();
        let y: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..1000.0)).collect();
        let t: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..100.0)).collect();
        let ev = TimedEvents::from_xyt(x, y, t).unwrap();
        let nr = NearRepeatOptions {
            band_m: 50.0,
            max_distance_m: 200.0,
            band_days: 5.0,
            max_days: 20.0,
            same_location: false,
            n_perm: 99,
            seed: s,
            ..Default::default()
        };
        let r = NearRepeatJob::new(&ev, &nr).unwrap().finish();
        rej_table += usize::from(r.global.p_value <= 0.05);
        let ko = KnoxOptions {
            distance_m: 150.0,
            days: 10.0,
            n_perm: 99,
            seed: s,
            ..Default::default()
        };
        let k = KnoxJob::new(&ev, &ko).unwrap().finish();
        rej_knox += usize::from(k.p_value <= 0.05);
    }
    let (lo, hi) = binomial_interval(datasets, 0.05, 0.99);
    eprintln!(
        "rejections: table {rej_table}, Knox {rej_knox} of {datasets}; 99 % interval [{lo}, {hi}]"
    );
    assert!(
        (lo..=hi).contains(&rej_table),
        "table test rejected {rej_table} of {datasets}, outside [{lo}, {hi}]"
    );
    assert!(
        (lo..=hi).contains(&rej_knox),
        "Knox rejected {rej_knox} of {datasets}, outside [{lo}, {hi}]"
    );
}

/// Central interval of Binomial(n, p) holding at least `level`.
fn binomial_interval(n: usize, p: f64, level: f64) -> (usize, usize) {
    let mut pmf = vec![0.0f64; n + 1];
    let mut lg = 0.0f64; // ln C(n, k)
    for (k, v) in pmf.iter_mut().enumerate() {
        if k > 0 {
            lg += ((n - k + 1) as f64).ln() - (k as f64).ln();
        }
        *v = (lg + k as f64 * p.ln() + (n - k) as f64 * (1.0 - p).ln()).exp();
    }
    let tail = (1.0 - level) / 2.0;
    let (mut lo, mut acc) = (0, 0.0);
    while acc + pmf[lo] <= tail {
        acc += pmf[lo];
        lo += 1;
    }
    let (mut hi, mut acc) = (n, 0.0);
    while acc + pmf[hi] <= tail {
        acc += pmf[hi];
        hi -= 1;
    }
    (lo, hi)
}

fn demo_projected() -> TimedEvents {
    let cases = read_points(
        include_bytes!("../demo-data/cases-projected.csv"),
        &ReadOptions::default(),
    )
    .unwrap();
    let study = Study::build(&cases, None, None, AreaFallback::ConvexHull).unwrap();
    TimedEvents::from_study(&study, UncertainTimes::Midpoint, 7.0, 3).unwrap()
}

/// demo-data/README.md: in the local grid, 323 pairs of events are within
/// 100 m and 7 days of each other (12 planted near repeats, 286 inside the
/// planted clusters, 25 others); a Knox test there finds the excess.
#[test]
fn demo_knox_finds_the_planted_pairs() {
    let ev = demo_projected();
    assert_eq!(ev.len(), 1500);
    let o = KnoxOptions {
        distance_m: 100.0,
        days: 7.0,
        n_perm: 99,
        seed: 1,
        ..Default::default()
    };
    let r = KnoxJob::new(&ev, &o).unwrap().finish();
    assert_eq!(r.x, 323);
    assert!(r.ratio.unwrap() > 2.0, "{:?}", r.ratio);
    assert_eq!(r.p_value, 0.01);
}

/// The table on the demo: the cells near the origin are raised (planted
/// clusters confined to a few weeks), and the verdict says how far.
#[test]
fn demo_table_raised_near_the_origin() {
    let ev = demo_projected();
    let o = NearRepeatOptions {
        band_m: 100.0,
        max_distance_m: 400.0,
        band_days: 7.0,
        max_days: 28.0,
        n_perm: 99,
        seed: 2,
        ..Default::default()
    };
    let r = NearRepeatJob::new(&ev, &o).unwrap().finish();
    assert_eq!(r.outcome, NearRepeatOutcome::Raised);
    assert!(r.global.p_value <= 0.01 + 1e-12);
    let nt = r.time_bands.len();
    // Distance band 1 (0–100 m) × time band 0 (0–7 days).
    let c = &r.cells[nt];
    assert!(c.raised && c.ratio.unwrap() > 2.0, "{c:?}");
    assert!(
        r.reach.as_deref().unwrap_or("").contains("within"),
        "{}",
        r.verdict
    );
    // The 5 planted coincident pairs are 30–150 days apart: the same-location
    // band holds 5 pairs, none within 28 days.
    assert_eq!(r.space_bands[0].pairs, 5);
    assert!(r.cells[..nt].iter().all(|c| c.observed == 0));
}
