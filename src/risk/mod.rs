//! Cases against the population at risk.
//!
//! Every test elsewhere in the crate compares events with complete spatial
//! randomness. Where people (or houses, or observers) are spread unevenly,
//! events follow them, and "clustered" then says little. The methods here
//! compare cases with controls (a sample of the population at risk) instead:
//!
//! * [`labelling`]: the random labelling test of Diggle & Chetwynd (1991),
//!   D(r) = K_cases(r) − K_controls(r) with Monte Carlo relabellings.
//! * [`nearest`]: the k-nearest-neighbour test of Cuzick & Edwards (1990),
//!   how many of the cases' k nearest neighbours are cases.
//! * [`relative_risk`]: the kernel relative-risk surface of Bithell (1990)
//!   and Kelsall & Diggle (1995), with pointwise tolerance contours and a
//!   global test of constant risk from random labellings.
//! * [`inhomogeneous`]: the inhomogeneous K and L functions of Baddeley,
//!   Møller & Waagepetersen (2000), with the intensity from the population
//!   layer or from the events, against simulated inhomogeneous Poisson patterns.

pub mod inhomogeneous;
pub mod labelling;
pub mod nearest;
pub mod relative_risk;

pub use inhomogeneous::{
    inhomogeneous_k, InhomKJob, InhomKOptions, InhomKResult, InhomKShare, InhomKSimulator,
    InhomOutcome, IntensitySource,
};
pub use labelling::{
    random_labelling, LabelSets, LabellingJob, LabellingOptions, LabellingOutcome, LabellingResult,
    LabellingShare, LabellingSimulator, LabellingStatistic,
};
pub use nearest::{NearestJob, NearestOptions, NearestResult, NearestShare};
pub use relative_risk::{
    RiskBandwidth, RiskSurfaceJob, RiskSurfaceOptions, RiskSurfaceResult, RiskSurfaceShare,
};
