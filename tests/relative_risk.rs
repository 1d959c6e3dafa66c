//! Tests of src/risk/relative_risk.rs: the kernel relative-risk surface.
//!
//! * against numpy/scipy (`tests/reference/relrisk_reference.py`, its JSON
//!   committed beside it): the log ratio of two Gaussian kernel densities at
//!   a common bandwidth, each normalised over the study area, without and
//!   with the uniform edge correction;
//! * the uniform correction cancels in the ratio up to the normalising
//!   constants (a property of the estimator, docs/methods.md);
//! * the pointwise and global p-values are rank p-values
//!   (1 + #{sim ≥ obs})/(m + 1), reproducible by seed and independent of
//!   how the run is split into batches;
//! * on the invented demo town the raised-risk contour surrounds each
//!   planted cluster and not the dense old town (demo-data/planted-truth.json).

mod common;
use cloister::intensity::EdgeCorrection;
use cloister::risk::relative_risk::class;
use cloister::risk::{RiskBandwidth, RiskSurfaceJob, RiskSurfaceOptions};
use cloister::window::Window;
use common::nums;
use serde_json::Value;

fn reference() -> Value {
    serde_json::from_str(include_str!("reference/relrisk_reference.json")).unwrap()
}

fn xy(v: &Value) -> (Vec<f64>, Vec<f64>) {
    let a = v.as_array().unwrap();
    (
        a.iter().map(|p| p[0].as_f64().unwrap()).collect(),
        a.iter().map(|p| p[1].as_f64().unwrap()).collect(),
    )
}

fn reference_job(edge: EdgeCorrection) -> (RiskSurfaceJob, Value) {
    let r = reference();
    let w = nums(&r["window"]);
    let window = Window::rectangle(w[0], w[1], w[2], w[3]).unwrap();
    let (cx, cy) = xy(&r["cases"]);
    let (kx, ky) = xy(&r["controls"]);
    let o = RiskSurfaceOptions {
        method: RiskBandwidth::Fixed,
        fixed_m: r["bandwidth_m"].as_f64(),
        cells: r["cells"].as_u64().unwrap() as usize,
        edge,
        n_sim: 1,
        ..Default::default()
    };
    let job = RiskSurfaceJob::new((&cx, &cy), (&kx, &ky), None, &window, &o).unwrap();
    (job, r)
}

/// Observed ρ̂ on the inner grid (NaN where not estimated).
fn rho_grid(job: &RiskSurfaceJob, n: usize) -> Vec<f64> {
    let mut g = vec![f64::NAN; n];
    for (k, v) in job.estimated_cells().iter().zip(job.observed_log_rr()) {
        g[*k] = *v;
    }
    g
}

/// Largest |ours − reference| over the reference cells that we estimate,
/// over all of them and over those with a reference risk ratio between
/// e^−1.5 and e^1.5 (0.22 to 4.5), and how many cells were compared.
fn worst(edge: EdgeCorrection, key: &str) -> (f64, f64, usize) {
    let (job, r) = reference_job(edge);
    let n = r["cells"].as_u64().unwrap() as usize;
    let g = rho_grid(&job, n * n);
    let want = nums(&r[key]);
    let idx = r["cell_index"].as_array().unwrap();
    let mut worst = 0.0f64;
    let mut core = 0.0f64;
    let mut used = 0;
    for (k, w) in idx.iter().zip(&want) {
        let v = g[k.as_u64().unwrap() as usize];
        if v.is_nan() {
            continue;
        }
        used += 1;
        worst = worst.max((v - w).abs());
        if w.abs() <= 1.5 {
            core = core.max((v - w).abs());
        }
    }
    (worst, core, used)
}

#[test]
fn log_ratio_without_edge_correction_matches_scipy() {
    // Reference: relrisk_reference.py, "none" (scipy.stats.multivariate_normal,
    // exact normalising integrals via scipy.stats.norm.cdf). Ours bins the
    // points linearly on 20 m cells (h = 5 cells), which widens each kernel
    // slightly (by about cell²/6 in variance per axis), so the error grows in
    // the tails of the densities, where ρ̂ is extreme; and normalises by the
    // midpoint rule. Tolerances: 0.02 in ln(ratio) (2 % in the ratio) where
    // the reference ratio is between 0.22 and 4.5, 0.04 everywhere
    // estimated (measured when written: 0.0147 and 0.0288; 0.0145 and
    // 0.0286 with the uniform correction).
    let (w, core, used) = worst(EdgeCorrection::None, "rho_none");
    assert!(used > 500, "only {used} of 625 reference cells estimated");
    assert!(core < 0.02, "worst |Δρ| where |ρ| ≤ 1.5: {core}");
    assert!(w < 0.04, "worst |Δρ| = {w}");
}

#[test]
fn log_ratio_with_uniform_correction_matches_scipy() {
    // Reference: relrisk_reference.py, "uniform" (exact e(u) for the square,
    // integral by the midpoint rule). Ours: e(u) from the raster mask.
    // Tolerances as above.
    let (w, core, used) = worst(EdgeCorrection::Uniform, "rho_uniform");
    assert!(used > 500, "only {used} of 625 reference cells estimated");
    assert!(core < 0.02, "worst |Δρ| where |ρ| ≤ 1.5: {core}");
    assert!(w < 0.04, "worst |Δρ| = {w}");
}

#[test]
fn uniform_correction_cancels_up_to_the_normalising_constants() {
    // ρ̂_U(x) − ρ̂_none(x) = ln(S₁/S₁ᵤ) − ln(S₀/S₀ᵤ), the same at every cell
    // (docs/methods.md, derived from the definitions).
    let (a, r) = reference_job(EdgeCorrection::Uniform);
    let (b, _) = reference_job(EdgeCorrection::None);
    let n = r["cells"].as_u64().unwrap() as usize;
    let (ga, gb) = (rho_grid(&a, n * n), rho_grid(&b, n * n));
    let diffs: Vec<f64> = ga
        .iter()
        .zip(&gb)
        .filter(|(x, y)| x.is_finite() && y.is_finite())
        .map(|(x, y)| x - y)
        .collect();
    assert!(diffs.len() > 2000);
    let (lo, hi) = diffs
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), d| {
            (l.min(*d), h.max(*d))
        });
    assert!(hi - lo < 1e-9, "difference varies by {}", hi - lo);
    // And the correction does change the surface (the constant is not 0 here,
    // as the cases and controls lose different shares at the edge).
    assert!(lo.abs() > 1e-4, "constant {lo}");
    // Jones–Diggle weighs each point by 1/e(x_i): it does not cancel.
    let (c, _) = reference_job(EdgeCorrection::JonesDiggle);
    let gc = rho_grid(&c, n * n);
    let spread = gc
        .iter()
        .zip(&gb)
        .filter(|(x, y)| x.is_finite() && y.is_finite())
        .map(|(x, y)| x - y)
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), d| {
            (l.min(d), h.max(d))
        });
    assert!(spread.1 - spread.0 > 1e-3);
}

fn small_job(seed: u64, n_sim: usize) -> RiskSurfaceJob {
    let (job, _) = {
        let r = reference();
        let w = nums(&r["window"]);
        let window = Window::rectangle(w[0], w[1], w[2], w[3]).unwrap();
        let (cx, cy) = xy(&r["cases"]);
        let (kx, ky) = xy(&r["controls"]);
        let o = RiskSurfaceOptions {
            method: RiskBandwidth::Fixed,
            fixed_m: Some(120.0),
            cells: 30,
            n_sim,
            seed,
            ..Default::default()
        };
        (
            RiskSurfaceJob::new((&cx, &cy), (&kx, &ky), None, &window, &o).unwrap(),
            r,
        )
    };
    job
}

#[test]
fn p_values_are_rank_p_values_reproducible_by_seed() {
    let m = 39;
    let job = small_job(11, m);
    // Recompute by hand from the labellings: p = (1 + #{ρ*_j ≥ ρ̂})/(m + 1)
    // (Kelsall & Diggle 1995; rank p-value as in Besag & Diggle 1977).
    let obs = job.observed_log_rr().to_vec();
    let cells = job.estimated_cells();
    let sims: Vec<Vec<f64>> = (0..m).map(|j| job.simulated_log_rr(j)).collect();
    let t_obs = job.t_stat();
    let r = job.finish();
    for (c, &k) in cells.iter().enumerate() {
        let ge = sims.iter().filter(|s| s[c] >= obs[c]).count();
        let p = (1.0 + ge as f64) / (m as f64 + 1.0);
        assert_eq!(r.p_value[k], p, "cell {k}");
        assert_eq!(r.class[k], class::ESTIMATED);
    }
    // Global: T = Σ ρ̂² × cell area (km²) and its rank p.
    let a = r.cell_m * r.cell_m / 1e6;
    let t = |v: &[f64]| v.iter().map(|x| x * x).sum::<f64>() * a;
    assert!((t(&obs) - t_obs).abs() < 1e-12 * t_obs.max(1.0));
    assert_eq!(r.t_stat, t_obs);
    let ge = sims.iter().filter(|s| t(s) >= t_obs).count();
    assert_eq!(r.t_at_least_as_large, ge);
    assert_eq!(r.t_p_value, (1.0 + ge as f64) / (m as f64 + 1.0));
    // Not all cells alike: the pattern has a case blob.
    let distinct: std::collections::BTreeSet<u64> =
        cells.iter().map(|&k| r.p_value[k].to_bits()).collect();
    assert!(distinct.len() > 5);

    // Same seed, run in uneven batches: identical. Another seed: different.
    let mut b = small_job(11, m);
    b.run_batch(3);
    b.run_batch(17);
    let rb = b.finish();
    assert_eq!(rb.p_value, r.p_value);
    assert_eq!(rb.t_p_value, r.t_p_value);
    let rc = small_job(12, m).finish();
    assert_ne!(rc.p_value, r.p_value);
    assert_eq!(
        rc.log_rr, r.log_rr,
        "the observed surface does not depend on the seed"
    );
}

mod demo {
    use super::*;
    use cloister::input::{read_area, read_points, ReadOptions};
    use cloister::study::{AreaFallback, Study};

    fn study() -> Study {
        let cases = read_points(
            include_bytes!("../demo-data/cases.csv"),
            &ReadOptions::default(),
        )
        .unwrap();
        let pop = read_points(
            include_bytes!("../demo-data/population.csv"),
            &ReadOptions::default(),
        )
        .unwrap();
        let area = read_area(include_bytes!("../demo-data/town-boundary.geojson"), None).unwrap();
        Study::build(&cases, Some(&area), Some(&pop), AreaFallback::ConvexHull).unwrap()
    }

    fn inside(poly: &[Vec<[f64; 2]>], x: f64, y: f64) -> bool {
        let ring_in = |r: &Vec<[f64; 2]>| {
            let mut c = false;
            let mut j = r.len() - 1;
            for i in 0..r.len() {
                let (a, b) = (r[i], r[j]);
                if (a[1] > y) != (b[1] > y) && x < (b[0] - a[0]) * (y - a[1]) / (b[1] - a[1]) + a[0]
                {
                    c = !c;
                }
                j = i;
            }
            c
        };
        // Surrounded by the outer ring: a centre that falls in a hole of the
        // study area (cluster C sits at the tip of the lake) still counts.
        ring_in(&poly[0])
    }

    #[test]
    fn raised_contours_surround_the_planted_clusters_not_the_old_town() {
        // Planted truth (demo-data/planted-truth.json, demo-data/README.md):
        // clusters A (-32.014409, -41.486510), B (-31.961575, -41.480215),
        // C (-31.984990, -41.514389); the old town, denser because more
        // people live there, centred at (-32.021614, -41.491906) with the
        // same case-to-population ratio as everywhere outside the clusters.
        let truth: Value =
            serde_json::from_str(include_str!("../demo-data/planted-truth.json")).unwrap();
        let s = study();
        let ll = |v: &Value| {
            s.projection.forward(
                v["longitude"].as_f64().unwrap(),
                v["latitude"].as_f64().unwrap(),
            )
        };
        // Each cluster's planted centre, and the mean of its members'
        // positions (cluster C's centre lies at the lake's tip, outside the
        // study area, so its members' mean is what a contour can surround).
        // Case ids HM-0001 … follow the row order of cases.csv.
        let first_row = s.events.row()[0];
        let clusters: Vec<(f64, f64, (f64, f64))> = truth["clusters"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| {
                let (cx, cy) = ll(&c["centre_lonlat"]);
                let ids = c["case_ids"].as_array().unwrap();
                let (mut mx, mut my) = (0.0, 0.0);
                for id in ids {
                    let k: u64 = id.as_str().unwrap()[3..].parse().unwrap();
                    let i = s
                        .events
                        .row()
                        .iter()
                        .position(|&r| r == k - 1 + first_row)
                        .unwrap();
                    mx += s.events.x()[i];
                    my += s.events.y()[i];
                }
                (cx, cy, (mx / ids.len() as f64, my / ids.len() as f64))
            })
            .collect();
        assert_eq!(clusters.len(), 3);
        let old_town = ll(&truth["background"]["old_town_centre_lonlat"]);
        let c = s.controls.as_ref().unwrap();
        // Defaults: likelihood cross-validation of the bandwidth (337 m
        // here), uniform edge correction, 256 cells, 99 labellings.
        let o = RiskSurfaceOptions {
            n_sim: 99,
            seed: 20261203,
            ..Default::default()
        };
        assert_eq!(o.method, RiskBandwidth::LikelihoodCv);
        let job = RiskSurfaceJob::new(
            (s.events.x(), s.events.y()),
            (c.x(), c.y()),
            None,
            &s.window,
            &o,
        )
        .unwrap();
        let r = job.finish();
        let raised = &r.raised.polygons;
        for (k, &(x, y, (mx, my))) in clusters.iter().enumerate() {
            assert!(
                raised.iter().any(|p| inside(p, mx, my)),
                "cluster {k} members' mean ({mx:.0}, {my:.0}) not inside a raised contour; regions {:?}",
                r.raised_regions
            );
            // The planted centre itself where it is more than two grid cells
            // inside the study area (the surface's edge follows the cells).
            let b = s.window.boundary_distance(x, y);
            if s.window.contains(x, y) && b > 2.0 * r.cell_m {
                assert!(
                    raised.iter().any(|p| inside(p, x, y)),
                    "cluster {k} centre ({x:.0}, {y:.0}) not inside a raised contour"
                );
            }
        }
        // The three largest raised places are the three clusters (smaller
        // ones elsewhere are the pointwise chance flags).
        assert!(r.raised_regions.len() >= 3);
        for reg in &r.raised_regions[..3] {
            assert!(
                clusters.iter().any(|c| ((c.2 .0 - reg.centre_x).powi(2)
                    + (c.2 .1 - reg.centre_y).powi(2))
                .sqrt()
                    < 600.0),
                "{reg:?}"
            );
        }
        assert!(
            !raised.iter().any(|p| inside(p, old_town.0, old_town.1)),
            "the old town centre is inside a raised contour"
        );
        assert!(r.t_p_value <= 0.05, "global p {}", r.t_p_value);
        assert!(
            r.verdict.contains("not the same everywhere"),
            "{}",
            r.verdict
        );
    }
}

/// A run rebuilt in a helper from its share (through JSON; the bandwidth
/// chosen by cross-validation passed on as fixed) computes the same
/// labellings as the job; a job fed the pieces in order finishes with the
/// same p-values and global test as one run, for individual controls and
/// for counts; a piece out of order is refused.
#[test]
fn shared_runs_give_the_same_surface() {
    let r = reference();
    let w = nums(&r["window"]);
    let window = Window::rectangle(w[0], w[1], w[2], w[3]).unwrap();
    let (cx, cy) = xy(&r["cases"]);
    let (kx, ky) = xy(&r["controls"]);
    let counts: Vec<f64> = (0..kx.len()).map(|i| (1 + i % 4) as f64).collect();
    for weights in [None, Some(&counts[..])] {
        let o = RiskSurfaceOptions {
            cells: 30,
            n_sim: 39,
            seed: 17,
            ..Default::default()
        };
        assert_eq!(o.method, RiskBandwidth::LikelihoodCv);
        let whole = RiskSurfaceJob::new((&cx, &cy), (&kx, &ky), weights, &window, &o)
            .unwrap()
            .finish();
        let mut job = RiskSurfaceJob::new((&cx, &cy), (&kx, &ky), weights, &window, &o).unwrap();
        let share: cloister::risk::RiskSurfaceShare =
            serde_json::from_str(&serde_json::to_string(&job.share()).unwrap()).unwrap();
        let helper = RiskSurfaceJob::from_share(&share).unwrap();
        assert_eq!(helper.observed_log_rr(), job.observed_log_rr());
        let a = helper.simulate_range(0, 20);
        assert_eq!(a, job.simulate_range(0, 20));
        assert!(job.add_simulated(20, &a).is_err());
        assert_eq!(job.add_simulated(0, &a).unwrap(), 20);
        assert_eq!(
            job.add_simulated(20, &helper.simulate_range(20, 39))
                .unwrap(),
            39
        );
        let fed = job.finish();
        assert_eq!(fed.p_value, whole.p_value);
        assert_eq!(fed.t_p_value, whole.t_p_value);
        assert_eq!(fed.raised_share, whole.raised_share);
        assert_eq!(fed.bandwidth_m, whole.bandwidth_m);
    }
}
