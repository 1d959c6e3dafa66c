//! Intake benchmark: read + validate + project + summarise n events.
//!
//! `cargo run --release --example bench_intake -- 1000 10000 100000 1000000`
//!
//! For each n it builds a CSV in memory (seeded, lon/lat with dates and two
//! categories, the shape analysts hand us), then times the whole path a user
//! waits for when a file is dropped, and reports the peak resident memory
//! (VmHWM) of the process. Prints one JSON line per n.
//!
//! Against pandas + pyproj (`bench/intake_vs_pandas.py` runs both):
//!
//! `cargo run --release --example bench_intake -- write FILE N` writes the
//! same CSV (N rows) to FILE; `... -- file FILE` times, best of 3, reading
//! FILE from disk plus the same work (read, validate, project, summarise),
//! prints one JSON line with the projection used and writes the projected
//! events (x then y, little-endian f64, input order) to FILE.xy for the
//! comparison of the coordinates.

use cloister::input::{self, ReadOptions};
use cloister::study::{AreaFallback, Study};
use cloister::summary;
use rand::RngExt;
use std::fmt::Write as _;
use std::time::Instant;

fn make_csv(n: usize, seed: u64) -> String {
    let mut rng = cloister::rng::rng_from_seed(seed);
    let mut s = String::with_capacity(n * 48);
    s.push_str("id,longitude,latitude,onset_date,category\n");
    for i in 0..n {
        let lon = -32.06 + 0.12 * rng.random::<f64>();
        let lat = -41.54 + 0.08 * rng.random::<f64>();
        let day = 1 + (rng.random::<f64>() * 28.0) as u32;
        let month = 1 + (rng.random::<f64>() * 12.0) as u32;
        let cat = if rng.random::<f64>() < 0.3 {
            "enteric"
        } else {
            "respiratory"
        };
        let _ = writeln!(s, "{i},{lon:.6},{lat:.6},2025-{month:02}-{day:02},{cat}");
    }
    s
}

fn peak_rss_mb() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

/// `file FILE`: the whole intake of a file on disk, best of 3.
fn time_file(path: &str) {
    let mut best = f64::INFINITY;
    let (mut t_disk, mut t_read, mut t_study, mut t_sum) = (0.0, 0.0, 0.0, 0.0);
    let mut last = None;
    for _ in 0..3 {
        let t0 = Instant::now();
        let bytes = match std::fs::read(path) {
            Ok(b) => b,
            Err(e) => {
                eprintln!("cannot read {path}: {e}");
                std::process::exit(1)
            }
        };
        let t1 = Instant::now();
        let layer = match input::read_points(&bytes, &ReadOptions::default()) {
            Ok(l) => l,
            Err(e) => {
                eprintln!("read failed: {e}");
                std::process::exit(1)
            }
        };
        let t2 = Instant::now();
        let study = match Study::build(&layer, None, None, AreaFallback::ConvexHull) {
            Ok(s) => s,
            Err(e) => {
                eprintln!("study failed: {e}");
                std::process::exit(1)
            }
        };
        let t3 = Instant::now();
        let sm = summary::summarise(&study);
        let t4 = Instant::now();
        std::hint::black_box(&sm);
        let total = (t4 - t0).as_secs_f64();
        if total < best {
            best = total;
            t_disk = (t1 - t0).as_secs_f64();
            t_read = (t2 - t1).as_secs_f64();
            t_study = (t3 - t2).as_secs_f64();
            t_sum = (t4 - t3).as_secs_f64();
        }
        last = Some((study, sm.n_events, bytes.len()));
    }
    let Some((study, n, len)) = last else { return };
    let mut out = Vec::with_capacity(16 * n);
    for v in study.events.x().iter().chain(study.events.y()) {
        out.extend_from_slice(&v.to_le_bytes());
    }
    if let Err(e) = std::fs::write(format!("{path}.xy"), out) {
        eprintln!("cannot write {path}.xy: {e}");
        std::process::exit(1)
    }
    println!(
        "{{\"where\":\"native\",\"file\":{:?},\"n\":{n},\"bytes\":{len},\"total_s\":{best:.4},\"disk_s\":{t_disk:.4},\"read_s\":{t_read:.4},\"project_validate_s\":{t_study:.4},\"summary_s\":{t_sum:.4},\"projection\":{}}}",
        path,
        serde_json::to_string(&study.projection).unwrap_or_else(|_| "null".into())
    );
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match args.first().map(String::as_str) {
        Some("write") => {
            let (Some(path), Some(n)) = (args.get(1), args.get(2).and_then(|a| a.parse().ok()))
            else {
                eprintln!("usage: bench_intake write FILE N");
                std::process::exit(2)
            };
            if let Err(e) = std::fs::write(path, make_csv(n, 20261202)) {
                eprintln!("cannot write {path}: {e}");
                std::process::exit(1)
            }
            return;
        }
        Some("file") => {
            let Some(path) = args.get(1) else {
                eprintln!("usage: bench_intake file FILE");
                std::process::exit(2)
            };
            time_file(path);
            return;
        }
        _ => {}
    }
    let sizes: Vec<usize> = std::env::args()
        .skip(1)
        .filter_map(|a| a.parse().ok())
        .collect();
    let sizes = if sizes.is_empty() {
        vec![1_000, 10_000, 100_000, 1_000_000]
    } else {
        sizes
    };
    for n in sizes {
        let csv = make_csv(n, 20261202);
        let bytes = csv.as_bytes();
        let mut best = f64::INFINITY;
        let (mut t_read, mut t_study, mut t_sum) = (0.0, 0.0, 0.0);
        let reps = if n >= 1_000_000 { 3 } else { 5 };
        for _ in 0..reps {
            let t0 = Instant::now();
            let layer = match input::read_points(bytes, &ReadOptions::default()) {
                Ok(l) => l,
                Err(e) => {
                    eprintln!("read failed: {e}");
                    std::process::exit(1)
                }
            };
            let t1 = Instant::now();
            let study = match Study::build(&layer, None, None, AreaFallback::ConvexHull) {
                Ok(s) => s,
                Err(e) => {
                    eprintln!("study failed: {e}");
                    std::process::exit(1)
                }
            };
            let t2 = Instant::now();
            let sm = summary::summarise(&study);
            let t3 = Instant::now();
            std::hint::black_box(&sm);
            let total = (t3 - t0).as_secs_f64();
            if total < best {
                best = total;
                t_read = (t1 - t0).as_secs_f64();
                t_study = (t2 - t1).as_secs_f64();
                t_sum = (t3 - t2).as_secs_f64();
            }
        }
        println!(
            "{{\"where\":\"native\",\"n\":{n},\"bytes\":{},\"total_s\":{best:.4},\"read_s\":{t_read:.4},\"project_validate_s\":{t_study:.4},\"summary_s\":{t_sum:.4},\"peak_rss_mb\":{:.1}}}",
            bytes.len(),
            peak_rss_mb().unwrap_or(f64::NAN)
        );
    }
}
