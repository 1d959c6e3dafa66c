//! # Cloister: spatial statistics for confidential point events, offline
//!
//! The analysis core of the Cloister page. It is plain Rust with no browser
//! dependencies: it builds and tests natively with `cargo test`, and the
//! `web` module (compiled for `wasm32` only) is the one thin boundary that
//! JavaScript talks to.
//!
//! ## Conventions
//! * All distance work is done in **planar metres**. Longitude/latitude input
//!   is projected first ([`projection`]); projected input is declared with its
//!   unit and converted to metres on intake.
//! * Row numbers in messages are **1-based, as a spreadsheet shows them**: the
//!   CSV header is row 1, the first data record row 2. GeoJSON features are
//!   numbered from 1 in the order of the `features` array.
//! * Every random step takes an explicit seed ([`rng`]); the seed is echoed in
//!   results so a run can be reproduced.
//!
//! ## Map of questions to modules
//! * What did the user give us? → [`input`] (CSV and GeoJSON readers, column
//!   detection, time parsing, row-by-row rejections).
//! * How are coordinates turned into metres? → [`projection`].
//! * Where could an event have fallen? → [`window`] (study area polygons with
//!   holes: area, containment, boundary distance, fallback hulls).
//! * What exactly is being analysed? → [`study`] (projected events, controls and
//!   study area, validated together).
//! * Which points are near each other? → [`index`] (grid index, nearest
//!   neighbours, pairs within a distance).
//! * What does it look like? → [`summary`] (counts, intensity, centre, spread,
//!   ellipse, nearest-neighbour distances, time span, categories).
//! * Is it clustered, and at what distances? → [`distance`] (CSR simulation,
//!   quadrats, Clark–Evans, G/F/J/K/L/g, Monte Carlo envelopes).
//! * Where is it dense? → [`intensity`] (kernel intensity surfaces with edge
//!   correction, bandwidth selection, percent-volume isopleths as polygons).
//! * Which points belong together? → [`clusters`] (DBSCAN with scikit-learn's
//!   labelling, k-distance plot, cluster hulls).
//! * Is this excess more than chance? → [`scan`] (Kulldorff's circular spatial
//!   scan with Monte Carlo p-values, run in batches).
//! * Can this be shared? → [`privacy`] (donut masking, k-anonymity masking,
//!   cell and zone counts with small-count and complementary suppression,
//!   the cost of masking, CSV/GeoJSON exports with a preview of what leaves).
//! * How is it drawn? → [`plot`] (charts generic over a plotters backend).
//! * Which options does each analysis take? → [`params`] (names with units,
//!   defaults, limits and allowed values, in one list per analysis; the
//!   checks, the JS API's `parameterSpec` and the page's limits read it).

#![forbid(unsafe_code)]

pub mod clusters;
pub mod cores;
pub mod distance;
pub mod error;
pub mod index;
pub mod input;
pub mod intensity;
pub mod params;
pub mod plot;
pub mod privacy;
pub mod progress;
pub mod projection;
pub mod risk;
pub mod rng;
pub mod scan;
pub mod spacetime;
pub mod study;
pub mod summary;
pub mod window;

#[cfg(target_arch = "wasm32")]
pub mod web;

pub use error::{AnalysisError, InputError, InputErrorKind, Location};
pub use study::Study;
pub use window::Window;

/// Version of the tool, shown in the page and written into exports.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
