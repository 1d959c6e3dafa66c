//! The study-area builder on arbitrary rings: the bytes are read as groups of
//! little-endian f64 coordinates (one ring per 16 pairs at most, up to four
//! rings), then `Window::from_polygons` must give a window or an error, never
//! a panic; a window answers its area and containment.
#![no_main]
use cloister::window::{Window, WindowOrigin};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let vals: Vec<f64> = data
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes(c.try_into().unwrap()))
        .collect();
    let pts: Vec<[f64; 2]> = vals.chunks_exact(2).map(|p| [p[0], p[1]]).collect();
    if pts.len() < 3 {
        return;
    }
    let rings: Vec<Vec<[f64; 2]>> = pts.chunks(16).take(4).map(|c| c.to_vec()).collect();
    let polygons = vec![rings];
    let Ok(w) = Window::from_polygons(polygons, WindowOrigin::File) else {
        return;
    };
    let a = w.area();
    assert!(a.is_finite() && a > 0.0);
    let b = w.bbox();
    let (cx, cy) = ((b[0] + b[2]) / 2.0, (b[1] + b[3]) / 2.0);
    let _ = w.contains(cx, cy);
});
