//! Exports for "Can this be shared?" (filled in by its analysis work).
