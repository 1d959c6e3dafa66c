//! Is it clustered, and at what distances?
//!
//! Tests of complete spatial randomness (CSR) in the real study area, each
//! in its own file:
//!
//! * [`csr`]: seeded CSR (binomial) simulation in a polygon with holes, and
//!   the Thomas and Matérn II models used to check power.
//! * [`quadrat`]: quadrat counts clipped to the window, χ² test, index of
//!   dispersion, Monte Carlo p-value.
//! * [`clark_evans`]: Clark–Evans ratio R with and without Donnelly's edge
//!   correction, normal and Monte Carlo p-values.
//! * [`edge`]: edge-correction weights (Ripley isotropic, translation,
//!   border, none).
//! * [`functions`]: G, F, J, K, L and the pair correlation g over a grid of
//!   distances.
//! * [`binned`]: K, L and g with the translation correction from counts on a
//!   fine grid (FFT), for large patterns.
//! * [`envelope`]: Monte Carlo envelopes (pointwise band, global band) and
//!   the MAD and DCLF global tests, run in batches.
//! * [`verdict`]: the plain-language answer with its caveats.
//! * [`runtime`]: how long an envelope run will take, from a quick
//!   measurement, and what faster settings would cost.
//!
//! Conventions: distances in metres; a pair is "within r" when `d ≤ r`
//! (d computed as `sqrt(dx² + dy²)`); every random step is seeded and the
//! seed is echoed in results.

pub(crate) mod acos;
pub mod binned;
pub mod clark_evans;
pub mod csr;
pub mod edge;
pub mod envelope;
pub mod functions;
pub mod quadrat;
pub mod runtime;
pub mod verdict;

pub use clark_evans::{
    clark_evans, clark_evans_from_mean, ClarkEvansParams, ClarkEvansResult, ClarkEvansStats,
};
pub use csr::{simulate_csr, simulate_matern2, simulate_thomas, stream_seed, ThomasParams};
pub use edge::{Correction, NnCorrection};
pub use envelope::{
    envelope, monte_carlo_p, EnvelopeJob, EnvelopeOptions, EnvelopeParams, EnvelopeResult,
    EnvelopeSimulator, Estimator, GlobalTest, Reference, SimulationShare, SummaryFunction,
    AUTO_BINNED_PAIRS,
};
pub use functions::{distance_functions, DistanceFunctions, FunctionParams};
pub use quadrat::{quadrat_from_counts, quadrat_test, QuadratParams, QuadratResult, QuadratStats};
pub use runtime::{estimate_envelope_cost, EnvelopeCost, FasterSetting};
pub use verdict::{Departure, DistanceRange, Outcome, Verdict};
