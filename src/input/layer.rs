//! Builds a [`RawLayer`] from a delimited table, row by row.

use super::{RawLayer, ReadOptions};
use crate::error::InputError;

/// Reads a CSV / semicolon / tab table of points.
pub fn from_csv(text: &str, opts: &ReadOptions) -> Result<RawLayer, InputError> {
    let _ = (text, opts);
    todo!("input::layer::from_csv")
}
