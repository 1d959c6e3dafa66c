//! Timing of the geometry core (not a test: speeds are printed, never asserted).
//!
//! Run with `cargo run --release --example bench_geometry`.
//! Inputs come from fixed seeds, so runs are comparable.

use cloister::index::GridIndex;
use cloister::rng::rng_from_seed;
use cloister::window::{Window, WindowOrigin};
use rand::RngExt;
use std::time::Instant;

fn main() {
    // A 1000-vertex star-shaped polygon with a 200-vertex hole.
    let ring = |n: usize, r0: f64, amp: f64, cw: bool| -> Vec<[f64; 2]> {
        let mut v: Vec<[f64; 2]> = (0..n)
            .map(|k| {
                let t = 2.0 * std::f64::consts::PI * k as f64 / n as f64;
                let r = r0 * (1.0 + amp * (9.0 * t).sin() + if k % 2 == 0 { 0.05 } else { 0.0 });
                [r * t.cos(), r * t.sin()]
            })
            .collect();
        if cw {
            v.reverse();
        }
        v
    };
    let w = Window::from_polygons(
        vec![vec![
            ring(1000, 10_000.0, 0.3, false),
            ring(200, 2_000.0, 0.1, true),
        ]],
        WindowOrigin::File,
    )
    .unwrap();
    let mut rng = rng_from_seed(1);
    let m = 1_000_000;
    let q: Vec<(f64, f64)> = (0..m)
        .map(|_| {
            (
                rng.random::<f64>() * 30_000.0 - 15_000.0,
                rng.random::<f64>() * 30_000.0 - 15_000.0,
            )
        })
        .collect();
    let t = Instant::now();
    let inside = q.iter().filter(|&&(x, y)| w.contains(x, y)).count();
    println!(
        "contains: {m} tests on a 1200-edge window: {:?} ({inside} inside)",
        t.elapsed()
    );

    let t = Instant::now();
    let (sx, sy) = w.sample_uniform(m, &mut rng);
    println!("sample_uniform: {} points: {:?}", sx.len(), t.elapsed());

    let t = Instant::now();
    let g = GridIndex::new(&sx, &sy);
    let build = t.elapsed();
    let t = Instant::now();
    let nn = g.nn_distances().unwrap();
    println!(
        "grid index: build {build:?}, NN for {} points {:?} (mean {:.2} m)",
        nn.len(),
        t.elapsed(),
        nn.iter().sum::<f64>() / nn.len() as f64
    );
    let t = Instant::now();
    let mut pairs = 0u64;
    g.for_each_pair_within(30.0, |_, _, _| pairs += 1);
    println!(
        "pairs within 30 m among {m} points: {pairs} in {:?}",
        t.elapsed()
    );

    let t = Instant::now();
    let mut s = 0.0;
    for &(x, y) in q.iter().take(100_000) {
        s += w.boundary_distance(x, y);
    }
    println!(
        "boundary_distance: 100000 queries: {:?} (mean {:.1} m)",
        t.elapsed(),
        s / 1e5
    );
}
