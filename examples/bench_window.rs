//! Containment speed: the study area's own banded test against `geo`'s
//! point-in-polygon (`Intersects`, boundary included, as ours), on the same
//! seeded query points. Speeds are printed, never asserted.
//!
//! `cargo run --release --example bench_window`
//!
//! First, saw-tooth outlines of 10⁴, 10⁵ and 10⁶ corners (long thin teeth,
//! the shape that made the former banded index grow with the square of the
//! corner count): build time and memory, containment and boundary distance
//! per point.
//!
//! Windows: a 1200-edge star with a hole (a detailed boundary), the square
//! with a square hole (8 edges) and a rectangle (4 edges). The ratio printed
//! is geo's time over ours (above 1: ours is faster).

use cloister::rng::rng_from_seed;
use cloister::window::{Window, WindowOrigin};
use geo::Intersects;
use rand::RngExt;
use std::time::Instant;

fn ring(n: usize, r0: f64, amp: f64, cw: bool) -> Vec<[f64; 2]> {
    let mut v: Vec<[f64; 2]> = (0..n)
        .map(|k| {
            let t = std::f64::consts::TAU * k as f64 / n as f64;
            let r = r0 * (1.0 + amp * (9.0 * t).sin() + if k % 2 == 0 { 0.05 } else { 0.0 });
            [r * t.cos(), r * t.sin()]
        })
        .collect();
    if cw {
        v.reverse();
    }
    v
}

fn to_geo(w: &Window) -> geo::MultiPolygon<f64> {
    let ls = |r: &Vec<[f64; 2]>| -> geo::LineString<f64> {
        r.iter().map(|p| geo::Coord { x: p[0], y: p[1] }).collect()
    };
    geo::MultiPolygon(
        w.polygons()
            .iter()
            .map(|p| geo::Polygon::new(ls(&p[0]), p[1..].iter().map(ls).collect()))
            .collect(),
    )
}

/// Saw-tooth outline: base [0, n] at y = 0, n teeth of height 10 (apex at
/// y = 10, valleys at y = 1): 2n + 3 corners, area 5.5·n.
fn saw_tooth(n: usize) -> Vec<[f64; 2]> {
    let mut r = vec![[0.0, 0.0], [n as f64, 0.0]];
    for k in (0..n).rev() {
        r.push([k as f64 + 1.0, 1.0]);
        r.push([k as f64 + 0.5, 10.0]);
    }
    r.push([0.0, 1.0]);
    r
}

/// Peak resident memory of this process so far (Linux), MB.
fn peak_mb() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1)?.parse::<f64>().ok())
        })
        .map_or(f64::NAN, |kb| kb / 1024.0)
}

/// Saw-tooth outlines of about 10⁴, 10⁵ and 10⁶ corners: build time, the
/// window's own heap size, peak memory of the process, and containment and
/// boundary distance per point.
fn saw_teeth() {
    for n in [5_000, 50_000, 500_000] {
        let ring = saw_tooth(n);
        let corners = ring.len();
        let t = Instant::now();
        let w = Window::from_polygons(vec![vec![ring]], WindowOrigin::File).unwrap();
        let t_build = t.elapsed().as_secs_f64();
        let mut rng = rng_from_seed(2);
        let m = 200_000;
        let q: Vec<(f64, f64)> = (0..m)
            .map(|_| {
                (
                    -1.0 + (n as f64 + 2.0) * rng.random::<f64>(),
                    -1.0 + 12.0 * rng.random::<f64>(),
                )
            })
            .collect();
        let t = Instant::now();
        let inside = q.iter().filter(|&&(x, y)| w.contains(x, y)).count();
        let t_in = t.elapsed().as_secs_f64();
        let t = Instant::now();
        let dsum: f64 = q.iter().map(|&(x, y)| w.boundary_distance(x, y)).sum();
        let t_d = t.elapsed().as_secs_f64();
        println!(
            "saw-tooth, {corners} corners: build {:.0} ms, window {:.0} MB, process peak {:.0} MB; \
             contains {:.2} µs/point ({inside} of {m} inside), boundary distance {:.2} µs/point \
             (mean {:.3})",
            1e3 * t_build,
            w.heap_bytes() as f64 / 1e6,
            peak_mb(),
            1e6 * t_in / m as f64,
            1e6 * t_d / m as f64,
            dsum / m as f64
        );
    }
}

fn main() {
    saw_teeth();
    let cases = vec![
        (
            "star, 1200 edges",
            Window::from_polygons(
                vec![vec![
                    ring(1000, 10_000.0, 0.3, false),
                    ring(200, 2_000.0, 0.1, true),
                ]],
                WindowOrigin::File,
            )
            .unwrap(),
        ),
        (
            "square with hole, 8 edges",
            Window::rectangle_with_hole(
                [0.0, 0.0, 10_000.0, 10_000.0],
                [4000.0, 4000.0, 6000.0, 6000.0],
            )
            .unwrap(),
        ),
        (
            "rectangle, 4 edges",
            Window::rectangle(0.0, 0.0, 10_000.0, 6000.0).unwrap(),
        ),
    ];
    let m = 200_000;
    for (name, w) in cases {
        let g = to_geo(&w);
        let [x0, y0, x1, y1] = w.bbox();
        let mut rng = rng_from_seed(1);
        let q: Vec<(f64, f64)> = (0..m)
            .map(|_| {
                (
                    x0 + (x1 - x0) * (1.2 * rng.random::<f64>() - 0.1),
                    y0 + (y1 - y0) * (1.2 * rng.random::<f64>() - 0.1),
                )
            })
            .collect();
        let t = Instant::now();
        let ours = q.iter().filter(|&&(x, y)| w.contains(x, y)).count();
        let t_ours = t.elapsed().as_secs_f64();
        let t = Instant::now();
        let theirs = q
            .iter()
            .filter(|&&(x, y)| g.intersects(&geo::Coord { x, y }))
            .count();
        let t_geo = t.elapsed().as_secs_f64();
        println!(
            "{name}: {m} points, window {:.1} ms ({ours} inside), geo {:.1} ms ({theirs} inside), ratio {:.1}",
            1e3 * t_ours,
            1e3 * t_geo,
            t_geo / t_ours
        );
    }
}
