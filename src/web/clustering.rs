//! Exports for "Is it clustered, and at what distances?" (filled in by its analysis work).
