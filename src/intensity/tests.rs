use super::*;
use rand::RngExt;

/// F5 (docs/methods.md#fixtures): five points in the unit square, Gaussian σ = 0.1.
const F5: [(f64, f64); 5] = [
    (0.05, 0.05),
    (0.5, 0.5),
    (0.9, 0.2),
    (0.3, 0.95),
    (0.7, 0.7),
];

fn f5_surface(edge: EdgeCorrection, evaluation: Evaluation) -> IntensitySurface {
    let x: Vec<f64> = F5.iter().map(|p| p.0).collect();
    let y: Vec<f64> = F5.iter().map(|p| p.1).collect();
    let region = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
    // 110 cells: centres at (i + ½)/110, so cell 5 is centred on 0.05.
    let o = SurfaceOptions {
        bandwidth: BandwidthOptions {
            method: BandwidthMethod::Fixed,
            fixed_m: Some(0.1),
            ..Default::default()
        },
        edge,
        evaluation,
        grid: GridOptions {
            cells_long_side: 110,
            cell_m: None,
        },
        ..Default::default()
    };
    kernel_surface_in(&x, &y, None, &region, &o).unwrap()
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

#[test]
fn f5_fixture_integrals_and_values() {
    // docs/methods.md#kernel check values on F5 [C] (methods-checks/part4.py, trapezoid
    // rule on an 801² grid with exact e(u) from normal CDFs):
    //   ∫_W λ̂: raw 3.98814, uniform 4.86796, Jones–Diggle 4.99998 (= n);
    //   λ̂(0.05, 0.05): raw 15.91549, uniform 33.28763, Jones–Diggle 33.28763.
    // Ours uses a 110² midpoint rule and e_h from the cell mask, so we allow
    // 0.2 % (integrals) and 0.3 % (values, dominated by e_h at the corner).
    let cases = [
        (EdgeCorrection::None, 3.98814, 15.91549),
        (EdgeCorrection::Uniform, 4.86796, 33.28763),
        (EdgeCorrection::JonesDiggle, 4.99998, 33.28763),
    ];
    for evaluation in [Evaluation::Exact, Evaluation::Binned] {
        for (edge, integral, value) in cases {
            let s = f5_surface(edge, evaluation);
            let v = s.grid.values[5 * 110 + 5] / PER_KM2;
            let (cx, cy) = s.grid.centre(5, 5);
            assert!((cx - 0.05).abs() < 1e-12 && (cy - 0.05).abs() < 1e-12);
            assert!(
                rel(s.integral_events, integral) < 2e-3,
                "{edge:?} {evaluation:?} integral {} vs {integral}",
                s.integral_events
            );
            assert!(
                rel(v, value) < 3e-3,
                "{edge:?} {evaluation:?} value {v} vs {value}"
            );
        }
    }
}

fn window_with_hole() -> Window {
    // Fixture WH (docs/methods.md#fixtures) scaled to metres: [0, 10 km]² minus [4, 6 km]².
    Window::rectangle_with_hole(
        [0.0, 0.0, 10_000.0, 10_000.0],
        [4000.0, 4000.0, 6000.0, 6000.0],
    )
    .unwrap()
}

#[test]
fn jones_diggle_integrates_to_n_in_a_window_with_a_hole() {
    // docs/methods.md#kernel [D]: ∫_W λ̂_JD = n exactly; on the grid up to quadrature.
    let region = window_with_hole();
    let mut rng = crate::rng::rng_from_seed(21);
    let (x, y) = region.sample_uniform(300, &mut rng);
    for (kernel, h) in [(Kernel::Gaussian, 400.0), (Kernel::Quartic, 1200.0)] {
        for evaluation in [Evaluation::Binned, Evaluation::Exact] {
            let o = SurfaceOptions {
                kernel,
                bandwidth: BandwidthOptions {
                    method: BandwidthMethod::Fixed,
                    fixed_m: Some(h),
                    ..Default::default()
                },
                edge: EdgeCorrection::JonesDiggle,
                evaluation,
                grid: GridOptions {
                    cells_long_side: 200,
                    cell_m: None,
                },
                ..Default::default()
            };
            let s = kernel_surface_in(&x, &y, None, &region, &o).unwrap();
            assert!(
                rel(s.integral_events, 300.0) < 5e-3,
                "{kernel:?} {evaluation:?}: {}",
                s.integral_events
            );
            // Without correction mass is lost through the edges and the hole.
            let raw = kernel_surface_in(
                &x,
                &y,
                None,
                &region,
                &SurfaceOptions {
                    edge: EdgeCorrection::None,
                    ..o.clone()
                },
            )
            .unwrap();
            assert!(raw.integral_events < 290.0);
            // Masked cells (the hole) hold zero.
            let k = 100 * 200 + 100;
            assert!(!s.grid.mask[k] && s.grid.values[k] == 0.0);
        }
    }
}

#[test]
fn binned_matches_exact() {
    // The fast path against the defining sum; this is the figure quoted in
    // the module docs (max error below 1 % of the peak).
    let region = Window::rectangle(0.0, 0.0, 5000.0, 3000.0).unwrap();
    let mut rng = crate::rng::rng_from_seed(8);
    let (x, y) = region.sample_uniform(2000, &mut rng);
    for kernel in [Kernel::Gaussian, Kernel::Quartic] {
        let h = match kernel {
            Kernel::Gaussian => 80.0,
            Kernel::Quartic => 226.0,
        };
        let mk = |evaluation| {
            let o = SurfaceOptions {
                kernel,
                bandwidth: BandwidthOptions {
                    method: BandwidthMethod::Fixed,
                    fixed_m: Some(h),
                    ..Default::default()
                },
                edge: EdgeCorrection::None,
                evaluation,
                grid: GridOptions {
                    cells_long_side: 250,
                    cell_m: None,
                },
                ..Default::default()
            };
            kernel_surface_in(&x, &y, None, &region, &o).unwrap()
        };
        let (a, b) = (mk(Evaluation::Binned), mk(Evaluation::Exact));
        let peak = b.max_per_km2;
        let err = a
            .grid
            .values
            .iter()
            .zip(&b.grid.values)
            .map(|(p, q)| (p - q).abs())
            .fold(0.0, f64::max);
        assert!(
            err / peak < 0.01,
            "{kernel:?}: max error {:.4} of peak",
            err / peak
        );
    }
}

#[test]
fn one_point_peak_and_mass() {
    // docs/methods.md#kernel: one point peaks at 1/(2πh²) and the surface
    // sums (× cell area) to 1 when the window is large.
    let region = Window::rectangle(-5000.0, -5000.0, 5000.0, 5000.0).unwrap();
    let h = 250.0;
    let o = SurfaceOptions {
        bandwidth: BandwidthOptions {
            method: BandwidthMethod::Fixed,
            fixed_m: Some(h),
            ..Default::default()
        },
        edge: EdgeCorrection::None,
        grid: GridOptions {
            cells_long_side: 400,
            cell_m: None,
        },
        ..Default::default()
    };
    // The point sits on a cell centre (cells of 25 m centred on ±12.5 m).
    let s = kernel_surface_in(&[12.5], &[12.5], None, &region, &o).unwrap();
    let peak = 1.0 / (2.0 * std::f64::consts::PI * h * h) * PER_KM2;
    assert!(rel(s.max_per_km2, peak) < 1e-9);
    assert!(rel(s.integral_events, 1.0) < 1e-3);
}

#[test]
fn isopleths_of_a_bivariate_normal() {
    // docs/methods.md#kernel [C]: for N(0, σ²I) the p % isopleth is the circle of radius
    // σ√(−2 ln(1−p)): 50 % → 1.177410σ (area 4.35517σ²), 75 % → 1.665109σ,
    // 95 % → 2.447747σ (area 18.82274σ²); the level is (1−p)·peak.
    let sigma = 100.0;
    let region = Window::rectangle(-1000.0, -1000.0, 1000.0, 1000.0).unwrap();
    let o = SurfaceOptions {
        bandwidth: BandwidthOptions {
            method: BandwidthMethod::Fixed,
            fixed_m: Some(sigma),
            ..Default::default()
        },
        edge: EdgeCorrection::None,
        evaluation: Evaluation::Exact,
        grid: GridOptions {
            cells_long_side: 400,
            cell_m: None,
        },
        ..Default::default()
    };
    let s = kernel_surface_in(&[2.5], &[2.5], None, &region, &o).unwrap();
    let set = isopleth::isopleths(&s.grid, &[0.5, 0.75, 0.95]);
    assert_eq!(set.contours.len(), 3);
    for (c, (p, radius)) in
        set.contours
            .iter()
            .zip([(0.5, 1.177410), (0.75, 1.665109), (0.95, 2.447747)])
    {
        assert_eq!(c.polygons.len(), 1, "one ring at {p}");
        let ring = &c.polygons[0][0];
        assert_eq!(ring.first(), ring.last());
        let r_eq = (c.area_km2 * 1e6 / std::f64::consts::PI).sqrt();
        assert!(rel(r_eq, radius * sigma) < 0.01, "p={p}: radius {r_eq}");
        for q in ring {
            let r = ((q[0] - 2.5).powi(2) + (q[1] - 2.5).powi(2)).sqrt();
            assert!(rel(r, radius * sigma) < 0.02, "vertex at {r}");
        }
        assert!(rel(c.level, (1.0 - p) * s.max_per_km2) < 0.02);
    }
    assert!(rel(set.contours[0].area_km2 * 1e6, 4.35517 * sigma * sigma) < 0.02);
    assert!(rel(set.contours[2].area_km2 * 1e6, 18.82274 * sigma * sigma) < 0.02);
}

#[test]
fn contours_have_holes_and_export_as_geojson() {
    // A ring of events around an empty middle: the low contour is an annulus.
    let region = Window::rectangle(-2000.0, -2000.0, 2000.0, 2000.0).unwrap();
    let mut x = Vec::new();
    let mut y = Vec::new();
    for k in 0..200 {
        let a = k as f64 / 200.0 * std::f64::consts::TAU;
        x.push(1000.0 * a.cos());
        y.push(1000.0 * a.sin());
    }
    let o = SurfaceOptions {
        bandwidth: BandwidthOptions {
            method: BandwidthMethod::Fixed,
            fixed_m: Some(150.0),
            ..Default::default()
        },
        grid: GridOptions {
            cells_long_side: 160,
            cell_m: None,
        },
        ..Default::default()
    };
    let s = kernel_surface_in(&x, &y, None, &region, &o).unwrap();
    let c = isopleth::contour(&s.grid, 0.3 * s.max_per_km2);
    assert_eq!(c.polygons.len(), 1);
    assert_eq!(c.polygons[0].len(), 2, "exterior and one hole");
    let gj = isopleth::to_geojson(
        &ContourSet {
            contours: vec![c.clone()],
        },
        |x, y| [x / 1000.0, y / 1000.0],
    );
    let v: serde_json::Value = serde_json::from_str(&gj).unwrap();
    let ring0 = &v["features"][0]["geometry"]["coordinates"][0][0];
    assert_eq!(ring0[0], ring0[ring0.as_array().unwrap().len() - 1]);
    assert_eq!(v["features"][0]["geometry"]["type"], "MultiPolygon");
    // Area: annulus between two circles (exterior minus hole), positive.
    assert!(c.area_km2 > 0.0 && c.area_km2 < 16.0);
}

#[test]
fn normal_reference_factors() {
    // docs/methods.md#kernel [C]: n^(−1/6) = 0.5 (n = 64), 0.464159 (n = 100),
    // 0.316228 (n = 1000). Points with s_x = s_y = s known exactly: ±1 pairs.
    for (n, f) in [(64, 0.5), (100, 0.464159), (1000, 0.316228)] {
        let x: Vec<f64> = (0..n)
            .map(|i| if i % 2 == 0 { 1.0 } else { -1.0 })
            .collect();
        let y: Vec<f64> = (0..n)
            .map(|i| if (i / 2) % 2 == 0 { 3.0 } else { -3.0 })
            .collect();
        // s_x² = n/(n−1), s_y² = 9n/(n−1) → σ̂ = √(5n/(n−1)).
        let s = (5.0 * n as f64 / (n as f64 - 1.0)).sqrt();
        let h = bandwidth::normal_reference(&x, &y).unwrap();
        assert!(rel(h, s * f) < 2e-6, "n={n}");
    }
    assert!(bandwidth::normal_reference(&[1.0], &[1.0]).is_err());
    assert!(bandwidth::normal_reference(&[1.0, 1.0], &[2.0, 2.0]).is_err());
}

fn thomas(
    kappa: f64,
    mu: f64,
    sigma: f64,
    side: f64,
    rng: &mut crate::rng::Rng,
) -> (Vec<f64>, Vec<f64>) {
    // Thomas process on [0, side]², parents in a window grown by 4σ.
    let pad = 4.0 * sigma;
    let big = side + 2.0 * pad;
    let np = poisson(kappa * big * big, rng);
    let (mut x, mut y) = (Vec::new(), Vec::new());
    for _ in 0..np {
        let px = -pad + big * rng.random::<f64>();
        let py = -pad + big * rng.random::<f64>();
        for _ in 0..poisson(mu, rng) {
            let (g1, g2) = gauss_pair(rng);
            let (cx, cy) = (px + sigma * g1, py + sigma * g2);
            if (0.0..=side).contains(&cx) && (0.0..=side).contains(&cy) {
                x.push(cx);
                y.push(cy);
            }
        }
    }
    (x, y)
}

fn poisson(lambda: f64, rng: &mut crate::rng::Rng) -> usize {
    // Knuth's multiplication method (fine for small λ); split large λ.
    if lambda > 30.0 {
        let half = lambda / 2.0;
        return poisson(half, rng) + poisson(lambda - half, rng);
    }
    let l = (-lambda).exp();
    let mut k = 0;
    let mut p = 1.0;
    loop {
        p *= rng.random::<f64>();
        if p <= l {
            return k;
        }
        k += 1;
    }
}

fn gauss_pair(rng: &mut crate::rng::Rng) -> (f64, f64) {
    let u1 = 1.0 - rng.random::<f64>();
    let u2 = rng.random::<f64>();
    let r = (-2.0 * u1.ln()).sqrt();
    let a = std::f64::consts::TAU * u2;
    (r * a.cos(), r * a.sin())
}

#[test]
fn diggle_criterion_on_csr_and_thomas() {
    // docs/methods.md#kernel [C]: under CSR (n = 200) the argmin sat at the largest grid
    // value in 97 % of simulations → "no finite optimum". With our ladder
    // (0.1 to 2 × the normal-reference σ) it was 15 of these 20 seeded runs;
    // the other five had a shallow minimum near the top of the ladder (seen
    // in the criterion curves). We require at least 13 of 20, which a
    // criterion with a spurious interior minimum (e.g. a wrong sign or edge
    // weight) fails.
    let region = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
    let grid = GridOptions {
        cells_long_side: 128,
        cell_m: None,
    };
    let mut none = 0;
    for run in 0..20 {
        let mut rng = crate::rng::rng_from_seed(300 + run);
        let (x, y) = region.sample_uniform(200, &mut rng);
        let h0 = bandwidth::normal_reference(&x, &y).unwrap();
        let sds = bandwidth::ladder(0.1 * h0, 2.0 * h0, 20);
        let c = bandwidth::diggle_mse(&x, &y, &region, &sds, &grid).unwrap();
        if c.bandwidth_m.is_none() {
            none += 1;
        }
    }
    assert!(none >= 13, "{none} of 20 CSR runs had no finite optimum");
    // Thomas(κ = 25, μ = 8, σ = 0.02): docs/methods.md#kernel [C] optimum σ* = 0.01774
    // (closed form), median of the empirical argmin over 200 torus runs 0.0175.
    // Ours (unit square, translation correction, 15 runs): median within
    // [0.012, 0.026], a loose band for 15 runs on a 20-step ladder.
    let mut best = Vec::new();
    for run in 0..15 {
        let mut rng = crate::rng::rng_from_seed(900 + run);
        let (x, y) = thomas(25.0, 8.0, 0.02, 1.0, &mut rng);
        let sds = bandwidth::ladder(0.004, 0.08, 20);
        let c = bandwidth::diggle_mse(&x, &y, &region, &sds, &grid).unwrap();
        best.push(c.bandwidth_m.unwrap_or(f64::INFINITY));
    }
    best.sort_by(|a, b| a.total_cmp(b));
    let med = best[7];
    assert!(
        (0.012..=0.026).contains(&med),
        "median argmin {med}, all {best:?}"
    );
}

#[test]
fn likelihood_cv_prefers_small_bandwidth_for_tight_clusters() {
    // Tight Thomas clusters (σ = 0.01) against CSR: the LCV optimum is
    // smaller for the clustered pattern, and it is interior for clusters.
    let region = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
    let grid = GridOptions {
        cells_long_side: 100,
        cell_m: None,
    };
    let hs = bandwidth::ladder(0.003, 0.3, 20);
    let mut rng = crate::rng::rng_from_seed(17);
    let (cx, cy) = thomas(20.0, 10.0, 0.01, 1.0, &mut rng);
    let (ux, uy) = region.sample_uniform(cx.len(), &mut rng);
    let run = |x: &[f64], y: &[f64], edge| {
        bandwidth::likelihood_cv(x, y, &region, Kernel::Gaussian, edge, &hs, &grid).unwrap()
    };
    for edge in [
        EdgeCorrection::JonesDiggle,
        EdgeCorrection::None,
        EdgeCorrection::Uniform,
    ] {
        let c = run(&cx, &cy, edge);
        let u = run(&ux, &uy, edge);
        let hc = c.bandwidth_m.unwrap();
        assert!(hc > 0.003 && hc < 0.3, "{edge:?}: {hc}");
        assert!(hc < 0.05, "{edge:?}: clustered optimum {hc}");
        assert!(u.bandwidth_m.unwrap() > 2.0 * hc, "{edge:?}");
    }
}

#[test]
fn weights_scale_the_surface() {
    let region = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
    let x = [200.0, 500.0, 800.0];
    let y = [300.0, 500.0, 700.0];
    let o = SurfaceOptions {
        bandwidth: BandwidthOptions {
            method: BandwidthMethod::Fixed,
            fixed_m: Some(100.0),
            ..Default::default()
        },
        ..Default::default()
    };
    let a = kernel_surface_in(&x, &y, None, &region, &o).unwrap();
    let b = kernel_surface_in(&x, &y, Some(&[2.0, 2.0, 2.0]), &region, &o).unwrap();
    assert!(rel(b.integral_events, 2.0 * a.integral_events) < 1e-12);
    assert!(kernel_surface_in(&x, &y, Some(&[1.0, -1.0, 1.0]), &region, &o).is_err());
}

#[test]
fn edge_cases_give_values_or_errors() {
    let region = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
    // No events with a fixed bandwidth: an all-zero surface.
    let fixed = SurfaceOptions {
        bandwidth: BandwidthOptions {
            method: BandwidthMethod::Fixed,
            fixed_m: Some(50.0),
            ..Default::default()
        },
        ..Default::default()
    };
    let s = kernel_surface_in(&[], &[], None, &region, &fixed).unwrap();
    assert_eq!(s.max_per_km2, 0.0);
    assert!(isopleth::isopleths(&s.grid, &[0.5]).contours.is_empty());
    // Data-driven rules need two distinct events.
    let o = SurfaceOptions::default();
    assert!(kernel_surface_in(&[5.0], &[5.0], None, &region, &o).is_err());
    assert!(kernel_surface_in(&[5.0, 5.0], &[5.0, 5.0], None, &region, &o).is_err());
    // A bandwidth far wider than the area: bounded stencil, mass kept.
    for kernel in [Kernel::Gaussian, Kernel::Quartic] {
        let o = SurfaceOptions {
            kernel,
            bandwidth: BandwidthOptions {
                method: BandwidthMethod::Fixed,
                fixed_m: Some(1.0e7),
                ..Default::default()
            },
            ..Default::default()
        };
        let s = kernel_surface_in(&[5.0, 900.0], &[5.0, 300.0], None, &region, &o).unwrap();
        assert!(
            rel(s.integral_events, 2.0) < 1e-3,
            "{kernel:?}: {}",
            s.integral_events
        );
    }
    // Zero and negative bandwidths are refused.
    for h in [0.0, -3.0, f64::NAN] {
        let o = SurfaceOptions {
            bandwidth: BandwidthOptions {
                method: BandwidthMethod::Fixed,
                fixed_m: Some(h),
                ..Default::default()
            },
            ..Default::default()
        };
        assert!(kernel_surface_in(&[5.0], &[5.0], None, &region, &o).is_err());
    }
}

#[test]
#[ignore = "diagnostic printout"]
fn print_diggle_curves() {
    let region = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
    let grid = GridOptions {
        cells_long_side: 128,
        cell_m: None,
    };
    for run in 0..20 {
        let mut rng = crate::rng::rng_from_seed(300 + run);
        let (x, y) = region.sample_uniform(200, &mut rng);
        let h0 = bandwidth::normal_reference(&x, &y).unwrap();
        let sds = bandwidth::ladder(0.1 * h0, 2.0 * h0, 20);
        let c = bandwidth::diggle_mse(&x, &y, &region, &sds, &grid).unwrap();
        let v: Vec<String> = c
            .criterion
            .iter()
            .map(|v| format!("{:.4}", v.unwrap()))
            .collect();
        println!("{run} {:?} {}", c.bandwidth_m, v.join(" "));
    }
}

#[test]
#[ignore = "diagnostic printout"]
fn print_lcv_curves() {
    let region = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
    let hs = bandwidth::ladder(0.003, 0.3, 20);
    let mut rng = crate::rng::rng_from_seed(17);
    let (cx, cy) = thomas(20.0, 10.0, 0.01, 1.0, &mut rng);
    for cells in [100, 400, 1600] {
        let grid = GridOptions {
            cells_long_side: cells,
            cell_m: None,
        };
        let c = bandwidth::likelihood_cv(
            &cx,
            &cy,
            &region,
            Kernel::Gaussian,
            EdgeCorrection::JonesDiggle,
            &hs,
            &grid,
        )
        .unwrap();
        let v: Vec<String> = c
            .criterion
            .iter()
            .map(|v| format!("{:.1}", v.unwrap_or(f64::NAN)))
            .collect();
        println!("{cells} {:?} {}", c.bandwidth_m, v.join(" "));
    }
}

#[test]
fn diggle_binned_lags_agree_with_exact_pairs() {
    // The binned pair-difference sum (σ ≥ 2 cells) against exact pairs: run
    // once on a coarse grid (most candidates binned) and once on a grid so
    // fine that every candidate is summed exactly; criteria within 2 % of the
    // curve's range.
    let region = Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap();
    let mut rng = crate::rng::rng_from_seed(4);
    let (x, y) = thomas(25.0, 8.0, 0.02, 1.0, &mut rng);
    let sds = bandwidth::ladder(0.02, 0.1, 8);
    let coarse = GridOptions {
        cells_long_side: 200,
        cell_m: None,
    };
    let fine = GridOptions {
        cells_long_side: 2048,
        cell_m: None,
    };
    let a = bandwidth::diggle_mse(&x, &y, &region, &sds, &coarse).unwrap();
    let b = bandwidth::diggle_mse(&x, &y, &region, &sds, &fine).unwrap();
    let va: Vec<f64> = a.criterion.iter().map(|v| v.unwrap()).collect();
    let vb: Vec<f64> = b.criterion.iter().map(|v| v.unwrap()).collect();
    let range =
        vb.iter().cloned().fold(f64::MIN, f64::max) - vb.iter().cloned().fold(f64::MAX, f64::min);
    for (p, q) in va.iter().zip(&vb) {
        assert!((p - q).abs() < 0.02 * range, "{va:?} vs {vb:?}");
    }
}

#[test]
fn narrow_bandwidth_binned_surface_keeps_the_event_count() {
    // Regression: a Gaussian bandwidth below one grid cell (20 m against
    // 50 m cells) made the sampled kernel sum to about 1.11 per event, so the
    // surface held 11 % more events than there are. With Jones–Diggle
    // correction ∫_W λ̂ = n (docs/methods.md#kernel [D]) must hold whatever the bandwidth.
    let region = window_with_hole();
    let mut rng = crate::rng::rng_from_seed(22);
    let (x, y) = region.sample_uniform(300, &mut rng);
    for h in [20.0, 35.0, 60.0] {
        let o = SurfaceOptions {
            kernel: Kernel::Gaussian,
            bandwidth: BandwidthOptions {
                method: BandwidthMethod::Fixed,
                fixed_m: Some(h),
                ..Default::default()
            },
            edge: EdgeCorrection::JonesDiggle,
            evaluation: Evaluation::Binned,
            grid: GridOptions {
                cells_long_side: 200,
                cell_m: None,
            },
            ..Default::default()
        };
        let s = kernel_surface_in(&x, &y, None, &region, &o).unwrap();
        assert!(
            rel(s.integral_events, 300.0) < 5e-3,
            "h = {h}: {}",
            s.integral_events
        );
    }
}
