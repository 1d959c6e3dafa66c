//! Cases against the population at risk.
//!
//! Every test elsewhere in the crate compares events with complete spatial
//! randomness. Where people (or houses, or observers) are spread unevenly,
//! events follow them, and "clustered" then says little. The methods here
//! compare cases with controls (a sample of the population at risk) instead:
//!
//! * [`labelling`]: the random labelling test of Diggle & Chetwynd (1991),
//!   D(r) = K_cases(r) − K_controls(r) with Monte Carlo relabellings.
//! * [`relative_risk`]: the kernel relative-risk surface of Bithell (1990)
//!   and Kelsall & Diggle (1995), with pointwise tolerance contours and a
//!   global test of constant risk from random labellings.

pub mod labelling;
pub mod relative_risk;

pub use labelling::{
    random_labelling, LabelSets, LabellingJob, LabellingOptions, LabellingOutcome, LabellingResult,
};
pub use relative_risk::{RiskBandwidth, RiskSurfaceJob, RiskSurfaceOptions, RiskSurfaceResult};
