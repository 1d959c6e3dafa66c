//! Masking to a spatial k-anonymity target.
//!
//! Spatial k-anonymity of a masked point x′ whose true location is x (docs/methods.md#privacy
//!  operational definition \[M/CP\], after Sweeney 2002 and its spatial use
//! in Hampton et al. 2010):
//!
//! k = #{candidate addresses h : ‖h − x′‖ ≤ ‖x − x′‖},
//!
//! the number of addresses at least as close to the masked point as the true
//! one. Allshouse, Fitch, Hampton, Gesink, Doherty, Leone, Serre & Miller
//! (2010), "Geomasking sensitive health data and privacy protection: an
//! evaluation using an E911 database", *Geocarto International*
//! 25(6):443–452, doi:10.1080/10106049.2010.496496, showed that k estimated
//! from a uniform density over-states protection where housing is uneven, and
//! suggested tripling the minimum displacement area. So k is computed against
//! a population layer (addresses, controls) when one is loaded; otherwise
//! against a user-given uniform residential density D, where E\[k\] ≈ D·π·d² and
//! the minimum displacement is r_min = √(k/(π·D)).
//!
//! # Parameters ([`KAnonParams`])
//! * `target_k` (default 20 \[CP example, no source\]); `r_min_m` (a floor,
//!   default 0) and `r_max_m` (default 1000 m); `law`, `seed`, `max_tries`.
//! * `density_per_km2`: used only when no population layer is given.
//! * `area_factor`: multiplies the displacement *area* in density mode
//!   (Allshouse et al. 2010 suggest 3, i.e. r_min × √3; default 1).
//! * `population_contains_events`: false (default) when the population layer
//!   does not hold the events' own addresses (controls): then k counts the
//!   true address itself once, k = 1 + #{layer points in the disc}. True when
//!   the layer is an address list that includes the cases' addresses.
//! * `keep_below_target`: false (default) leaves out points that cannot reach
//!   the target; true places them at their best candidate and lists them.
//!
//! # Returns
//! [`KAnonReport`]: the masked points, each exported point's achieved k, the
//! k distribution (min, 5th percentile, median, share below target), and
//! exactly which points could not reach the target and why
//! ([`UnplacedReason`]).
//!
//! # Algorithm (population mode), per point x
//! 1. Count layer points within 2·r_max of x. If even that cannot reach the
//!    target, no masked location within r_max can (every h with
//!    ‖h − x′‖ ≤ ‖x − x′‖ = d satisfies ‖h − x‖ ≤ 2d): report
//!    `too_few_population_nearby`.
//! 2. Local minimum distance ρ = distance from x to the (k − self)-th nearest
//!    layer point (the radius that holds k addresses around x; under locally
//!    even density a disc of that radius around x′ holds about as many);
//!    r_lo = min(max(r_min, ρ), max(r_min, r_max/2)). The lower edge is
//!    never raised above half the maximum shift (unless the user's own r_min
//!    is higher): where addresses are sparse, ρ can exceed r_max, and a donut
//!    [r_max, r_max) would shift every such point by exactly r_max, putting
//!    its true location on a known circle around the shared one.
//! 3. Draw candidates from the donut [r_lo, r_max) with the chosen law and a
//!    uniform direction; accept the first one inside the study area whose k
//!    reaches the target. After `max_tries`, report `target_not_reached` with
//!    the best k seen (or `no_place_inside_area` if no candidate was inside).
//!
//! The accepted location is thus a draw from the donut conditioned on
//! reaching the target inside the study area.
//!
//! # Density mode
//! r_lo = max(r_min, √(area_factor·k/(π·D))); if that exceeds r_max the run is
//! refused with a message; otherwise a donut run on [r_lo, r_max). The
//! reported k is the expectation D·π·d² at the achieved displacement (not a
//! count: no addresses are known), and the report says so.
//!
//! # Notes
//! Grid-indexed counts: O(n·tries·m) with m layer points per disc.

use super::donut::{draw_distance, DistanceLaw};
use super::{bad, MaskMethod, MaskedPoints, Spread, Unplaced, UnplacedReason};
use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::rng::rng_from_seed;
use crate::window::Window;
use rand::RngExt;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Settings of a k-anonymity run.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct KAnonParams {
    pub target_k: usize,
    pub r_min_m: f64,
    pub r_max_m: f64,
    pub law: DistanceLaw,
    pub seed: u64,
    pub max_tries: u32,
    pub density_per_km2: Option<f64>,
    pub area_factor: f64,
    pub population_contains_events: bool,
    pub keep_below_target: bool,
}

impl Default for KAnonParams {
    fn default() -> Self {
        KAnonParams {
            target_k: 20,
            r_min_m: 0.0,
            r_max_m: 1000.0,
            law: DistanceLaw::AreaUniform,
            seed: 1,
            max_tries: 1000,
            density_per_km2: None,
            area_factor: 1.0,
            population_contains_events: false,
            keep_below_target: false,
        }
    }
}

/// What k is measured against (the JS API's `against`, chosen by the
/// session: the loaded population layer, or `density_per_km2`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Against {
    Population,
    Density,
}

impl crate::params::Params for KAnonParams {
    const NAME: &'static str = "maskKAnonymity";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::Field;
        let mut f = vec![Field::integer(
            "target_k",
            "candidate addresses at least as close as the true one",
        )
        .range(1.0, 10_000.0)];
        f.extend(super::donut::mask_fields(
            "smallest displacement (raised where the target needs more)",
        ));
        f.extend([
            Field::number(
                "density_per_km2",
                Some("per km²"),
                "residential density, when k is measured against density",
            )
            .above(0.0, Some(1e6))
            .optional(),
            Field::number("area_factor", None, "safety factor on the area the target needs")
                .range(1.0, 100.0),
            Field::boolean(
                "population_contains_events",
                "the population layer includes the events themselves",
            ),
            Field::boolean(
                "keep_below_target",
                "keep points that cannot reach the target (marked) instead of leaving them out",
            ),
            Field::choice(
                "against",
                &["population", "density"],
                "measure k against the loaded population layer, or a residential density; empty = population when one is loaded",
            )
            .optional()
            .session(),
        ]);
        f
    }
    fn check(&self) -> Result<(), AnalysisError> {
        super::donut::check_radii(self.r_min_m, self.r_max_m, self.max_tries)
    }
}

/// Against what k was measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum KBasis {
    /// Counted against a loaded population layer.
    PopulationLayer,
    /// Expected under a uniform residential density (not counted).
    UniformDensity,
}

/// What a k-anonymity run records about itself (exported; no seed).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct KAnonSettings {
    pub target_k: usize,
    pub basis: KBasis,
    pub r_min_m: f64,
    pub r_max_m: f64,
    pub law: DistanceLaw,
    pub max_tries: u32,
    pub density_per_km2: Option<f64>,
    pub area_factor: f64,
    pub population_points: Option<usize>,
    pub population_contains_events: bool,
    pub keep_below_target: bool,
    /// Density mode: the minimum displacement actually used, m.
    pub r_min_used_m: Option<f64>,
}

/// Achieved k over the exported points.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct KSummary {
    pub n: usize,
    pub min: f64,
    /// 5th percentile (type 7), reported because docs/methods.md#privacy asks for it.
    pub p05: f64,
    pub median: f64,
    /// Share of exported points with k below the target (0 unless
    /// `keep_below_target`).
    pub share_below_target: f64,
}

/// Result of [`kanon_mask`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KAnonReport {
    pub masked: MaskedPoints,
    pub basis: KBasis,
    pub target_k: usize,
    /// Achieved k of each exported point (expected k in density mode).
    pub k: Vec<f64>,
    pub k_summary: Option<KSummary>,
    /// Points placed below the target (only with `keep_below_target`), with why.
    pub below_target: Vec<Unplaced>,
}

/// r_min = √(k/(π·D)) for a uniform density `density_per_km2` (docs/methods.md#privacy;
/// D = 1000/km², k = 50 → 126.16 m).
///
/// ```
/// use cloister::privacy::kanon::r_min_for_k;
/// assert!((r_min_for_k(50.0, 1000.0) - 126.16).abs() < 0.005);
/// // Allshouse et al. (2010): triple the area, i.e. × √3.
/// assert!((r_min_for_k(3.0 * 50.0, 1000.0) - 218.51).abs() < 0.005);
/// ```
pub fn r_min_for_k(k: f64, density_per_km2: f64) -> f64 {
    (k / (PI * density_per_km2 / 1e6)).sqrt()
}

/// k of masked point (mx, my) for the true point (x, y) against the layer.
/// Distances as in [`crate::index`]: `(dx² + dy²).sqrt()`, within when `≤ d`.
pub fn k_at(grid: &GridIndex, x: f64, y: f64, mx: f64, my: f64, self_count: usize) -> usize {
    let d = ((x - mx).powi(2) + (y - my).powi(2)).sqrt();
    count_within(grid, mx, my, d) + self_count
}

fn count_within(grid: &GridIndex, x: f64, y: f64, r: f64) -> usize {
    let mut n = 0;
    grid.for_each_within(x, y, r, |_, _| n += 1);
    n
}

/// Distance to the `k`-th nearest layer point if it lies within `r_max`.
fn kth_distance_within(grid: &GridIndex, x: f64, y: f64, k: usize, r_max: f64) -> Option<f64> {
    if k == 0 {
        return Some(0.0);
    }
    let mut d = Vec::new();
    grid.for_each_within(x, y, r_max, |_, v| d.push(v));
    if d.len() < k {
        return None;
    }
    d.sort_by(|a, b| a.total_cmp(b));
    Some(d[k - 1])
}

/// Masks points so each reaches a spatial k-anonymity target. `population`
/// is the layer of candidate addresses `(x, y)`, if loaded. See module docs.
pub fn kanon_mask(
    x: &[f64],
    y: &[f64],
    population: Option<(&[f64], &[f64])>,
    region: &Window,
    p: &KAnonParams,
) -> Result<KAnonReport, AnalysisError> {
    // Every field in its declared range (the floor of r_max_m included).
    crate::params::Params::validate(p)?;
    if x.len() != y.len() {
        return Err(bad("points", "x and y have different lengths"));
    }
    if p.target_k == 0 {
        return Err(bad("target k", "must be at least 1"));
    }
    if !(p.area_factor.is_finite() && p.area_factor >= 1.0) {
        return Err(bad("area factor", "must be a number ≥ 1"));
    }
    match population {
        Some((px, py)) => {
            if px.len() != py.len() {
                return Err(bad("population", "x and y have different lengths"));
            }
            Ok(population_mode(x, y, px, py, region, p))
        }
        None => density_mode(x, y, region, p),
    }
}

fn population_mode(
    x: &[f64],
    y: &[f64],
    px: &[f64],
    py: &[f64],
    region: &Window,
    p: &KAnonParams,
) -> KAnonReport {
    let grid = GridIndex::new(px, py);
    let self_count = usize::from(!p.population_contains_events);
    let need_layer = p.target_k.saturating_sub(self_count);
    let mut rng = rng_from_seed(p.seed);
    let settings = KAnonSettings {
        target_k: p.target_k,
        basis: KBasis::PopulationLayer,
        r_min_m: p.r_min_m,
        r_max_m: p.r_max_m,
        law: p.law,
        max_tries: p.max_tries,
        density_per_km2: None,
        area_factor: p.area_factor,
        population_points: Some(px.len()),
        population_contains_events: p.population_contains_events,
        keep_below_target: p.keep_below_target,
        r_min_used_m: None,
    };
    let mut m = empty_masked(MaskMethod::KAnonymity(settings), p.seed, x.len());
    let mut ks = Vec::new();
    let mut below = Vec::new();
    for i in 0..x.len() {
        let reach = 2.0 * p.r_max_m;
        let found = count_within(&grid, x[i], y[i], reach);
        if found + self_count < p.target_k {
            m.unplaced.push(Unplaced {
                index: i,
                reason: UnplacedReason::TooFewPopulationNearby {
                    found: found + self_count,
                    needed: p.target_k,
                    radius_m: reach,
                },
            });
            continue;
        }
        let rho =
            kth_distance_within(&grid, x[i], y[i], need_layer, p.r_max_m).unwrap_or(p.r_max_m);
        // Keep the donut wide: never a fixed-distance shift (see module docs).
        let r_lo = p.r_min_m.max(rho).min(p.r_min_m.max(0.5 * p.r_max_m));
        let mut best: Option<(usize, f64, f64, f64)> = None;
        let mut accepted = None;
        for _ in 0..p.max_tries {
            let theta = 2.0 * PI * rng.random::<f64>();
            let d = draw_distance(&mut rng, p.law, r_lo, p.r_max_m);
            let (mx, my) = (x[i] + d * theta.cos(), y[i] + d * theta.sin());
            if !region.contains(mx, my) {
                continue;
            }
            let k = k_at(&grid, x[i], y[i], mx, my, self_count);
            if k >= p.target_k {
                accepted = Some((k, mx, my, d));
                break;
            }
            if best.is_none_or(|b| k > b.0) {
                best = Some((k, mx, my, d));
            }
        }
        let place = |m: &mut MaskedPoints, ks: &mut Vec<f64>, c: (usize, f64, f64, f64)| {
            m.x.push(c.1);
            m.y.push(c.2);
            m.source.push(i);
            m.displacement_m.push(c.3);
            ks.push(c.0 as f64);
        };
        match (accepted, best) {
            (Some(c), _) => place(&mut m, &mut ks, c),
            (None, None) => m.unplaced.push(Unplaced {
                index: i,
                reason: UnplacedReason::NoPlaceInsideArea { tries: p.max_tries },
            }),
            (None, Some(b)) => {
                let reason = UnplacedReason::TargetNotReached {
                    tries: p.max_tries,
                    best_k: b.0,
                    target_k: p.target_k,
                };
                if p.keep_below_target {
                    place(&mut m, &mut ks, b);
                    below.push(Unplaced { index: i, reason });
                } else {
                    m.unplaced.push(Unplaced { index: i, reason });
                }
            }
        }
    }
    m.displacement = Spread::of(&m.displacement_m);
    if !below.is_empty() {
        m.notes.push(format!(
            "{} of these points did not reach the k-anonymity target of {} and were kept \
             at their best masked location",
            below.len(),
            p.target_k
        ));
    }
    let k_summary = summarise_k(&ks, p.target_k);
    KAnonReport {
        masked: m,
        basis: KBasis::PopulationLayer,
        target_k: p.target_k,
        k: ks,
        k_summary,
        below_target: below,
    }
}

fn density_mode(
    x: &[f64],
    y: &[f64],
    region: &Window,
    p: &KAnonParams,
) -> Result<KAnonReport, AnalysisError> {
    let Some(dens) = p.density_per_km2 else {
        return Err(bad(
            "population",
            "load a population layer or give a residential density (per km²)",
        ));
    };
    if !(dens.is_finite() && dens > 0.0) {
        return Err(bad("residential density", "must be a number > 0 per km²"));
    }
    let r_needed = r_min_for_k(p.target_k as f64 * p.area_factor, dens);
    let r_lo = p.r_min_m.max(r_needed);
    if r_lo > p.r_max_m {
        return Err(bad(
            "maximum displacement",
            &format!(
                "k = {} at {dens} per km² (area factor {}) needs at least {r_lo:.1} m of \
                 displacement, more than the maximum {} m",
                p.target_k, p.area_factor, p.r_max_m
            ),
        ));
    }
    let dp = super::DonutParams {
        r_min_m: r_lo,
        r_max_m: p.r_max_m,
        law: p.law,
        seed: p.seed,
        max_tries: p.max_tries,
    };
    let mut m = super::donut_mask(x, y, region, &dp)?;
    m.method = MaskMethod::KAnonymity(KAnonSettings {
        target_k: p.target_k,
        basis: KBasis::UniformDensity,
        r_min_m: p.r_min_m,
        r_max_m: p.r_max_m,
        law: p.law,
        max_tries: p.max_tries,
        density_per_km2: Some(dens),
        area_factor: p.area_factor,
        population_points: None,
        population_contains_events: false,
        keep_below_target: p.keep_below_target,
        r_min_used_m: Some(r_lo),
    });
    m.notes.push(format!(
        "k-anonymity of {} is expected under a uniform density of {dens} addresses per km², \
         not counted against addresses; where housing is uneven this over-states protection \
         (Allshouse et al. 2010)",
        p.target_k
    ));
    let ks: Vec<f64> = m
        .displacement_m
        .iter()
        .map(|d| dens / 1e6 * PI * d * d)
        .collect();
    let k_summary = summarise_k(&ks, p.target_k);
    Ok(KAnonReport {
        masked: m,
        basis: KBasis::UniformDensity,
        target_k: p.target_k,
        k: ks,
        k_summary,
        below_target: Vec::new(),
    })
}

fn empty_masked(method: MaskMethod, seed: u64, n: usize) -> MaskedPoints {
    MaskedPoints {
        method,
        seed,
        n_input: n,
        x: Vec::new(),
        y: Vec::new(),
        source: Vec::new(),
        displacement_m: Vec::new(),
        displacement: None,
        unplaced: Vec::new(),
        notes: Vec::new(),
    }
}

fn summarise_k(ks: &[f64], target: usize) -> Option<KSummary> {
    if ks.is_empty() {
        return None;
    }
    let mut v = ks.to_vec();
    v.sort_by(|a, b| a.total_cmp(b));
    // Tolerance for the expected-k case, where k is real-valued and r_min
    // was solved from it.
    let below = v.iter().filter(|&&k| k < target as f64 - 1e-9).count();
    Some(KSummary {
        n: v.len(),
        min: v[0],
        p05: super::quantile_sorted(&v, 0.05),
        median: super::quantile_sorted(&v, 0.5),
        share_below_target: below as f64 / v.len() as f64,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::Window;

    #[test]
    fn r_min_check_values_methods_s11() {
        // docs/methods.md#privacy [C]: D = 1000/km², k = 50 → 126.16 m; Allshouse et al.
        // (2010) tripled area → × √3 = 218.51 m.
        assert!((r_min_for_k(50.0, 1000.0) - 126.16).abs() < 0.005);
        assert!((r_min_for_k(150.0, 1000.0) - 218.51).abs() < 0.005);
    }

    #[test]
    fn density_mode_uses_r_min_and_refuses_impossible() {
        let area = Window::rectangle(0.0, 0.0, 10_000.0, 10_000.0).unwrap();
        let p = KAnonParams {
            target_k: 50,
            density_per_km2: Some(1000.0),
            r_max_m: 400.0,
            ..Default::default()
        };
        let r = kanon_mask(&[5000.0; 20], &[5000.0; 20], None, &area, &p).unwrap();
        assert!(r.masked.displacement_m.iter().all(|&d| d >= 126.15));
        assert_eq!(r.k_summary.unwrap().share_below_target, 0.0);
        assert!(r.k_summary.unwrap().min >= 50.0 - 1e-6);
        let p2 = KAnonParams {
            r_max_m: 100.0,
            ..p
        };
        let e = kanon_mask(&[5000.0], &[5000.0], None, &area, &p2).unwrap_err();
        assert!(e.to_string().contains("126.2"));
        // Allshouse et al. (2010): tripled area → r_min × √3 = 218.51 m.
        let p4 = KAnonParams {
            area_factor: 3.0,
            ..p
        };
        let r4 = kanon_mask(&[5000.0; 20], &[5000.0; 20], None, &area, &p4).unwrap();
        assert!(r4.masked.displacement_m.iter().all(|&d| d >= 218.50));
        match r4.masked.method {
            MaskMethod::KAnonymity(s) => {
                assert!((s.r_min_used_m.unwrap() - 218.51).abs() < 0.005)
            }
            _ => panic!("wrong method"),
        }
        assert!(!r4.masked.notes.is_empty());
        let p3 = KAnonParams {
            density_per_km2: None,
            ..p
        };
        assert!(kanon_mask(&[5000.0], &[5000.0], None, &area, &p3).is_err());
    }

    #[test]
    fn population_mode_empty_layer_reports_every_point() {
        let area = Window::rectangle(0.0, 0.0, 10_000.0, 10_000.0).unwrap();
        let p = KAnonParams::default();
        let r = kanon_mask(&[1.0, 2.0], &[1.0, 2.0], Some((&[], &[])), &area, &p).unwrap();
        assert!(r.masked.x.is_empty());
        assert_eq!(r.masked.unplaced.len(), 2);
        assert!(matches!(
            r.masked.unplaced[0].reason,
            UnplacedReason::TooFewPopulationNearby {
                found: 1,
                needed: 20,
                ..
            }
        ));
    }

    #[test]
    fn sparse_population_never_gives_a_fixed_distance_shift() {
        // Addresses on a 100 m lattice (100 per km²) plus a dense block on a
        // 25 m lattice from x = 5000 m. Events sit 300 m west of the block:
        // the disc of radius r_max = 250 m around each holds about 20
        // addresses, so the local radius ρ for k = 30 exceeds r_max, yet
        // shifts toward the block reach k. The shifts must be spread over a
        // band, not all equal to r_max (which would put the true point on a
        // known circle around the shared one).
        let area = Window::rectangle(0.0, 0.0, 10_000.0, 10_000.0).unwrap();
        let (mut px, mut py) = (Vec::new(), Vec::new());
        for i in 0..100 {
            for j in 0..100 {
                px.push(50.0 + 100.0 * i as f64);
                py.push(50.0 + 100.0 * j as f64);
            }
        }
        for i in 0..40 {
            for j in 0..400 {
                px.push(5012.5 + 25.0 * i as f64);
                py.push(12.5 + 25.0 * j as f64);
            }
        }
        let ex: Vec<f64> = vec![4700.0; 40];
        let ey: Vec<f64> = (0..40).map(|i| 1000.0 + 200.0 * i as f64).collect();
        let p = KAnonParams {
            target_k: 30,
            r_max_m: 250.0,
            ..Default::default()
        };
        let r = kanon_mask(&ex, &ey, Some((&px, &py)), &area, &p).unwrap();
        let d = &r.masked.displacement_m;
        assert!(d.len() >= 30, "most points can reach k: {}", d.len());
        assert!(d.iter().all(|&v| (125.0..250.0).contains(&v)), "{d:?}");
        let spread = d.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
            - d.iter().cloned().fold(f64::INFINITY, f64::min);
        assert!(spread > 20.0, "shifts bunched at one distance: {d:?}");
    }
}
