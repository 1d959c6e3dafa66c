//! Which points belong together?
//!
//! * [`mod@dbscan`]: DBSCAN (Ester et al. 1996) with scikit-learn's labelling,
//!   a cluster table (members, centre, convex-hull area, density) and hulls.
//! * [`kdist`]: the sorted k-distance curve for choosing `eps`.
//! * cluster outlines use the crate's one convex hull, [`crate::window::convex_hull`].

pub mod dbscan;
pub mod kdist;

pub use dbscan::{dbscan, dbscan_xy, ClusterRow, DbscanOptions, DbscanResult};
pub use kdist::{k_distance_plot, KDistance, KDistanceParams};
