//! Containment speed: the study area's own banded test against `geo`'s
//! point-in-polygon (`Intersects`, boundary included, as ours), on the same
//! seeded query points. Speeds are printed, never asserted.
//!
//! `cargo run --release --example bench_window`
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

fn main() {
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
            Window::from_polygons(
                vec![vec![
                    vec![
                        [0.0, 0.0],
                        [10_000.0, 0.0],
                        [10_000.0, 10_000.0],
                        [0.0, 10_000.0],
                    ],
                    vec![
                        [4000.0, 4000.0],
                        [6000.0, 4000.0],
                        [6000.0, 6000.0],
                        [4000.0, 6000.0],
                    ],
                ]],
                WindowOrigin::File,
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
