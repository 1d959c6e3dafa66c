//! Date shifting for sharing: each event's date moves by a random whole
//! number of days from −N to +N (uniform, 0 included), the same shift for
//! both ends of an event's from–to window, so a window keeps its length.
//! Seeded: the same seed gives the same shifts. The seed is never written
//! into a file (as for the masking seeds: with it the shifts could be
//! undone).
//!
//! Date shifting is a common practice for sharing health records (no single
//! published source is followed here); it keeps the time between an event's
//! own dates but blurs the time between events by up to 2N days, so
//! near-repeat and other space–time results at gaps of about that size or
//! less are unreliable in a shifted file.
//!
//! ```
//! use cloister::privacy::dates::shift_dates;
//! let s = shift_dates(&[100.0, 200.0], Some(&[103.0, f64::NAN]), 7, 1).unwrap();
//! assert!(s.shift_days.iter().all(|d| d.abs() <= 7));
//! // Both ends of the window move together.
//! assert_eq!(s.end.as_ref().unwrap()[0] - s.start[0], 3.0);
//! ```

use super::bad;
use crate::error::AnalysisError;
use crate::rng::rng_from_seed;
use rand::RngExt;

/// The largest shift a user may ask for, in days.
pub const MAX_SHIFT_DAYS: u32 = 365;

/// Dates after shifting, one per event (NaN where the event had none).
#[derive(Debug, Clone, PartialEq)]
pub struct ShiftedDates {
    pub start: Vec<f64>,
    /// Shifted window ends; `None` when the events have no "to" column.
    pub end: Option<Vec<f64>>,
    /// The shift of each event in days, −N ..= N.
    pub shift_days: Vec<i64>,
    /// N.
    pub max_days: u32,
}

/// Shifts `start` (and `end`) by one random whole number of days per event,
/// uniform in −`max_days` ..= `max_days`, drawn in event order from the
/// generator of `seed`. `max_days` must be 1 to [`MAX_SHIFT_DAYS`].
pub fn shift_dates(
    start: &[f64],
    end: Option<&[f64]>,
    max_days: u32,
    seed: u64,
) -> Result<ShiftedDates, AnalysisError> {
    if !(1..=MAX_SHIFT_DAYS).contains(&max_days) {
        return Err(bad(
            "date_shift_days",
            &format!("must be a whole number of days from 1 to {MAX_SHIFT_DAYS}"),
        ));
    }
    if end.is_some_and(|e| e.len() != start.len()) {
        return Err(bad("dates", "the from and to dates have different lengths"));
    }
    let n = max_days as i64;
    let mut rng = rng_from_seed(seed);
    let shift_days: Vec<i64> = (0..start.len()).map(|_| rng.random_range(-n..=n)).collect();
    let apply = |v: &[f64]| -> Vec<f64> {
        v.iter()
            .zip(&shift_days)
            .map(|(&t, &d)| t + d as f64)
            .collect()
    };
    Ok(ShiftedDates {
        start: apply(start),
        end: end.map(apply),
        shift_days,
        max_days,
    })
}

/// The note an export and a report carry about shifted dates.
pub fn shift_note(max_days: u32) -> String {
    format!(
        "dates shifted: each event's date was moved by a random whole number of days from \
         -{max_days} to +{max_days} (the same for both ends of a from-to window); written to the day"
    )
}

/// The caution that goes with shifted dates.
pub fn shift_caution(max_days: u32) -> String {
    format!(
        "Dates are shifted by up to {max_days} days each way: the time between two events may be \
         off by up to {} days, so near-repeat and other space-time results at time gaps of that \
         size or less are unreliable in this file.",
        2 * max_days
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shifts_are_bounded_whole_days_and_reproducible() {
        let start: Vec<f64> = (0..5000).map(|i| 20000.0 + i as f64 * 0.37).collect();
        for n in [1u32, 3, 30, MAX_SHIFT_DAYS] {
            let s = shift_dates(&start, None, n, 42).unwrap();
            assert!(s.shift_days.iter().all(|d| d.abs() <= n as i64), "n = {n}");
            for ((a, b), d) in start.iter().zip(&s.start).zip(&s.shift_days) {
                assert_eq!(b - a, *d as f64);
            }
            // Both extremes are reached and the middle too (5000 draws).
            assert!(s.shift_days.contains(&(n as i64)) && s.shift_days.contains(&-(n as i64)));
            assert_eq!(
                shift_dates(&start, None, n, 42).unwrap(),
                s,
                "same seed, same shifts"
            );
        }
        let a = shift_dates(&start, None, 30, 1).unwrap();
        let b = shift_dates(&start, None, 30, 2).unwrap();
        assert_ne!(a.shift_days, b.shift_days);
    }

    #[test]
    fn both_ends_move_together() {
        let start = [10.0, 20.0, f64::NAN, 40.0];
        let end = [12.0, f64::NAN, 31.0, 40.0];
        let s = shift_dates(&start, Some(&end), 10, 9).unwrap();
        let e = s.end.as_ref().unwrap();
        assert_eq!(e[0] - s.start[0], 2.0);
        assert!(e[1].is_nan() && s.start[2].is_nan());
        assert_eq!(e[2] - 31.0, s.shift_days[2] as f64);
        assert_eq!(e[3], s.start[3]);
    }

    #[test]
    fn refuses_out_of_range() {
        assert!(shift_dates(&[1.0], None, 0, 1).is_err());
        assert!(shift_dates(&[1.0], None, MAX_SHIFT_DAYS + 1, 1).is_err());
        assert!(shift_dates(&[1.0], Some(&[]), 3, 1).is_err());
    }
}
