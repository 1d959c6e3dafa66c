//! Dates and date-times to days since 1970-01-01T00:00Z.
