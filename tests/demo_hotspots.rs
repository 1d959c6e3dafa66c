//! The hotspot methods on the invented demo town (demo-data/), through the
//! public API a page would call: read → Study → surface / DBSCAN / scan.
//! The planted truth (demo-data/planted-truth.json, written by the demo
//! generator) says where the three clusters are.

use cloister::clusters::{dbscan, k_distance_plot, DbscanOptions};
use cloister::input::{read_area, read_points, ReadOptions};
use cloister::intensity::{
    kernel_surface, BandwidthMethod, BandwidthOptions, EdgeCorrection, SurfaceOptions,
};
use cloister::scan::{ScanJob, ScanModel, ScanOptions};
use cloister::study::{AreaFallback, Study};
use serde_json::Value;

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

/// Planted cluster centres (A, B, C) in the study's metres.
fn planted(s: &Study) -> Vec<(f64, f64)> {
    let t: Value = serde_json::from_str(include_str!("../demo-data/planted-truth.json")).unwrap();
    t["clusters"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            let ll = &c["centre_lonlat"];
            s.projection.forward(
                ll["longitude"].as_f64().unwrap(),
                ll["latitude"].as_f64().unwrap(),
            )
        })
        .collect()
}

fn near(p: (f64, f64), q: (f64, f64), r: f64) -> bool {
    ((p.0 - q.0).powi(2) + (p.1 - q.1).powi(2)).sqrt() <= r
}

#[test]
fn raster_mask_agrees_with_window() {
    // The study area's raster mask (a scanline fill, used by the surfaces
    // and the scan) against its containment test (banded ray casting), and
    // its area against a plain shoelace sum written here.
    let s = study();
    let r = &s.window;
    let mut shoelace = 0.0;
    for poly in r.polygons() {
        for (k, ring) in poly.iter().enumerate() {
            let a: f64 = ring
                .windows(2)
                .map(|w| w[0][0] * w[1][1] - w[1][0] * w[0][1])
                .sum();
            shoelace += if k == 0 {
                0.5 * a.abs()
            } else {
                -0.5 * a.abs()
            };
        }
    }
    assert!((r.area() - shoelace).abs() / shoelace < 1e-9);
    // README: net area 82.466 km² in its local grid (a different plane,
    // hence 0.5 %).
    assert!((r.area() / 1e6 - 82.466).abs() / 82.466 < 5e-3);
    let [x0, y0, x1, y1] = s.window.bbox();
    let cell = (x1 - x0) / 200.0;
    let ny = ((y1 - y0) / cell).ceil() as usize;
    let (ox, oy) = (x0 - 0.13 * cell, y0 + 0.11 * cell);
    let mask = r.raster_mask(ox, oy, cell, 200, ny);
    let mut disagree = 0;
    for j in 0..ny {
        for i in 0..200 {
            let x = ox + (i as f64 + 0.5) * cell;
            let y = oy + (j as f64 + 0.5) * cell;
            if mask[j * 200 + i] != s.window.contains(x, y) {
                disagree += 1;
            }
        }
    }
    assert!(mask.iter().filter(|&&v| v).count() > 10_000);
    assert_eq!(disagree, 0);
}

#[test]
fn surface_peaks_at_a_planted_cluster_and_keeps_mass() {
    let s = study();
    let o = SurfaceOptions {
        bandwidth: BandwidthOptions {
            method: BandwidthMethod::Fixed,
            fixed_m: Some(200.0),
            ..Default::default()
        },
        edge: EdgeCorrection::JonesDiggle,
        ..Default::default()
    };
    let surf = kernel_surface(&s.events, &s.window, &o).unwrap();
    assert!((surf.integral_events - s.events.len() as f64).abs() / (s.events.len() as f64) < 5e-3);
    let k = (0..surf.grid.values.len())
        .max_by(|&a, &b| surf.grid.values[a].total_cmp(&surf.grid.values[b]))
        .unwrap();
    let peak = surf.grid.centre(k % surf.grid.nx, k / surf.grid.nx);
    let centres = planted(&s);
    assert!(
        centres.iter().any(|&c| near(peak, c, 400.0)),
        "peak at {peak:?}"
    );
    // The 50 % isopleth exists and is a small part of the town.
    let iso = surf.isopleths(&[0.5]);
    assert!(iso.contours[0].area_km2 > 0.0 && iso.contours[0].area_km2 < surf.area_km2 * 0.5);
    assert!(surf.max_per_km2 > 100.0 && surf.max_per_km2 < 1.0e4);
}

#[test]
fn dbscan_finds_the_gaussian_cluster() {
    // Cluster A: 120 events, σ = 250 m; background ≈ 15 events/km².
    let s = study();
    let r = dbscan(
        &s.events,
        &DbscanOptions {
            eps_m: 150.0,
            min_samples: 8,
            use_weights: false,
        },
    )
    .unwrap();
    let a = planted(&s)[0];
    let hit = r
        .clusters
        .iter()
        .find(|c| near((c.centre_x, c.centre_y), a, 300.0))
        .expect("a DBSCAN cluster near planted cluster A");
    assert!(hit.members >= 50, "{} members", hit.members);
    assert_eq!(r.labels.len(), s.events.len());
    assert_eq!(r.noise, r.labels.iter().filter(|&&l| l < 0).count());
}

/// The suggested reach (Kneedle on log k-distance) with the page's default
/// min_samples (8) must not merge the town into one cluster: at most 60 %
/// of the events in the largest cluster (the previous chord heuristic gave
/// 517 m and put 1,456 of 1,500 events in one cluster).
#[test]
fn suggested_reach_does_not_merge_the_town() {
    let s = study();
    let (x, y) = (s.events.x(), s.events.y());
    let kd = k_distance_plot(x, y, 8).unwrap();
    let eps = kd.knee_eps_m.unwrap();
    let r = dbscan(
        &s.events,
        &DbscanOptions {
            eps_m: eps,
            min_samples: 8,
            use_weights: false,
        },
    )
    .unwrap();
    let largest = r.clusters.iter().map(|c| c.members).max().unwrap_or(0);
    let share = largest as f64 / x.len() as f64;
    eprintln!(
        "demo: eps {eps:.1} m, {} clusters, largest {largest} of {}",
        r.n_clusters,
        x.len()
    );
    assert!(
        share <= 0.6,
        "eps {eps} m: {largest} of {} in one cluster",
        x.len()
    );
    assert!(r.n_clusters >= 1, "eps {eps} m found no cluster");
}

#[test]
fn scan_against_population_finds_a_planted_cluster() {
    let s = study();
    let o = ScanOptions {
        model: ScanModel::Auto,
        n_sim: 99,
        seed: 7,
        ..Default::default()
    };
    let mut job = ScanJob::new(&s.events, s.controls.as_ref(), &s.window, &o).unwrap();
    while job.progress().done < 99 {
        job.run_batch(25);
    }
    let r = job.finish();
    assert_eq!(r.model, ScanModel::Bernoulli);
    assert!(r.p_value <= 0.01, "p = {}", r.p_value);
    let m = &r.clusters[0];
    let centres = planted(&s);
    assert!(
        centres
            .iter()
            .any(|&c| near((m.centre_x, m.centre_y), c, m.radius_m + 400.0)),
        "most likely cluster at ({}, {}) r = {}",
        m.centre_x,
        m.centre_y,
        m.radius_m
    );
    assert!(m.relative_risk.unwrap() > 1.5);
}

/// The demo's cases with `population-blocks.csv` (counts at block
/// centroids, column `residents`) as the population layer.
fn study_with_blocks() -> Study {
    let cases = read_points(
        include_bytes!("../demo-data/cases.csv"),
        &ReadOptions::default(),
    )
    .unwrap();
    let blocks = read_points(
        include_bytes!("../demo-data/population-blocks.csv"),
        &ReadOptions::default(),
    )
    .unwrap();
    let area = read_area(include_bytes!("../demo-data/town-boundary.geojson"), None).unwrap();
    Study::build(&cases, Some(&area), Some(&blocks), AreaFallback::ConvexHull).unwrap()
}

#[test]
fn scan_against_population_counts_finds_the_planted_clusters() {
    // The planted truth used (demo-data/planted-truth.json, written by
    // examples/make_demo.rs): cluster label, centre longitude, latitude,
    // events planted.
    const PLANTED: [(&str, f64, f64, u64); 3] = [
        ("A", -32.014409, -41.48651, 120),
        ("B", -31.961575, -41.480215, 80),
        ("C", -31.98499, -41.514389, 60),
    ];
    let t: Value = serde_json::from_str(include_str!("../demo-data/planted-truth.json")).unwrap();
    for (c, &(label, lon, lat, n)) in t["clusters"].as_array().unwrap().iter().zip(&PLANTED) {
        assert_eq!(c["label"], label);
        assert_eq!(c["centre_lonlat"]["longitude"].as_f64(), Some(lon));
        assert_eq!(c["centre_lonlat"]["latitude"].as_f64(), Some(lat));
        assert_eq!(c["n"].as_u64(), Some(n));
    }
    let s = study_with_blocks();
    assert!(
        s.controls.as_ref().unwrap().weight().is_some(),
        "residents read as counts"
    );
    let o = ScanOptions {
        model: ScanModel::Auto,
        n_sim: 999,
        seed: 11,
        ..Default::default()
    };
    let mut job = ScanJob::new(&s.events, s.controls.as_ref(), &s.window, &o).unwrap();
    while job.progress().done < 999 {
        job.run_batch(100);
    }
    let r = job.finish();
    assert_eq!(r.model, ScanModel::PoissonPopulation);
    assert_eq!(r.total_cases, 1500);
    assert_eq!(r.total_population, 24_000.0);
    for &(label, lon, lat, _) in &PLANTED {
        let c = s.projection.forward(lon, lat);
        // A circle with p < 0.05 holding the planted centre (block
        // centroids lie up to about 350 m from the places in their block).
        let hit = r
            .clusters
            .iter()
            .find(|m| m.p_value < 0.05 && near((m.centre_x, m.centre_y), c, m.radius_m + 400.0));
        let found = hit.map(|m| (m.rank, m.observed, m.expected, m.radius_m, m.p_value));
        eprintln!("cluster {label}: {found:?}");
        assert!(hit.is_some(), "cluster {label} not found: {:?}", r.clusters);
        let m = hit.unwrap();
        assert!(m.relative_risk.unwrap() > 1.5);
    }
}
