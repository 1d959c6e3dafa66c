//! Exports for "Where are the hotspots?" (filled in by its analysis work).
