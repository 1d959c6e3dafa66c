//! How is it drawn? Charts as functions of results, generic over a plotters
//! `DrawingBackend`, so they render to canvas in the page and to SVG in tests.
//!
//! * [`envelope`]: Monte Carlo envelope chart of a distance function.

pub mod envelope;

pub use envelope::{envelope_chart, PlotError};
