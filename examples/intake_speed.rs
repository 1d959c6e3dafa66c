//! Speed check for the intake layer (not a test: timings vary by machine).
//!
//! Builds a synthetic, seeded CSV of `n` rows (x, y, time, category; about
//! 40 MB for 10^6 rows) and a semicolon / decimal-comma variant, then times
//! `read_points` on each.
//!
//! Run: `cargo run --release --example intake_speed -- 1000000`

use cloister::input::{read_points, ReadOptions};
use cloister::rng::rng_from_seed;
use rand::RngExt;
use std::fmt::Write;
use std::time::Instant;

fn main() {
    let n: usize = std::env::args()
        .nth(1)
        .and_then(|s| s.parse().ok())
        .unwrap_or(1_000_000);
    let mut rng = rng_from_seed(1);
    let cats = ["burglary", "vehicle", "assault", "other"];
    let mut comma = String::from("x,y,datetime,category\n");
    let mut semi = String::from("x;y;date;type\n");
    for _ in 0..n {
        let x: f64 = 500_000.0 + rng.random::<f64>() * 20_000.0;
        let y: f64 = 4_100_000.0 + rng.random::<f64>() * 20_000.0;
        let day = rng.random_range(1..=28);
        let month = rng.random_range(1..=12);
        let (h, m) = (rng.random_range(0..24), rng.random_range(0..60));
        let c = cats[rng.random_range(0..cats.len())];
        writeln!(
            comma,
            "{x:.2},{y:.2},2024-{month:02}-{day:02}T{h:02}:{m:02}:00,{c}"
        )
        .unwrap();
        let xs = format!("{x:.2}").replace('.', ",");
        let ys = format!("{y:.2}").replace('.', ",");
        writeln!(semi, "{xs};{ys};{day:02}/{month:02}/2024;{c}").unwrap();
    }
    for (name, text) in [("comma", &comma), ("semicolon + decimal comma", &semi)] {
        let t0 = Instant::now();
        let layer = read_points(text.as_bytes(), &ReadOptions::default()).expect("readable");
        let dt = t0.elapsed();
        println!(
            "{name}: {n} rows, {:.1} MB, read in {:.3} s ({} accepted, {} rejected, {} categories)",
            text.len() as f64 / 1e6,
            dt.as_secs_f64(),
            layer.len(),
            layer.rejections.len(),
            layer.category_names.len()
        );
    }
}
