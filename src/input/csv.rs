//! Delimited text: delimiter detection (`,` `;` tab), quoted fields, decimal comma.
