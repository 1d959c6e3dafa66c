//! The events a space–time analysis uses: a location and one time each.
//!
//! An event's time is either an instant (a date, or a date and clock time)
//! or a window: known only to lie between a "from" and a "to" (a burglary
//! found after a weekend). The tests need one time per event, so a window
//! is either placed at its midpoint or the event is left out when the
//! window is longer than a limit ([`UncertainTimes`]); the choice and its
//! counts travel with every result. Events without a usable time are left
//! out and counted.

use crate::error::AnalysisError;
use crate::params::Field;
use crate::study::Study;
use serde::{Deserialize, Serialize};

/// What a space–time test does with an event known only within a window.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum UncertainTimes {
    /// Leave out every event whose window is longer than the limit
    /// (`max_window_days`); shorter windows are placed at their midpoint.
    #[default]
    LeaveOut,
    /// Place every window at its midpoint, however long (the limit is not
    /// used).
    Midpoint,
}

/// The longest from–to window every space–time analysis uses by default
/// (days): a weekend and a few days either side. Common practice, no
/// single source; one default for every analysis so that their results
/// rest on the same events.
pub const DEFAULT_MAX_WINDOW_DAYS: f64 = 7.0;

/// The two options every space–time analysis takes for uncertain times
/// (declared in its `Params::fields()`): `uncertain_times` and
/// `max_window_days`.
pub fn time_fields() -> Vec<Field> {
    vec![
        Field::choice(
            "uncertain_times",
            &["leave_out", "midpoint"],
            "events known only between a from and a to date: leave_out = left out when the window is longer than max_window_days, placed at its middle otherwise; midpoint = every window placed at its middle, however long",
        ),
        Field::number(
            "max_window_days",
            Some("days"),
            "with uncertain_times = leave_out: the longest from–to window still used (placed at its middle); longer windows are left out",
        )
        .range(0.0, 3660.0),
    ]
}

/// Events with one time each, in metres and days.
#[derive(Debug, Clone, PartialEq)]
pub struct TimedEvents {
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    /// Days since 1970-01-01T00:00Z (a window's midpoint where it had one).
    pub t: Vec<f64>,
    /// Index of each used event among the study's events.
    pub index: Vec<usize>,
    /// Events left out because their time is missing or unreadable.
    pub without_time: usize,
    /// Events left out because their window is longer than the limit.
    pub window_too_long: usize,
    /// Events with a window placed at its midpoint.
    pub at_midpoint: usize,
    pub rule: UncertainTimes,
    pub max_window_days: f64,
}

/// What a result says about the times it used (serialised with it).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TimeUseReport {
    pub events_used: usize,
    pub without_time: usize,
    pub window_too_long: usize,
    pub at_midpoint: usize,
    pub uncertain_times: UncertainTimes,
    pub max_window_days: f64,
    /// The same in one plain sentence for the page.
    pub statement: String,
}

impl TimedEvents {
    /// The study's events with a usable time. `Err(NothingLoaded)` without
    /// a time column; `Err(TooFewPoints)` with fewer than `min_events` left.
    pub fn from_study(
        study: &Study,
        rule: UncertainTimes,
        max_window_days: f64,
        min_events: usize,
    ) -> Result<TimedEvents, AnalysisError> {
        let ev = &study.events;
        let start = ev.time().ok_or_else(|| AnalysisError::NothingLoaded {
            what: "events with a time column (dates)".into(),
        })?;
        let end = ev.time_end();
        if !(max_window_days.is_finite() && max_window_days >= 0.0) {
            return Err(crate::params::bad(
                "max_window_days",
                "must be a number of days, 0 or more",
            ));
        }
        let mut out = TimedEvents {
            x: Vec::new(),
            y: Vec::new(),
            t: Vec::new(),
            index: Vec::new(),
            without_time: 0,
            window_too_long: 0,
            at_midpoint: 0,
            rule,
            max_window_days,
        };
        for (i, &s) in start.iter().enumerate() {
            let e = end.and_then(|e| e.get(i).copied()).unwrap_or(s);
            let t = if !s.is_finite() && !e.is_finite() {
                out.without_time += 1;
                continue;
            } else if !s.is_finite() || !e.is_finite() || s == e {
                // One end only, or an instant: that time.
                if s.is_finite() {
                    s
                } else {
                    e
                }
            } else {
                let (a, b) = if s <= e { (s, e) } else { (e, s) };
                if rule == UncertainTimes::LeaveOut && b - a > max_window_days {
                    out.window_too_long += 1;
                    continue;
                }
                out.at_midpoint += 1;
                0.5 * (a + b)
            };
            out.x.push(ev.x()[i]);
            out.y.push(ev.y()[i]);
            out.t.push(t);
            out.index.push(i);
        }
        if out.t.len() < min_events {
            return Err(AnalysisError::TooFewPoints {
                needed: min_events,
                found: out.t.len(),
            });
        }
        Ok(out)
    }

    /// From plain vectors (tests, benchmarks): every event used as given.
    pub fn from_xyt(x: Vec<f64>, y: Vec<f64>, t: Vec<f64>) -> Option<TimedEvents> {
        if x.len() != y.len() || x.len() != t.len() {
            return None;
        }
        if x.iter().chain(&y).chain(&t).any(|v| !v.is_finite()) {
            return None;
        }
        let n = x.len();
        Some(TimedEvents {
            x,
            y,
            t,
            index: (0..n).collect(),
            without_time: 0,
            window_too_long: 0,
            at_midpoint: 0,
            rule: UncertainTimes::Midpoint,
            max_window_days: 0.0,
        })
    }

    pub fn len(&self) -> usize {
        self.t.len()
    }
    pub fn is_empty(&self) -> bool {
        self.t.is_empty()
    }

    /// First and last time (days); `None` when empty.
    pub fn span(&self) -> Option<(f64, f64)> {
        let lo = self.t.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = self.t.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        (lo <= hi).then_some((lo, hi))
    }

    /// What was used and left out, for a result.
    pub fn report(&self) -> TimeUseReport {
        let mut parts = vec![format!("{} events with a time used", self.len())];
        if self.without_time > 0 {
            parts.push(format!(
                "{} without a usable time left out",
                self.without_time
            ));
        }
        if self.window_too_long > 0 {
            parts.push(format!(
                "{} known only within a window longer than {} days left out",
                self.window_too_long, self.max_window_days
            ));
        }
        if self.at_midpoint > 0 {
            parts.push(format!(
                "{} known only within a window placed at its midpoint",
                self.at_midpoint
            ));
        }
        TimeUseReport {
            events_used: self.len(),
            without_time: self.without_time,
            window_too_long: self.window_too_long,
            at_midpoint: self.at_midpoint,
            uncertain_times: self.rule,
            max_window_days: self.max_window_days,
            statement: format!("{}.", parts.join("; ")),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn from_xyt_refuses_mismatch_and_nan() {
        assert!(TimedEvents::from_xyt(vec![0.0], vec![0.0, 1.0], vec![0.0]).is_none());
        assert!(TimedEvents::from_xyt(vec![0.0], vec![0.0], vec![f64::NAN]).is_none());
        let e = TimedEvents::from_xyt(vec![0.0, 1.0], vec![0.0, 1.0], vec![3.0, 1.0]).unwrap();
        assert_eq!(e.span(), Some((1.0, 3.0)));
        assert_eq!(e.report().events_used, 2);
    }
}
