//! Can this be shared?
//!
//! Published dot maps of case locations have been turned back into home
//! addresses: Brownstein, Cassa & Mandl (2006), "No place to hide — reverse
//! identification of patients from published maps", *N Engl J Med*
//! 355(16):1741–1742, doi:10.1056/NEJMc061891. Lowering the map resolution
//! does not protect. This module makes the outputs that leave the page safe
//! by construction, measures the risk that remains, and shows what the
//! masking costs the analysis.
//!
//! * [`donut`]: move each point by a random distance between a minimum and a
//!   maximum, in a random direction, staying inside the study area
//!   (Hampton et al. 2010).
//! * [`kanon`]: choose each point's displacement so that at least `k`
//!   candidate addresses are as close to the masked point as the true one
//!   (spatial k-anonymity; Allshouse et al. 2010).
//! * [`aggregate`]: counts per square or hexagonal cell, or per zone, with
//!   population and rates.
//! * [`suppress`](mod@suppress): small-count suppression, complementary suppression so no
//!   hidden count can be recovered from the totals, and an audit that checks it.
//! * [`cost`]: the same summaries on the original and the masked points, side by
//!   side (nearest-neighbour distances, Clark–Evans R, centre, spread, how far
//!   the intensity surface moves).
//! * [`dates`]: date shifting for sharing (a random whole number of days
//!   per event within ±N, the same for both ends of a window).
//! * [`disclosure`]: whether a kernel surface's bandwidth exposes isolated events.
//! * [`shared`]: what the sharing tools keep (one masked copy, one table) and
//!   their summaries; counting a study's events per cell or zone.
//! * [`report`]: the self-contained HTML report, what it may hold, and the
//!   cautions.
//! * [`export`]: CSV and GeoJSON writers with a metadata header, and
//!   [`export::what_leaves`], a preview of exactly what a file will contain.
//!
//! # Safe by construction
//! * Masked coordinates are the only coordinates any export writes, except
//!   the one explicit unmasked export, which carries the label
//!   "unmasked, internal use only" inside the file.
//! * A point that cannot be masked as asked (no place inside the study area
//!   after the allowed number of tries, or a k target that cannot be reached)
//!   is **left out and listed**, never passed on unmasked.
//! * Export metadata records the masking settings but never the seed: with
//!   the seed anyone could replay the random displacements and undo them.
//! * Mask once: releasing several independently masked copies of the same
//!   points lets an attacker average the copies back towards the true
//!   locations (Cassa, Wieland & Mandl 2008, *Int J Health Geogr* 7:45).
//!
//! The study area (which masked points must stay inside) and aggregation
//! zones are [`Window`](crate::window::Window)s: one containment rule
//! (the boundary counts as inside) for every module.
//!
//! All coordinates are planar metres (see [`crate::projection`]). Distances
//! follow [`crate::index`]: `(dx² + dy²).sqrt() ≤ r` counts as within r.

pub mod aggregate;
pub mod cost;
pub mod dates;
pub mod disclosure;
pub mod donut;
pub mod export;
pub mod kanon;
pub mod report;
pub mod shared;
pub mod suppress;

pub use aggregate::{AggregateParams, Aggregation, CellShape, HexOrientation};
pub use cost::{compare, CostParams, MaskingCost};
pub use donut::{donut_mask, DistanceLaw, DonutParams};
pub use export::{what_leaves, ExportFormat, ExportOptions, ExportPreview};
pub use kanon::{kanon_mask, KAnonParams, KAnonReport};
pub use suppress::{audit, suppress, SuppressedTable, SuppressionParams};

use crate::error::AnalysisError;
use serde::Serialize;

/// The ring without a repeated closing vertex.
pub(crate) fn open_ring(ring: &[[f64; 2]]) -> &[[f64; 2]] {
    if ring.len() >= 2 && ring.first() == ring.last() {
        &ring[..ring.len() - 1]
    } else {
        ring
    }
}

pub(crate) fn bad(name: &str, detail: &str) -> AnalysisError {
    AnalysisError::BadParameter {
        name: name.to_string(),
        detail: detail.to_string(),
    }
}

/// Five-number summary plus mean; quantiles by linear interpolation between
/// order statistics (the default of `numpy.quantile`, Hyndman & Fan type 7).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Spread {
    pub n: usize,
    pub min: f64,
    pub q1: f64,
    pub median: f64,
    pub q3: f64,
    pub max: f64,
    pub mean: f64,
}

impl Spread {
    /// `None` when `values` is empty.
    pub fn of(values: &[f64]) -> Option<Spread> {
        if values.is_empty() {
            return None;
        }
        let mut v = values.to_vec();
        v.sort_by(|a, b| a.total_cmp(b));
        Some(Spread {
            n: v.len(),
            min: v[0],
            q1: quantile_sorted(&v, 0.25),
            median: quantile_sorted(&v, 0.5),
            q3: quantile_sorted(&v, 0.75),
            max: v[v.len() - 1],
            mean: v.iter().sum::<f64>() / v.len() as f64,
        })
    }
}

/// Type-7 quantile of sorted, non-empty data.
pub(crate) fn quantile_sorted(v: &[f64], p: f64) -> f64 {
    let h = (v.len() - 1) as f64 * p;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(v.len() - 1);
    v[lo] + (h - lo as f64) * (v[hi] - v[lo])
}

/// A point that could not be masked as asked, and so is left out of every
/// export (never passed on unmasked).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Unplaced {
    /// 0-based index into the input points.
    pub index: usize,
    /// Why, in a form the page can show.
    pub reason: UnplacedReason,
}

/// Why a point could not be masked.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "code", rename_all = "snake_case")]
pub enum UnplacedReason {
    /// Every one of `tries` candidate locations fell outside the study area
    /// (or in a hole).
    NoPlaceInsideArea { tries: u32 },
    /// Fewer candidate addresses than the target lie within twice the maximum
    /// displacement of the point, so no masked location within the maximum
    /// displacement can reach the target (proof: every address at least as
    /// close to x′ as x is within 2·‖x − x′‖ of x).
    TooFewPopulationNearby {
        found: usize,
        needed: usize,
        radius_m: f64,
    },
    /// `tries` candidates were drawn; the best one inside the area reached
    /// only `best_k` (0 if none was inside).
    TargetNotReached {
        tries: u32,
        best_k: usize,
        target_k: usize,
    },
}

impl std::fmt::Display for UnplacedReason {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            UnplacedReason::NoPlaceInsideArea { tries } => write!(
                f,
                "none of {tries} tries landed inside the study area; left out of exports"
            ),
            UnplacedReason::TooFewPopulationNearby {
                found,
                needed,
                radius_m,
            } => write!(
                f,
                "only {found} candidate addresses within {radius_m:.0} m (twice the maximum \
                 displacement), {needed} needed; left out of exports"
            ),
            UnplacedReason::TargetNotReached {
                tries,
                best_k,
                target_k,
            } => write!(
                f,
                "after {tries} tries the best masked location reached k = {best_k} \
                 (target {target_k}); left out of exports"
            ),
        }
    }
}

/// Masked points ready to share, with their provenance.
///
/// `x`, `y` hold only the points that were placed; `source` links each to its
/// input index (kept in memory for the cost comparison; never exported).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MaskedPoints {
    /// The method and its settings (no seed; see [`MaskedPoints::seed`]).
    pub method: MaskMethod,
    /// Seed of the run, for reproducing it inside the page. Never exported.
    pub seed: u64,
    pub n_input: usize,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    /// 0-based index of the input point behind each masked point.
    #[serde(skip)]
    pub source: Vec<usize>,
    /// Achieved displacement of each placed point, m.
    #[serde(skip)]
    pub displacement_m: Vec<f64>,
    /// Achieved displacement distribution over placed points.
    pub displacement: Option<Spread>,
    /// Points left out, with reasons.
    pub unplaced: Vec<Unplaced>,
    /// Plain-words notes that travel into export cautions (e.g. points kept
    /// below the k target, k estimated from a uniform density).
    pub notes: Vec<String>,
}

/// How the points were masked (echoed into export metadata).
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "method", rename_all = "snake_case")]
pub enum MaskMethod {
    Donut(donut::DonutSettings),
    KAnonymity(kanon::KAnonSettings),
}
