//! Close in space, close in time?
//!
//! The space–time analyses share one way in: [`TimedEvents`] turns the
//! study's events into points in metres with one time each (days since
//! 1970-01-01), stating what was left out and why, and [`permute`] draws the
//! permutations of the times that every test here compares with (times are
//! shuffled among the locations, so both the map and the time curve stay
//! exactly as observed; only their pairing changes).

pub mod aoristic;
pub mod events;
pub mod mantel;
pub mod pairs;
pub mod permute;
pub mod scan;
pub mod scan_export;
pub mod stk;
pub mod timeline;

pub use events::{time_fields, TimedEvents, UncertainTimes};
pub use permute::{permutation, permuted_times_batch};
