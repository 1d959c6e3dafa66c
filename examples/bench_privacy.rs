//! Privacy benchmark: what a user waits for on the sharing screen.
//!
//! `cargo run --release --example bench_privacy`
//!
//! Seeded invented data in a 20 km square: donut masking, k-anonymity
//! masking against a population layer, square-grid counts with suppression
//! and audit, the cost comparison, and a GeoJSON export. One JSON line per step.

use cloister::privacy::aggregate::{aggregate_grid, AggregateParams, CellShape};
use cloister::privacy::export::{export, ExportContent, ExportOptions};
use cloister::privacy::suppress::{suppress, SuppressionParams};
use cloister::privacy::{
    compare, donut_mask, kanon_mask, CostParams, DonutParams, ExportFormat, KAnonParams,
};
use cloister::window::Window;
use rand::RngExt;
use std::time::Instant;

fn clustered(n: usize, seed: u64) -> (Vec<f64>, Vec<f64>) {
    let mut rng = cloister::rng::rng_from_seed(seed);
    let centres: Vec<(f64, f64)> = (0..30)
        .map(|_| {
            (
                1000.0 + rng.random::<f64>() * 18_000.0,
                1000.0 + rng.random::<f64>() * 18_000.0,
            )
        })
        .collect();
    let (mut x, mut y) = (vec![], vec![]);
    while x.len() < n {
        let (cx, cy) = centres[(rng.random::<f64>() * 30.0) as usize % 30];
        let (a, b) = (
            cx + (rng.random::<f64>() - 0.5) * 1500.0,
            cy + (rng.random::<f64>() - 0.5) * 1500.0,
        );
        if (0.0..=20_000.0).contains(&a) && (0.0..=20_000.0).contains(&b) {
            x.push(a);
            y.push(b);
        }
    }
    (x, y)
}

fn time<T>(step: &str, n: usize, f: impl FnOnce() -> T) -> T {
    let t = Instant::now();
    let out = f();
    println!(
        "{{\"step\":\"{step}\",\"n\":{n},\"ms\":{:.1}}}",
        t.elapsed().as_secs_f64() * 1000.0
    );
    out
}

fn main() {
    let area = Window::rectangle(0.0, 0.0, 20_000.0, 20_000.0).unwrap();
    for n in [1_000, 10_000] {
        let (x, y) = clustered(n, 1);
        let (px, py) = clustered(50_000, 2);
        let m = time("donut", n, || {
            donut_mask(&x, &y, &area, &DonutParams::default()).unwrap()
        });
        time("kanon_population", n, || {
            kanon_mask(&x, &y, Some((&px, &py)), &area, &KAnonParams::default()).unwrap()
        });
        time("cost", n, || {
            compare(&x, &y, &m.x, &m.y, &area, &CostParams::default()).unwrap()
        });
        for (shape, size) in [(CellShape::Square, 500.0), (CellShape::Hexagon, 400.0)] {
            let p = AggregateParams {
                shape,
                cell_size_m: size,
                ..Default::default()
            };
            let agg = time("aggregate", n, || {
                aggregate_grid(&x, &y, &area, &area.polygons()[0][0], Some((&px, &py)), &p).unwrap()
            });
            let t = time("suppress_and_audit", n, || {
                suppress(&agg, &SuppressionParams::default())
            });
            eprintln!(
                "  {shape:?}: {} cells, {} primary, {} complementary, safe {}, exact {}",
                t.cells.len(),
                t.n_primary,
                t.n_complementary,
                t.audit.safe,
                t.audit
                    .exact_skipped
                    .clone()
                    .unwrap_or_else(|| "ran".into())
            );
            time("export_geojson", n, || {
                let o = ExportOptions {
                    format: ExportFormat::GeoJson,
                    ..Default::default()
                };
                export(&ExportContent::Table(&t), &o, None)
                    .unwrap()
                    .text
                    .len()
            });
        }
    }
}
