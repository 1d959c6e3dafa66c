//! Any bytes as an events file (CSV, TSV, GeoJSON: the reader sniffs which),
//! with the default options and with each date order: it must answer with a
//! layer or an error, never panic, never accept more rows than it read, and
//! never keep the end of a from–to window before its start.
#![no_main]
use cloister::input::{read_points, DateOrder, ReadOptions};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    for order in [
        DateOrder::DayMonthYear,
        DateOrder::MonthDayYear,
        DateOrder::YearMonthDay,
    ] {
        let opts = ReadOptions {
            date_order: Some(order),
            ..Default::default()
        };
        if let Ok(layer) = read_points(data, &opts) {
            assert_eq!(layer.x.len(), layer.y.len());
            assert_eq!(layer.x.len(), layer.row.len());
            assert!(layer.x.len() as u64 <= layer.rows_read);
            // A kept window end is never before its start.
            if let (Some(t), Some(e)) = (&layer.time, &layer.time_end) {
                assert_eq!(e.len(), layer.x.len());
                assert!(t.iter().zip(e).all(|(a, b)| !(b < a)));
            }
        }
    }
});
