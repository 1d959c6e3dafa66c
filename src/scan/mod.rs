//! Is this excess more than chance?
//!
//! [`kulldorff`]: Kulldorff's (1997) circular spatial scan statistic for
//! areas of raised risk, with Monte Carlo p-values computed in batches so the
//! page can show progress and cancel.

pub mod kulldorff;
pub mod report;

pub use kulldorff::{
    llr_bernoulli, llr_poisson, resolve_model, ScanCentres, ScanCluster, ScanCost, ScanFaster,
    ScanJob, ScanModel, ScanOptions, ScanRegions, ScanResult, ScanShare, ScanSimulator,
};
pub use report::{ScanClusterReport, ScanReport};
