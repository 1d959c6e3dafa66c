//! The space–time permutation scan (src/spacetime/scan.rs) on the invented
//! demo town: the three planted clusters of demo-data/README.md (A, B, C)
//! are each confined to three or four weeks, i.e. space–time outbreaks
//! against a background spread evenly over the year. The planted truth
//! (demo-data/planted-truth.json, written by the demo generator) gives
//! their centres and onset windows.

use cloister::input::time::days_from_civil;
use cloister::input::{read_area, read_points, ReadOptions};
use cloister::spacetime::scan::{StScanJob, StScanMode, StScanOptions};
use cloister::spacetime::{TimedEvents, UncertainTimes};
use cloister::study::{AreaFallback, Study};
use serde_json::Value;

fn study() -> Study {
    let cases = read_points(
        include_bytes!("../demo-data/cases.csv"),
        &ReadOptions::default(),
    )
    .unwrap();
    let area = read_area(include_bytes!("../demo-data/town-boundary.geojson"), None).unwrap();
    Study::build(&cases, Some(&area), None, AreaFallback::ConvexHull).unwrap()
}

fn day(iso: &str) -> f64 {
    let p: Vec<i64> = iso.split('-').map(|v| v.parse().unwrap()).collect();
    days_from_civil(p[0], p[1] as u32, p[2] as u32) as f64
}

/// (centre in the study's metres, first day, last day) of A, B, C.
fn planted(s: &Study) -> Vec<((f64, f64), f64, f64)> {
    let t: Value = serde_json::from_str(include_str!("../demo-data/planted-truth.json")).unwrap();
    t["clusters"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            let ll = &c["centre_lonlat"];
            let w = &c["onset_window"];
            (
                s.projection.forward(
                    ll["longitude"].as_f64().unwrap(),
                    ll["latitude"].as_f64().unwrap(),
                ),
                day(w["first"].as_str().unwrap()),
                day(w["last"].as_str().unwrap()),
            )
        })
        .collect()
}

/// Retrospective scan, circles up to 10 % of the events, intervals up to
/// 30 days, 99 permutations: the most likely cluster and the next
/// significant ones are the planted outbreaks, each found within 600 m of
/// its centre and overlapping its onset window by at least half, with
/// p < 0.05. The 600 m and "half" are our tolerances (cluster σ = 200–250 m,
/// a disc of 400 m; windows of 21–28 days).
#[test]
fn planted_outbreaks_are_found_in_place_and_period() {
    let s = study();
    let ev = TimedEvents::from_study(&s, UncertainTimes::Midpoint, 7.0, 2).unwrap();
    assert_eq!(ev.len(), 1500);
    let o = StScanOptions {
        max_share: 0.1,
        max_days: 30,
        n_sim: 99,
        seed: 11,
        ..Default::default()
    };
    let r = StScanJob::new(&ev, &o).unwrap().finish();
    let truth = planted(&s);
    let significant: Vec<_> = r.clusters.iter().filter(|c| c.p_value < 0.05).collect();
    for (k, &((cx, cy), first, last)) in truth.iter().enumerate() {
        let hit = significant.iter().find(|c| {
            let d = ((c.centre_x - cx).powi(2) + (c.centre_y - cy).powi(2)).sqrt();
            let overlap = (c.end_day.min(last) - c.start_day.max(first) + 1.0).max(0.0);
            d <= 600.0 && overlap >= 0.5 * (last - first + 1.0)
        });
        assert!(
            hit.is_some(),
            "planted cluster {k} not found: {:#?}",
            r.clusters
        );
    }
    assert!(r.p_value < 0.05);
    assert_eq!(r.mode, StScanMode::Retrospective);
}

/// Prospective on the demo: the data end on 2025-12-31, months after the
/// last planted outbreak, so the scan of intervals ending that day should
/// see nothing beyond chance; its verdict states the recurrence interval.
#[test]
fn prospective_on_the_demo_sees_no_current_outbreak() {
    let s = study();
    let ev = TimedEvents::from_study(&s, UncertainTimes::Midpoint, 7.0, 2).unwrap();
    let o = StScanOptions {
        mode: StScanMode::Prospective,
        n_sim: 99,
        seed: 3,
        ..Default::default()
    };
    let r = StScanJob::new(&ev, &o).unwrap().finish();
    assert_eq!(r.last_date, "2025-12-31");
    assert!(r.clusters.iter().all(|c| c.end_date == "2025-12-31"));
    assert!(r.p_value >= 0.05, "p = {}", r.p_value);
    assert!(
        r.verdict.contains("would arise by chance about once every"),
        "{}",
        r.verdict
    );
}
