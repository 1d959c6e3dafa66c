//! Hotspot benchmarks: the waits a user sees on the hotspot pages.
//!
//! `cargo run --release --example bench_hotspots [-- quick]`
//!
//! Invented data (seeded): events in a 20 km × 15 km rectangle with a 3 km
//! square hole (a lake), 30 % of them in five Gaussian clumps, the rest
//! uniform. Timings are wall-clock, one run each after a warm-up of the
//! smaller cases. Prints one JSON line per task, writes the events used for
//! the surface and DBSCAN runs to `target/bench_hotspots_events.csv` and the
//! figures to `target/bench_hotspots.json`, which
//! `bench/hotspots_vs_python.py` reads to print ratios.

use cloister::clusters::{dbscan_xy, k_distance_plot, DbscanOptions};
use cloister::intensity::bandwidth;
use cloister::intensity::*;
use cloister::rng::{rng_from_seed, Rng};
use cloister::scan::{ScanCentres, ScanJob, ScanOptions};
use cloister::window::{Window, WindowOrigin};
use rand::RngExt;
use std::fmt::Write as _;
use std::time::Instant;

fn study_area() -> Window {
    Window::from_polygons(
        vec![vec![
            vec![
                [0.0, 0.0],
                [20_000.0, 0.0],
                [20_000.0, 15_000.0],
                [0.0, 15_000.0],
            ],
            vec![
                [8000.0, 6000.0],
                [11_000.0, 6000.0],
                [11_000.0, 9000.0],
                [8000.0, 9000.0],
            ],
        ]],
        WindowOrigin::File,
    )
    .unwrap()
}

fn gauss(rng: &mut Rng) -> f64 {
    let u1 = 1.0 - rng.random::<f64>();
    let u2 = rng.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
}

fn events(n: usize, seed: u64, region: &Window) -> (Vec<f64>, Vec<f64>) {
    let mut rng = rng_from_seed(seed);
    let centres = [
        (3000.0, 3000.0, 300.0),
        (15_000.0, 4000.0, 600.0),
        (6000.0, 12_000.0, 400.0),
        (17_000.0, 12_500.0, 250.0),
        (12_000.0, 10_500.0, 800.0),
    ];
    let n_clumped = n * 3 / 10;
    let (mut x, mut y) = region.sample_uniform(n - n_clumped, &mut rng);
    while x.len() < n {
        let c = centres[x.len() % centres.len()];
        let (px, py) = (c.0 + c.2 * gauss(&mut rng), c.1 + c.2 * gauss(&mut rng));
        if region.contains(px, py) {
            x.push(px);
            y.push(py);
        }
    }
    (x, y)
}

fn secs(t: Instant) -> f64 {
    t.elapsed().as_secs_f64()
}

fn main() {
    let quick = std::env::args().any(|a| a == "quick");
    let region = study_area();
    let mut out: Vec<String> = Vec::new();
    let mut emit = |line: String| {
        println!("{line}");
        out.push(line);
    };

    // 1. Surface: 100 000 events onto 512 × 512, fixed bandwidth.
    let n_surf = if quick { 10_000 } else { 100_000 };
    let (x, y) = events(n_surf, 1, &region);
    let mut csv = String::from("x,y\n");
    for i in 0..x.len() {
        let _ = writeln!(csv, "{:.3},{:.3}", x[i], y[i]);
    }
    std::fs::write("target/bench_hotspots_events.csv", csv).unwrap();
    let h = 150.0;
    for (kernel, hk) in [(Kernel::Gaussian, h), (Kernel::Quartic, h * 2.828_427)] {
        for edge in [EdgeCorrection::None, EdgeCorrection::JonesDiggle] {
            let o = SurfaceOptions {
                kernel,
                bandwidth: BandwidthOptions {
                    method: BandwidthMethod::Fixed,
                    fixed_m: Some(hk),
                    ..Default::default()
                },
                edge,
                grid: GridOptions {
                    cells_long_side: 512,
                    cell_m: None,
                },
                ..Default::default()
            };
            let t = Instant::now();
            let s = kernel_surface_in(&x, &y, None, &region, &o).unwrap();
            let dt = secs(t);
            emit(format!(
                "{{\"task\":\"surface\",\"kernel\":\"{kernel:?}\",\"edge\":\"{edge:?}\",\"n\":{n_surf},\"nx\":{},\"ny\":{},\"bandwidth_m\":{hk:.1},\"seconds\":{dt:.4},\"integral\":{:.2}}}",
                s.grid.nx, s.grid.ny, s.integral_events
            ));
            if edge == EdgeCorrection::None {
                // Approximation error of the binned path vs exact evaluation.
                let t = Instant::now();
                let exact = kernel_surface_in(
                    &x,
                    &y,
                    None,
                    &region,
                    &SurfaceOptions {
                        evaluation: Evaluation::Exact,
                        ..o.clone()
                    },
                )
                .unwrap();
                let dte = secs(t);
                let peak = exact.max_per_km2;
                let (mut worst, mut sum_abs, mut sum) = (0.0f64, 0.0, 0.0);
                for (a, b) in s.grid.values.iter().zip(&exact.grid.values) {
                    worst = worst.max((a - b).abs());
                    sum_abs += (a - b).abs();
                    sum += b;
                }
                emit(format!(
                    "{{\"task\":\"surface_error\",\"kernel\":\"{kernel:?}\",\"exact_seconds\":{dte:.3},\"max_abs_error_of_peak\":{:.2e},\"l1_relative_error\":{:.2e}}}",
                    worst / peak,
                    sum_abs / sum
                ));
            }
        }
    }

    // 2. LCV over 20 bandwidths, 10 000 events.
    let n_lcv = if quick { 2000 } else { 10_000 };
    let (lx, ly) = events(n_lcv, 2, &region);
    let h0 = bandwidth::normal_reference(&lx, &ly).unwrap();
    let hs = bandwidth::ladder(0.1 * h0, 2.0 * h0, 20);
    let g = GridOptions::default();
    for edge in [EdgeCorrection::JonesDiggle, EdgeCorrection::None] {
        let t = Instant::now();
        let c =
            bandwidth::likelihood_cv(&lx, &ly, &region, Kernel::Gaussian, edge, &hs, &g).unwrap();
        emit(format!(
            "{{\"task\":\"lcv\",\"edge\":\"{edge:?}\",\"n\":{n_lcv},\"candidates\":20,\"seconds\":{:.4},\"chosen_m\":{:.1},\"normal_reference_m\":{h0:.1}}}",
            secs(t),
            c.bandwidth_m.unwrap_or(f64::NAN)
        ));
    }
    let t = Instant::now();
    let c = bandwidth::diggle_mse(&lx, &ly, &region, &hs, &g).unwrap();
    emit(format!(
        "{{\"task\":\"diggle_mse\",\"n\":{n_lcv},\"candidates\":20,\"seconds\":{:.4},\"chosen_m\":{}}}",
        secs(t),
        c.bandwidth_m.map_or("null".into(), |v| format!("{v:.1}"))
    ));

    // 3. DBSCAN on the surface events.
    let o = DbscanOptions {
        eps_m: 100.0,
        min_samples: 10,
        use_weights: false,
    };
    let t = Instant::now();
    let r = dbscan_xy(&x, &y, None, &o).unwrap();
    emit(format!(
        "{{\"task\":\"dbscan\",\"n\":{n_surf},\"eps_m\":100,\"min_samples\":10,\"seconds\":{:.4},\"clusters\":{},\"noise\":{}}}",
        secs(t),
        r.n_clusters,
        r.noise
    ));
    let t = Instant::now();
    let k = k_distance_plot(&x, &y, 10).unwrap();
    emit(format!(
        "{{\"task\":\"k_distance\",\"n\":{n_surf},\"k\":10,\"seconds\":{:.4},\"knee_m\":{:.1}}}",
        secs(t),
        k.knee_eps_m.unwrap_or(f64::NAN)
    ));

    // 4. Scan: 5 000 events, 999 replicates.
    let n_scan = if quick { 1000 } else { 5000 };
    let n_sim = if quick { 99 } else { 999 };
    let (sx, sy) = events(n_scan, 3, &region);
    let o = ScanOptions {
        n_sim,
        ..Default::default()
    };
    let t = Instant::now();
    let mut job = ScanJob::from_points(&sx, &sy, None, &region, &o).unwrap();
    let prep = secs(t);
    while job.progress().done < n_sim {
        job.run_batch(50);
    }
    let res = job.finish();
    emit(format!(
        "{{\"task\":\"scan_poisson_area\",\"n\":{n_scan},\"n_sim\":{n_sim},\"cells_long_side\":40,\"regions\":{},\"windows\":{},\"prepare_seconds\":{prep:.4},\"seconds\":{:.4},\"p\":{}}}",
        res.n_regions,
        res.n_windows,
        secs(t),
        res.p_value
    ));
    // Bernoulli: half the events as cases, half as controls, two ways.
    let half = n_scan / 2;
    for centres in [ScanCentres::Grid, ScanCentres::Events] {
        let o = ScanOptions {
            n_sim,
            centres,
            ..Default::default()
        };
        let t = Instant::now();
        let mut job = ScanJob::from_points(
            &sx[..half],
            &sy[..half],
            Some((&sx[half..], &sy[half..])),
            &region,
            &o,
        )
        .unwrap();
        let prep = secs(t);
        while job.progress().done < n_sim {
            job.run_batch(50);
        }
        let res = job.finish();
        emit(format!(
            "{{\"task\":\"scan_bernoulli\",\"centres\":\"{centres:?}\",\"cases\":{half},\"controls\":{},\"n_sim\":{n_sim},\"regions\":{},\"windows\":{},\"prepare_seconds\":{prep:.4},\"seconds\":{:.4},\"p\":{}}}",
            n_scan - half,
            res.n_regions,
            res.n_windows,
            secs(t),
            res.p_value
        ));
    }
    std::fs::write(
        "target/bench_hotspots.json",
        format!("[{}]\n", out.join(",\n")),
    )
    .unwrap();
}
