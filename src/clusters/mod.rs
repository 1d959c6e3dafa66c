//! Which points belong together?
//!
//! * [`mod@dbscan`]: DBSCAN (Ester et al. 1996) with scikit-learn's labelling,
//!   a cluster table (members, centre, convex-hull area, density) and hulls.
//! * [`kdist`]: the sorted k-distance curve for choosing `eps`.
//! * [`hull`]: convex hulls (monotone chain).

pub(crate) mod buckets;
pub mod dbscan;
pub mod hull;
pub mod kdist;

pub use dbscan::{dbscan, dbscan_xy, ClusterRow, DbscanOptions, DbscanResult};
pub use kdist::{k_distance_plot, KDistance, KDistanceParams};
