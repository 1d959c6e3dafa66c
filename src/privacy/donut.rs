//! Donut geomasking: move each point a random distance between a minimum and
//! a maximum, in a uniformly random direction, keeping it inside the study area.
//!
//! Hampton, Fitch, Allshouse, Doherty, Gesink, Leone, Serre & Miller (2010),
//! "Mapping health data: improved privacy protection with donut method
//! geomasking", *American Journal of Epidemiology* 172(9):1062–1069,
//! doi:10.1093/aje/kwq248. The minimum displacement sets a floor on privacy;
//! the maximum bounds the damage to analyses.
//!
//! # Parameters ([`DonutParams`])
//! * `r_min_m`, `r_max_m`: minimum and maximum displacement in metres,
//!   `0 ≤ r_min_m ≤ r_max_m`, `r_max_m > 0`. The defaults (100 m, 500 m) are the
//!   worked example of docs/methods.md#privacy, not a recommendation: pick `r_min_m` from
//!   the residential density (see [`super::kanon::r_min_for_k`]).
//! * `law`: how the distance is drawn ([`DistanceLaw`]); default uniform in the
//!   annulus area, so masked points are spread evenly over the ring.
//! * `seed`: the seed of the run (echoed in the result, never exported).
//! * `max_tries`: candidates drawn per point before giving up (default 1000).
//!
//! # Returns
//! [`MaskedPoints`]: the placed points, their achieved displacement summary,
//! and every point that could not be placed inside the study area after
//! `max_tries` candidates, with the reason. Those points are left out, never
//! passed on unmasked.
//!
//! # Algorithm
//! For each point in input order, with one seeded generator:
//! 1. draw θ ~ U[0, 2π) and d from the law on [r_min, r_max);
//! 2. x′ = x + d·cos θ, y′ = y + d·sin θ;
//! 3. if x′ is inside the study area (not in a hole) keep it, else redraw
//!    (both θ and d) up to `max_tries` times.
//!
//! # Notes
//! Redrawing near the boundary conditions the direction on staying inside,
//! so near edges the achieved distribution differs slightly from the design:
//! the result reports the achieved distribution. O(n·tries·containment).

use super::{bad, MaskMethod, MaskedPoints, Spread, Unplaced, UnplacedReason};
use crate::error::AnalysisError;
use crate::rng::{rng_from_seed, Rng};
use crate::window::Window;
use rand::RngExt;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// How the displacement distance is drawn between `r_min` and `r_max`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DistanceLaw {
    /// Uniform over the area of the ring: d = √U(r_min², r_max²). The masked
    /// point is uniform on the annulus. Mean for (100, 500) m: 344.444 m.
    #[default]
    AreaUniform,
    /// Uniform in distance: d ~ U(r_min, r_max), the common description of
    /// the method (docs/methods.md#privacy \[M\]). Mean for (100, 500) m: 300 m.
    DistanceUniform,
}

/// Settings of a donut run.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct DonutParams {
    pub r_min_m: f64,
    pub r_max_m: f64,
    pub law: DistanceLaw,
    pub seed: u64,
    pub max_tries: u32,
}

impl Default for DonutParams {
    fn default() -> Self {
        DonutParams {
            r_min_m: 100.0,
            r_max_m: 500.0,
            law: DistanceLaw::AreaUniform,
            seed: 1,
            max_tries: 1000,
        }
    }
}

/// Smallest accepted largest shift (`r_max_m`) of a mask, in metres: 50 m.
///
/// A mask whose largest shift is smaller than the error of the locations
/// themselves hides nothing: address geocoding commonly places points tens
/// of metres from the true building, so a shift of a few metres leaves each
/// masked point where the original could just as well have been recorded.
/// 50 m is a common-practice floor \[CP\] (docs/methods.md#privacy), well
/// below any useful mask (the defaults are 100–500 m) and well above the
/// export's precision (0.1 m, or 10⁻⁶ degrees). The export still compares
/// every written coordinate with the original's
/// ([`super::export::what_leaves`]), whatever the shift.
pub const MIN_LARGEST_SHIFT_M: f64 = 50.0;

/// Fields shared by the two masking methods.
pub(crate) fn mask_fields(r_min_default_doc: &'static str) -> Vec<crate::params::Field> {
    use crate::params::{Field, EXTENT_FACTOR};
    vec![
        Field::number("r_min_m", Some("m"), r_min_default_doc)
            .at_least(0.0)
            .extent(EXTENT_FACTOR),
        Field::number(
            "r_max_m",
            Some("m"),
            "largest displacement",
        )
        .at_least(MIN_LARGEST_SHIFT_M)
        .extent(EXTENT_FACTOR),
        Field::choice(
            "law",
            &["area_uniform", "distance_uniform"],
            "how the distance is drawn: uniform over the ring's area, or uniform in distance",
        ),
        Field::seed(
            "seed of the shifts; in the JS API, empty = drawn from the platform's cryptographic generator (never returned)",
        ),
        Field::integer("max_tries", "candidates drawn per point before leaving it out")
            .range(1.0, 100_000.0),
        Field::boolean(
            "replace",
            "replace the kept masked copy (masking again is refused without it: mask once)",
        )
        .session(),
    ]
}

impl crate::params::Params for DonutParams {
    const NAME: &'static str = "maskDonut";
    fn fields() -> Vec<crate::params::Field> {
        mask_fields("smallest displacement")
    }
    fn check(&self) -> Result<(), AnalysisError> {
        check_radii(self.r_min_m, self.r_max_m, self.max_tries)
    }
}

/// What a donut run records about itself (exported; no seed).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DonutSettings {
    pub r_min_m: f64,
    pub r_max_m: f64,
    pub law: DistanceLaw,
    pub max_tries: u32,
    /// Mean and median of the designed distance distribution (before the
    /// study-area redraws).
    pub design_mean_m: f64,
    pub design_median_m: f64,
}

/// Checks `0 ≤ r_min ≤ r_max`, `r_max > 0`, finite, `max_tries ≥ 1`.
pub(crate) fn check_radii(r_min: f64, r_max: f64, max_tries: u32) -> Result<(), AnalysisError> {
    if !r_min.is_finite() || r_min < 0.0 {
        return Err(bad("minimum displacement", "must be a number ≥ 0 (metres)"));
    }
    if !r_max.is_finite() || r_max <= 0.0 {
        return Err(bad("maximum displacement", "must be a number > 0 (metres)"));
    }
    if r_min > r_max {
        return Err(bad(
            "maximum displacement",
            &format!("{r_max} m is smaller than the minimum displacement {r_min} m"),
        ));
    }
    if max_tries == 0 {
        return Err(bad("tries per point", "must be at least 1"));
    }
    Ok(())
}

/// One distance from the law on [a, b) (exactly `a` when a = b).
pub(crate) fn draw_distance(rng: &mut Rng, law: DistanceLaw, a: f64, b: f64) -> f64 {
    let u: f64 = rng.random();
    match law {
        DistanceLaw::AreaUniform => (a * a + u * (b * b - a * a)).sqrt(),
        DistanceLaw::DistanceUniform => a + u * (b - a),
    }
}

/// Exact CDF of the designed distance, P(D ≤ d).
///
/// Area-uniform: (d² − a²)/(b² − a²); distance-uniform: (d − a)/(b − a).
pub fn design_cdf(law: DistanceLaw, a: f64, b: f64, d: f64) -> f64 {
    if d < a {
        return 0.0;
    }
    if d >= b {
        return 1.0;
    }
    match law {
        DistanceLaw::AreaUniform => (d * d - a * a) / (b * b - a * a),
        DistanceLaw::DistanceUniform => (d - a) / (b - a),
    }
}

/// Mean of the designed distance: (a+b)/2, or ⅔(b³ − a³)/(b² − a²) for the
/// area-uniform law (density 2d/(b² − a²)).
pub fn design_mean(law: DistanceLaw, a: f64, b: f64) -> f64 {
    if b <= a {
        return a;
    }
    match law {
        DistanceLaw::AreaUniform => 2.0 / 3.0 * (b.powi(3) - a.powi(3)) / (b * b - a * a),
        DistanceLaw::DistanceUniform => 0.5 * (a + b),
    }
}

/// Median of the designed distance: (a+b)/2, or √((a² + b²)/2).
pub fn design_median(law: DistanceLaw, a: f64, b: f64) -> f64 {
    match law {
        DistanceLaw::AreaUniform => ((a * a + b * b) / 2.0).sqrt(),
        DistanceLaw::DistanceUniform => 0.5 * (a + b),
    }
}

/// Donut-masks points `(x[i], y[i])` inside `region`. See the module docs.
///
/// ```
/// use cloister::privacy::{donut_mask, DonutParams};
/// use cloister::window::Window;
/// let area = Window::rectangle(0.0, 0.0, 10_000.0, 10_000.0).unwrap();
/// let p = DonutParams { r_min_m: 100.0, r_max_m: 500.0, seed: 3, ..Default::default() };
/// let m = donut_mask(&[5000.0, 6000.0], &[5000.0, 4000.0], &area, &p).unwrap();
/// assert_eq!(m.x.len(), 2);
/// assert!(m.displacement_m.iter().all(|&d| (100.0..500.0).contains(&d)));
/// ```
pub fn donut_mask(
    x: &[f64],
    y: &[f64],
    region: &Window,
    p: &DonutParams,
) -> Result<MaskedPoints, AnalysisError> {
    // Every field in its declared range (the floor of r_max_m included).
    crate::params::Params::validate(p)?;
    if x.len() != y.len() {
        return Err(bad("points", "x and y have different lengths"));
    }
    let mut rng = rng_from_seed(p.seed);
    let mut out = MaskedPoints {
        method: MaskMethod::Donut(settings(p)),
        seed: p.seed,
        n_input: x.len(),
        x: Vec::with_capacity(x.len()),
        y: Vec::with_capacity(x.len()),
        source: Vec::with_capacity(x.len()),
        displacement_m: Vec::with_capacity(x.len()),
        displacement: None,
        unplaced: Vec::new(),
        notes: Vec::new(),
    };
    for i in 0..x.len() {
        let mut placed = false;
        for _ in 0..p.max_tries {
            let theta = 2.0 * PI * rng.random::<f64>();
            let d = draw_distance(&mut rng, p.law, p.r_min_m, p.r_max_m);
            let (mx, my) = (x[i] + d * theta.cos(), y[i] + d * theta.sin());
            if region.contains(mx, my) {
                out.x.push(mx);
                out.y.push(my);
                out.source.push(i);
                out.displacement_m.push(d);
                placed = true;
                break;
            }
        }
        if !placed {
            out.unplaced.push(Unplaced {
                index: i,
                reason: UnplacedReason::NoPlaceInsideArea { tries: p.max_tries },
            });
        }
    }
    out.displacement = Spread::of(&out.displacement_m);
    Ok(out)
}

fn settings(p: &DonutParams) -> DonutSettings {
    DonutSettings {
        r_min_m: p.r_min_m,
        r_max_m: p.r_max_m,
        law: p.law,
        max_tries: p.max_tries,
        design_mean_m: design_mean(p.law, p.r_min_m, p.r_max_m),
        design_median_m: design_median(p.law, p.r_min_m, p.r_max_m),
    }
}

/// One-sample Kolmogorov–Smirnov statistic D = sup |F_n − F| of `sample`
/// against the continuous CDF `cdf` (two-sided; Kolmogorov 1933).
pub fn ks_statistic(sample: &[f64], cdf: impl Fn(f64) -> f64) -> f64 {
    let mut v = sample.to_vec();
    v.sort_by(|a, b| a.total_cmp(b));
    let n = v.len() as f64;
    let mut d: f64 = 0.0;
    for (i, &s) in v.iter().enumerate() {
        let f = cdf(s);
        d = d.max((i as f64 + 1.0) / n - f).max(f - i as f64 / n);
    }
    d
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::Window;

    #[test]
    fn design_check_values_methods_s11() {
        // docs/methods.md#privacy [C] check for (100, 500) m, Hampton et al. 2010 design.
        let (a, b) = (100.0, 500.0);
        assert!((design_mean(DistanceLaw::DistanceUniform, a, b) - 300.000).abs() < 5e-4);
        assert!((design_mean(DistanceLaw::AreaUniform, a, b) - 344.444).abs() < 5e-4);
        assert!((design_median(DistanceLaw::DistanceUniform, a, b) - 300.0).abs() < 5e-4);
        assert!((design_median(DistanceLaw::AreaUniform, a, b) - 360.555).abs() < 5e-4);
        // The median is where the CDF is one half.
        let m = design_median(DistanceLaw::AreaUniform, a, b);
        assert!((design_cdf(DistanceLaw::AreaUniform, a, b, m) - 0.5).abs() < 1e-12);
    }

    #[test]
    fn donut_empty_input_and_bad_params() {
        let area = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
        let m = donut_mask(&[], &[], &area, &DonutParams::default()).unwrap();
        assert!(m.x.is_empty() && m.unplaced.is_empty() && m.displacement.is_none());
        for (a, b) in [(-1.0, 5.0), (10.0, 5.0), (0.0, 0.0), (f64::NAN, 5.0)] {
            let p = DonutParams {
                r_min_m: a,
                r_max_m: b,
                ..Default::default()
            };
            assert!(donut_mask(&[1.0], &[1.0], &area, &p).is_err());
        }
    }

    #[test]
    fn donut_reports_points_with_no_room() {
        // A 10 m square with a 100–500 m donut: nothing can land inside.
        let area = Window::rectangle(0.0, 0.0, 10.0, 10.0).unwrap();
        let p = DonutParams {
            max_tries: 50,
            ..Default::default()
        };
        let m = donut_mask(&[5.0, 6.0], &[5.0, 6.0], &area, &p).unwrap();
        assert!(m.x.is_empty());
        assert_eq!(m.unplaced.len(), 2);
        assert_eq!(m.unplaced[1].index, 1);
        assert_eq!(
            m.unplaced[0].reason,
            UnplacedReason::NoPlaceInsideArea { tries: 50 }
        );
    }

    #[test]
    fn donut_same_seed_same_result() {
        let area = Window::rectangle(0.0, 0.0, 5000.0, 5000.0).unwrap();
        let p = DonutParams::default();
        let a = donut_mask(&[2500.0], &[2500.0], &area, &p).unwrap();
        let b = donut_mask(&[2500.0], &[2500.0], &area, &p).unwrap();
        assert_eq!(a, b);
        let c = donut_mask(&[2500.0], &[2500.0], &area, &DonutParams { seed: 2, ..p }).unwrap();
        assert_ne!(a.x, c.x);
    }

    #[test]
    fn ks_statistic_hand_example() {
        // Sample {0.1, 0.5, 0.9} against U(0,1): D = max(1/3-0.1, 0.5-1/3, 0.9-2/3,
        // 0.1, 2/3-0.5, 1-0.9) = 0.2333… (worked by hand).
        let d = ks_statistic(&[0.9, 0.1, 0.5], |t| t.clamp(0.0, 1.0));
        assert!((d - (0.9 - 2.0 / 3.0)).abs() < 1e-12);
    }
}
