//! Any text as a date or date-time, in each date order: parsed or not, never
//! a panic, and a parsed value is finite.
#![no_main]
use cloister::input::time::parse_time;
use cloister::input::DateOrder;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    for order in [
        DateOrder::DayMonthYear,
        DateOrder::MonthDayYear,
        DateOrder::YearMonthDay,
    ] {
        if let Some(t) = parse_time(text, order) {
            assert!(format!("{t:?}").len() > 0);
        }
    }
});
