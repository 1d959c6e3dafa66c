//! The grid (binned) estimator of K, L and g (src/distance/binned.rs)
//! against the exact translation estimator, its mean under CSR, and the
//! level and power of the envelope test run with it.
//!
//! Sources: the translation estimator (Ohser & Stoyan 1981) as computed by
//! `distance_functions` (itself checked against the docs/methods.md F12
//! table and shapely in tests/distance.rs); E K̂(r) = πr² under binomial CSR
//! for the translation estimator with the n(n−1) normalisation
//! (docs/methods.md#csr [derived]); the exact level of a Monte Carlo test
//! with α(m + 1) an integer (Besag & Diggle 1977) and the binomial 99 %
//! interval computed here from the binomial distribution.

mod common;
use common::{mean_se, thomas_for_power, wh};

use cloister::distance::binned::{
    binned_functions, STATED_FROM_CELLS, STATED_G_RELATIVE_ERROR, STATED_RELATIVE_ERROR,
};
use cloister::distance::{
    distance_functions, simulate_csr, simulate_thomas, Correction, EnvelopeJob, EnvelopeOptions,
    EnvelopeParams, EnvelopeSimulator, Estimator, FunctionParams, Outcome, SummaryFunction,
    ThomasParams,
};
use cloister::params::Params;
use cloister::study::Pattern;
use cloister::window::{Window, WindowOrigin};
use std::f64::consts::PI;

/// An invented polygon (a square with one corner cut) with a triangular
/// hole, side `s` m.
fn with_hole(s: f64) -> Window {
    Window::from_polygons(
        vec![vec![
            vec![[0.0, 0.0], [s, 0.0], [s, 0.7 * s], [0.6 * s, s], [0.0, s]],
            vec![[0.4 * s, 0.4 * s], [0.55 * s, 0.4 * s], [0.5 * s, 0.6 * s]],
        ]],
        WindowOrigin::File,
    )
    .unwrap()
}

fn translation(r_max: f64, n_steps: usize) -> FunctionParams {
    FunctionParams {
        r_max: Some(r_max),
        n_steps,
        correction: Correction::Translation,
        ..Default::default()
    }
}

/// Largest relative error of K, L and g (g from the kernel half-width on)
/// at distances of at least `from_cells` cells.
fn max_errors(p: &Pattern, w: &Window, from_cells: f64) -> (f64, f64, f64) {
    let params = translation(250.0, 50);
    let exact = distance_functions(p, w, &params).unwrap();
    let b = binned_functions(p, w, &params, cloister::distance::binned::FFT_SIDE).unwrap();
    assert_eq!(exact.r, b.r);
    let rel = |a: f64, e: f64| ((a - e) / e).abs();
    let (mut k, mut l, mut g) = (0.0f64, 0.0f64, 0.0f64);
    let mut checked = 0;
    for i in 1..b.r.len() {
        if b.r[i] < from_cells * b.cell_m {
            continue;
        }
        checked += 1;
        k = k.max(rel(b.k[i], exact.k[i]));
        l = l.max(rel(b.l[i], exact.l[i]));
        if b.r[i] >= exact.bandwidth_m {
            g = g.max(rel(b.pcf[i], exact.pcf[i]));
        }
    }
    assert!(checked >= 40, "{checked} distances checked");
    (k, l, g)
}

/// 10,000 seeded CSR events and a seeded Thomas pattern (about 8,500
/// events) in a polygon with a hole: the binned K and L within the stated
/// relative error (1e-3) and g within 1e-2 of the exact translation
/// estimator at distances of at least 20 cells (about 25 m here; r up to
/// 250 m). Removing the self pairs or dividing by the set covariance wrongly
/// moves K by several per cent at 25 m, far outside this.
#[test]
fn binned_matches_exact_translation_estimator() {
    let w = with_hole(1000.0);
    let csr = simulate_csr(&w, 10_000, 7).unwrap();
    let thomas = simulate_thomas(
        &w,
        ThomasParams {
            kappa: 100.0 / w.area(),
            mu: 100.0,
            sigma: 15.0,
        },
        8,
    )
    .unwrap();
    for (name, p) in [("csr", &csr), ("thomas", &thomas)] {
        let (k, l, g) = max_errors(p, &w, STATED_FROM_CELLS);
        assert!(k < STATED_RELATIVE_ERROR, "{name}: K {k}");
        assert!(l < STATED_RELATIVE_ERROR, "{name}: L {l}");
        assert!(g < STATED_G_RELATIVE_ERROR, "{name}: g {g}");
    }
}

/// Binomial CSR, n = 50 in WH: the mean of the binned K̂ over 600 seeded
/// patterns is πr² within 4 Monte Carlo standard errors at r = 1 and 2.5
/// (docs/methods.md#conventions rule 2b: 4 SE).
#[test]
fn binned_k_mean_under_csr_is_pi_r2() {
    let w = wh();
    let mut params = translation(2.5, 10);
    params.weight_cap = 1e9;
    let rs = [1.0, 2.5];
    let mut at = [Vec::new(), Vec::new()];
    for j in 0..600 {
        let p = simulate_csr(&w, 50, 5_000 + j).unwrap();
        let b = binned_functions(&p, &w, &params, 128).unwrap();
        for (i, r) in rs.iter().enumerate() {
            let k = b.r.iter().position(|x| (x - r).abs() < 1e-12).unwrap();
            at[i].push(b.k[k]);
        }
    }
    for (i, r) in rs.iter().enumerate() {
        let (mean, se) = mean_se(&at[i]);
        assert!((mean - PI * r * r).abs() < 4.0 * se, "r={r}: {mean} ± {se}");
    }
}

fn binned_params(function: SummaryFunction, n_sim: usize, seed: u64) -> EnvelopeParams {
    EnvelopeParams {
        function,
        n_sim,
        seed,
        estimator: Estimator::Binned,
        binned_fft_side: 64,
        functions: FunctionParams {
            correction: Correction::Translation,
            ..Default::default()
        },
        ..Default::default()
    }
}

/// ln C(n, k) p^k (1 − p)^(n−k), summed into the CDF; the 99 % interval
/// as scipy.stats.binom.interval defines it: [ppf(0.005), ppf(0.995)],
/// ppf(q) the least k with CDF(k) ≥ q.
fn binomial_interval(n: u64, p: f64, level: f64) -> (usize, usize) {
    let mut cdf = Vec::new();
    let mut ln_c = 0.0f64;
    let mut s = 0.0;
    for k in 0..=n {
        if k > 0 {
            ln_c += ((n - k + 1) as f64).ln() - (k as f64).ln();
        }
        s += (ln_c + k as f64 * p.ln() + (n - k) as f64 * (1.0 - p).ln()).exp();
        cdf.push(s);
    }
    let q = (1.0 - level) / 2.0;
    let ppf = |q: f64| cdf.iter().position(|&c| c >= q).unwrap_or(n as usize);
    (ppf(q), ppf(1.0 - q))
}

/// Level: 200 seeded CSR datasets of 60 events in WH, L with the grid
/// estimator, 19 simulations (α(m + 1) = 1: an exact Monte Carlo test,
/// Besag & Diggle 1977): the rejections at α = 0.05 lie inside the
/// binomial 99 % interval for 200 trials at 0.05, computed here (it is
/// [3, 19], as scipy.stats.binom.interval(0.99, 200, 0.05) gives in
/// tests/reference/clustering_reference.json).
#[test]
fn binned_global_test_level_under_csr() {
    let (lo, hi) = binomial_interval(200, 0.05, 0.99);
    assert_eq!((lo, hi), (3, 19));
    let w = wh();
    let rejections = (0..200u64)
        .filter(|j| {
            let p = simulate_csr(&w, 60, 70_000 + j).unwrap();
            let res = EnvelopeJob::new(&p, &w, &binned_params(SummaryFunction::L, 19, 1 + j))
                .unwrap()
                .finish();
            assert_eq!(res.estimator, Estimator::Binned);
            res.mad.rejects
        })
        .count();
    assert!((lo..=hi).contains(&rejections), "{rejections} of 200");
}

/// Power: 20 seeded Thomas patterns (κ = 10, μ = 8, σ = 0.02 in the unit
/// square, about 80 events), L with the grid estimator and 39 simulations:
/// rejected and called clustered in at least 18 of 20 (the exact estimator
/// does so in ≥ 95 of 100, tests/distance.rs).
#[test]
fn binned_global_test_rejects_thomas() {
    let w = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
    let hits = (0..20u64)
        .filter(|j| {
            let p = thomas_for_power(3_000 + j);
            let res = EnvelopeJob::new(&p, &w, &binned_params(SummaryFunction::L, 39, 7 + j))
                .unwrap()
                .finish();
            res.mad.rejects && res.verdict.outcome == Outcome::Clustered
        })
        .count();
    assert!(hits >= 18, "{hits} of 20");
}

/// A run split over helpers (share → simulator → curves added in order)
/// equals the one-worker run, for K, L and g with the grid estimator.
#[test]
fn binned_split_run_equals_one_worker_run() {
    let w = wh();
    let p = simulate_csr(&w, 200, 3).unwrap();
    for f in [
        SummaryFunction::K,
        SummaryFunction::L,
        SummaryFunction::PairCorrelation,
    ] {
        let params = binned_params(f, 9, 5);
        let one = EnvelopeJob::new(&p, &w, &params).unwrap().finish();
        let mut job = EnvelopeJob::new(&p, &w, &params).unwrap();
        let share = job.share();
        assert_eq!(share.params.estimator, Estimator::Binned);
        let helper = EnvelopeSimulator::new(&share).unwrap();
        for (a, b) in [(0, 4), (4, 9)] {
            let curves = helper.simulate_range(a, b);
            job.add_simulated(a, &curves).unwrap();
        }
        let split = job.finish();
        assert_eq!(split.estimator, Estimator::Binned);
        assert_eq!(
            format!("{:?}", (&one.global_lo, &one.mad.statistic, &one.sim_mean)),
            format!(
                "{:?}",
                (&split.global_lo, &split.mad.statistic, &split.sim_mean)
            ),
            "{f:?}"
        );
    }
}

/// `auto`: a small pattern is counted exactly; a large one (30,000 events,
/// about 9·10⁷ pairs within a quarter of the side, above the threshold of
/// 6·10⁷) on the grid, with the translation correction in place of the
/// isotropic one, and the result says so.
#[test]
fn auto_chooses_by_pair_count() {
    let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
    let small = simulate_csr(&w, 300, 1).unwrap();
    let mut params = EnvelopeParams {
        n_sim: 1,
        binned_fft_side: 64,
        ..Default::default()
    };
    let res = EnvelopeJob::new(&small, &w, &params).unwrap().finish();
    assert_eq!(res.estimator, Estimator::Exact);
    assert_eq!(res.correction, Correction::Isotropic);
    assert!(
        res.estimator_reason.contains("automatic"),
        "{}",
        res.estimator_reason
    );
    assert!(res.cell_m.is_none() && res.binned_relative_error.is_none());
    let large = simulate_csr(&w, 30_000, 2).unwrap();
    let res = EnvelopeJob::new(&large, &w, &params).unwrap().finish();
    assert_eq!(res.estimator, Estimator::Binned);
    assert_eq!(res.correction, Correction::Translation);
    assert!(
        res.estimator_reason.contains("automatic") && res.estimator_reason.contains("translation"),
        "{}",
        res.estimator_reason
    );
    assert!(res.cell_m.unwrap() > 0.0);
    assert_eq!(res.binned_relative_error, Some(STATED_RELATIVE_ERROR));
    // G never uses the grid, whatever the size.
    params.function = SummaryFunction::NearestNeighbour;
    let res = EnvelopeJob::new(&large, &w, &params).unwrap().finish();
    assert_eq!(res.estimator, Estimator::Exact);
}

/// `binned` with another correction, or for G/F/J, is refused with a
/// message that says what to change.
#[test]
fn binned_refuses_other_corrections_and_functions() {
    let o = EnvelopeOptions {
        estimator: Estimator::Binned,
        ..Default::default()
    };
    let e = o.validate().unwrap_err().to_string();
    assert!(e.contains("translation"), "{e}");
    let o = EnvelopeOptions {
        estimator: Estimator::Binned,
        correction: Correction::Translation,
        function: SummaryFunction::EmptySpace,
        ..Default::default()
    };
    let e = o.validate().unwrap_err().to_string();
    assert!(e.contains("K, L and g"), "{e}");
    let o = EnvelopeOptions {
        estimator: Estimator::Binned,
        correction: Correction::Translation,
        ..Default::default()
    };
    o.validate().unwrap();
}
