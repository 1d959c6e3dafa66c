//! Any bytes as a study-area file: a polygon set or an error, never a panic;
//! every ring read has at least four finite positions.
#![no_main]
use cloister::input::read_area;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(area) = read_area(data, None) {
        for poly in &area.polygons {
            for ring in poly {
                assert!(ring.iter().all(|p| p[0].is_finite() && p[1].is_finite()));
            }
        }
    }
});
