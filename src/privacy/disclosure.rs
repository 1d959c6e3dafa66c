//! Can this surface be shown? A kernel intensity surface with a narrow
//! bandwidth puts a bump on each isolated event: with fewer than
//! [`SURFACE_K`] events (the event itself included) within two kernel SDs,
//! the bump mostly reflects that one event and a handful of others, and can
//! point at a single address.
//!
//! The check is cheap once per study: [`distances_to_kth`] gives each
//! event's distance to its `SURFACE_K`-th nearest (itself counted), and
//! [`surface_disclosure`] counts, for any bandwidth, the events whose
//! distance exceeds twice the kernel's SD.

use crate::clusters::kdist::kth_distances;
use crate::error::AnalysisError;
use serde::Serialize;

/// Fewer than this many events within two kernel SDs of an event and its
/// bump on the surface points at it. Five is a common small-cell threshold
/// in disclosure control (common practice \[CP\], no single source).
pub const SURFACE_K: usize = 5;

/// The outcome of the check for one surface.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurfaceDisclosure {
    /// Radius checked: two kernel SDs, metres.
    pub radius_m: f64,
    pub threshold: usize,
    /// Events with fewer than `threshold` events (themselves included)
    /// within `radius_m`.
    pub exposed_events: usize,
    /// A sentence for the page when any event is exposed.
    pub warning: Option<String>,
}

/// Distance from each event to its [`SURFACE_K`]-th nearest (itself
/// counted); infinite for every event when there are fewer events than that.
pub fn distances_to_kth(x: &[f64], y: &[f64]) -> Result<Vec<f64>, AnalysisError> {
    if x.len() >= SURFACE_K {
        kth_distances(x, y, SURFACE_K)
    } else {
        Ok(vec![f64::INFINITY; x.len()])
    }
}

/// Counts the events a surface drawn with a kernel of SD `kernel_sd_m`
/// would expose, given [`distances_to_kth`].
pub fn surface_disclosure(kth: &[f64], kernel_sd_m: f64) -> SurfaceDisclosure {
    let r = 2.0 * kernel_sd_m;
    let exposed = kth.iter().filter(|&&d| d > r).count();
    SurfaceDisclosure {
        radius_m: r,
        threshold: SURFACE_K,
        exposed_events: exposed,
        warning: (exposed > 0).then(|| {
            format!(
                "{exposed} event(s) have fewer than {SURFACE_K} events (themselves \
                 included) within {r:.0} m, twice the kernel's spread: their bumps on \
                 this surface can point at single addresses. Use a wider bandwidth \
                 before showing or sharing it."
            )
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A tight group of 6 events and one event 1 km away.
    fn group_and_loner() -> (Vec<f64>, Vec<f64>) {
        let mut x = vec![0.0, 10.0, 20.0, 0.0, 10.0, 20.0];
        let mut y = vec![0.0, 0.0, 0.0, 10.0, 10.0, 10.0];
        x.push(1000.0);
        y.push(1000.0);
        (x, y)
    }

    #[test]
    fn a_loner_is_exposed_by_a_narrow_kernel_only() {
        let (x, y) = group_and_loner();
        let kth = distances_to_kth(&x, &y).unwrap();
        assert_eq!(kth.len(), 7);
        // Narrow kernel (SD 15 m, radius 30 m): the group has 5 within 30 m,
        // the loner has only itself.
        let d = surface_disclosure(&kth, 15.0);
        assert_eq!(d.radius_m, 30.0);
        assert_eq!(d.threshold, 5);
        assert_eq!(d.exposed_events, 1);
        let w = d.warning.unwrap();
        assert!(
            w.starts_with("1 event(s) have fewer than 5 events") && w.contains("30 m"),
            "{w}"
        );
        // Very narrow: the group is exposed too.
        assert_eq!(surface_disclosure(&kth, 4.0).exposed_events, 7);
        // Wide enough to reach 4 others from the loner: nobody.
        let wide = surface_disclosure(&kth, 800.0);
        assert_eq!(wide.exposed_events, 0);
        assert!(wide.warning.is_none());
    }

    #[test]
    fn fewer_events_than_the_threshold_are_all_exposed() {
        let kth = distances_to_kth(&[0.0, 1.0, 2.0], &[0.0, 0.0, 0.0]).unwrap();
        assert!(kth.iter().all(|d| d.is_infinite()));
        assert_eq!(surface_disclosure(&kth, 1e6).exposed_events, 3);
        assert_eq!(surface_disclosure(&[], 10.0).exposed_events, 0);
    }
}
