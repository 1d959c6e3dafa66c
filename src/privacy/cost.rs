//! What masking costs the analysis: the same summaries on the original and
//! the masked points, side by side.
//!
//! * Mean nearest-neighbour distance and the Clark–Evans ratio
//!   R = r̄_A / (0.5/√λ), λ = n/|W| (Clark & Evans 1954, "Distance to nearest
//!   neighbor as a measure of spatial relationships in populations",
//!   *Ecology* 35:445–453, doi:10.2307/1931034; no edge correction, the same
//!   for both patterns, so the difference is what masking did).
//! * Mean centre and its shift; standard distance √(Σ‖xᵢ − x̄‖²/n)
//!   (divisor n) and its change.
//! * How far the intensity surface moves: a Gaussian kernel estimate
//!   (docs/methods.md#kernel; bandwidth = per-axis SD h, no edge correction, truncated at
//!   4h) on a coarse grid over the study area for both patterns with the same
//!   bandwidth; reported as the largest and the mean absolute difference over
//!   cells inside the area, divided by the original surface's peak.
//!   Default h: σ̂·n^(−1/6) with σ̂ = √((s_x² + s_y²)/2) of the original
//!   (Silverman/Scott normal reference in 2-D, single isotropic h:
//!   docs/methods.md#kernel \[CP\]).
//!
//! # K/L curves
//! [`compare`] leaves [`MaskingCost::l_curves`] empty; [`MaskingCost::add_l_curves`]
//! fills it with L(r) − r of both patterns (Besag's L with Ripley's isotropic
//! correction, [`crate::distance::functions`]) on one r grid, the original's,
//! so the page can draw the pair. (Masking by distances up to r_max
//! attenuates clustering at scales up to about 2·r_max: docs/methods.md#privacy.)
//!
//! # Close in space and time
//! For events with dates, [`PairShift`] compares the near-repeat table
//! (observed ÷ exact permutation expectation per cell, the engine of
//! [`crate::spacetime::pairs`]) and the Knox count of the original and the
//! masked points, with the dates unchanged: masking empties "same location"
//! and moves pairs across the short distance bands.

use super::bad;
use crate::distance::functions::{distance_functions, DistanceFunctions, FunctionParams};
use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::study::Pattern;
use crate::window::Window;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Settings of the comparison.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct CostParams {
    /// Kernel SD per axis, m; `None`: normal-reference rule on the original.
    pub bandwidth_m: Option<f64>,
    /// Cells along the longer side of the study area's bounding box.
    pub grid_cells: usize,
    /// Bands of the near-repeat comparison (events with dates): distance
    /// band width and largest distance, m; time band width and longest
    /// gap, days. `None`: the near-repeat table's defaults. The Knox count
    /// compared is the first band of each: within `pair_band_m` and
    /// `pair_band_days`.
    pub pair_band_m: Option<f64>,
    pub pair_max_distance_m: Option<f64>,
    pub pair_band_days: Option<f64>,
    pub pair_max_days: Option<f64>,
}

impl Default for CostParams {
    fn default() -> Self {
        CostParams {
            bandwidth_m: None,
            grid_cells: 64,
            pair_band_m: None,
            pair_max_distance_m: None,
            pair_band_days: None,
            pair_max_days: None,
        }
    }
}

impl crate::params::Params for CostParams {
    const NAME: &'static str = "maskingCost";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::{Field, EXTENT_FACTOR};
        vec![
            Field::number(
                "bandwidth_m",
                Some("m"),
                "kernel SD per axis of the compared surfaces; empty = rule of thumb on the original points",
            )
            .scale_length(EXTENT_FACTOR)
            .optional(),
            Field::integer("grid_cells", "cells along the longer side of the study area")
                .range(2.0, 1024.0),
            Field::number("pair_band_m", Some("m"), "events with dates: width of the distance bands of the near-repeat comparison; empty = the near-repeat table's default")
                .scale_length(EXTENT_FACTOR)
                .optional(),
            Field::number("pair_max_distance_m", Some("m"), "events with dates: largest distance of the near-repeat comparison; empty = the near-repeat table's default")
                .scale_length(EXTENT_FACTOR)
                .optional(),
            Field::number("pair_band_days", Some("days"), "events with dates: width of the time bands of the near-repeat comparison; empty = the near-repeat table's default")
                .range(0.01, 3660.0)
                .optional(),
            Field::number("pair_max_days", Some("days"), "events with dates: longest time gap of the near-repeat comparison; empty = the near-repeat table's default")
                .range(0.01, 36600.0)
                .optional(),
        ]
    }
    fn check(&self) -> Result<(), AnalysisError> {
        let d = crate::spacetime::pairs::NearRepeatOptions::default();
        let band = self.pair_band_m.unwrap_or(d.band_m);
        if self.pair_max_distance_m.unwrap_or(d.max_distance_m) < band {
            return Err(bad(
                "pair_max_distance_m",
                &format!("must be at least pair_band_m ({band} m): one band at least"),
            ));
        }
        let days = self.pair_band_days.unwrap_or(d.band_days);
        if self.pair_max_days.unwrap_or(d.max_days) < days {
            return Err(bad(
                "pair_max_days",
                &format!("must be at least pair_band_days ({days} days): one band at least"),
            ));
        }
        self.pair_bands().check()
    }
}

impl CostParams {
    /// The bands of the near-repeat comparison (the table's defaults where
    /// not given).
    pub fn pair_bands(&self) -> crate::spacetime::pairs::Bands {
        let d = crate::spacetime::pairs::NearRepeatOptions::default();
        crate::spacetime::pairs::NearRepeatOptions {
            band_m: self.pair_band_m.unwrap_or(d.band_m),
            max_distance_m: self.pair_max_distance_m.unwrap_or(d.max_distance_m),
            band_days: self.pair_band_days.unwrap_or(d.band_days),
            max_days: self.pair_max_days.unwrap_or(d.max_days),
            ..d
        }
        .bands()
    }
}

/// Pairs within the Knox distance and time, with their exact permutation
/// expectation (Knox 1964; docs/methods.md#knox).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct KnoxCount {
    pub pairs: u32,
    pub expected: f64,
    /// pairs / expected; `None` when nothing is expected.
    pub ratio: Option<f64>,
}

/// What masking does to the pairs close in space and time: the near-repeat
/// table (observed ÷ exactly expected per cell) and the Knox count of the
/// original and the masked points, with the same dates. Masking moves
/// pairs out of "same location" and across the short distance bands.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PairShift {
    /// Events in the comparison (placed by masking and with a usable time).
    pub events_used: usize,
    pub knox_distance_m: f64,
    pub knox_days: f64,
    pub knox_original: KnoxCount,
    pub knox_masked: KnoxCount,
    pub space_labels: Vec<String>,
    pub time_labels: Vec<String>,
    /// Cells row by row (distance band, then time band).
    pub observed_original: Vec<u32>,
    pub observed_masked: Vec<u32>,
    /// observed ÷ expected; `None` where nothing is expected.
    pub ratio_original: Vec<Option<f64>>,
    pub ratio_masked: Vec<Option<f64>>,
}

fn ratios(e: &crate::spacetime::pairs::PairEngine) -> Vec<Option<f64>> {
    e.observed()
        .iter()
        .zip(e.expected())
        .map(|(&o, ex)| (ex > 0.0).then(|| o as f64 / ex))
        .collect()
}

fn knox_count(
    x: &[f64],
    y: &[f64],
    t: &[f64],
    d: f64,
    days: f64,
) -> Result<KnoxCount, AnalysisError> {
    use crate::spacetime::pairs::{Bands, PairEngine};
    let e = PairEngine::new(x, y, t, Bands::knox(d, days))?;
    let pairs = e.observed().first().copied().unwrap_or(0);
    let expected = e.expected().first().copied().unwrap_or(0.0);
    Ok(KnoxCount {
        pairs,
        expected,
        ratio: (expected > 0.0).then(|| pairs as f64 / expected),
    })
}

impl PairShift {
    /// The comparison for events at (`ox`, `oy`) and masked at (`mx`,
    /// `my`), each with time `t` (days).
    pub fn compute(
        ox: &[f64],
        oy: &[f64],
        mx: &[f64],
        my: &[f64],
        t: &[f64],
        bands: crate::spacetime::pairs::Bands,
    ) -> Result<PairShift, AnalysisError> {
        use crate::spacetime::pairs::PairEngine;
        let d = bands.space_edges.first().copied().unwrap_or(0.0);
        let days = bands.time_edges.first().copied().unwrap_or(0.0);
        let o = PairEngine::new(ox, oy, t, bands.clone())?;
        let m = PairEngine::new(mx, my, t, bands)?;
        Ok(PairShift {
            events_used: t.len(),
            knox_distance_m: d,
            knox_days: days,
            knox_original: knox_count(ox, oy, t, d, days)?,
            knox_masked: knox_count(mx, my, t, d, days)?,
            space_labels: crate::spacetime::pairs::space_bands(&o)
                .into_iter()
                .map(|b| b.label)
                .collect(),
            time_labels: crate::spacetime::pairs::time_bands(&o)
                .into_iter()
                .map(|b| b.label)
                .collect(),
            observed_original: o.observed().to_vec(),
            observed_masked: m.observed().to_vec(),
            ratio_original: ratios(&o),
            ratio_masked: ratios(&m),
        })
    }
}

/// Summaries of one pattern.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PatternSummary {
    pub n: usize,
    pub mean_nn_m: Option<f64>,
    pub clark_evans_r: Option<f64>,
    pub centre: Option<[f64; 2]>,
    pub standard_distance_m: Option<f64>,
}

/// How far the kernel intensity surface moves.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SurfaceShift {
    pub bandwidth_m: f64,
    pub cell_m: f64,
    pub nx: usize,
    pub ny: usize,
    /// Cells whose centre is inside the study area.
    pub cells_inside: usize,
    /// Peak of the original surface, events per m².
    pub peak_original: f64,
    pub max_abs_diff_rel: f64,
    pub mean_abs_diff_rel: f64,
}

/// L(r) − r on both patterns (filled in by the distance module).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CurvePair {
    pub r_m: Vec<f64>,
    pub original: Vec<f64>,
    pub masked: Vec<f64>,
    pub max_abs_difference_m: f64,
}

/// Original vs masked.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MaskingCost {
    pub original: PatternSummary,
    pub masked: PatternSummary,
    pub mean_nn_change_m: Option<f64>,
    pub clark_evans_change: Option<f64>,
    pub centre_shift_m: Option<f64>,
    pub standard_distance_change_m: Option<f64>,
    pub surface: Option<SurfaceShift>,
    /// Extension point: see the module docs.
    pub l_curves: Option<CurvePair>,
    /// Events with dates: the near-repeat table and Knox count before and
    /// after masking ([`PairShift`]); `None` without dates.
    pub pairs: Option<PairShift>,
}

impl MaskingCost {
    /// Computes L(r) − r of `original` and of the masked points on the
    /// original's default r grid (isotropic correction) and attaches them.
    /// Leaves `l_curves` empty when either pattern cannot be analysed (too
    /// few points, no masked points), as the cost table is still useful.
    pub fn add_l_curves(
        &mut self,
        original: &Pattern,
        masked_x: &[f64],
        masked_y: &[f64],
        window: &Window,
    ) {
        let Some(masked) = Pattern::from_xy(masked_x.to_vec(), masked_y.to_vec()) else {
            return;
        };
        let fp = FunctionParams::default();
        let Ok(o) = distance_functions(original, window, &fp) else {
            return;
        };
        let fp2 = FunctionParams {
            r_max: Some(o.r_max),
            ..fp
        };
        let Ok(k) = distance_functions(&masked, window, &fp2) else {
            return;
        };
        let lr = |d: &DistanceFunctions| -> Vec<f64> {
            d.l.iter().zip(&d.r).map(|(l, r)| l - r).collect()
        };
        if k.r.len() == o.r.len() {
            let _ = self.attach_l_curves(o.r.clone(), lr(&o), lr(&k));
        }
    }

    /// Attaches L(r) − r of both patterns computed elsewhere at the same `r_m`.
    pub fn attach_l_curves(
        &mut self,
        r_m: Vec<f64>,
        original: Vec<f64>,
        masked: Vec<f64>,
    ) -> Result<(), AnalysisError> {
        if r_m.len() != original.len() || r_m.len() != masked.len() {
            return Err(bad("L curves", "r, original and masked differ in length"));
        }
        let max_abs_difference_m = original
            .iter()
            .zip(&masked)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
        self.l_curves = Some(CurvePair {
            r_m,
            original,
            masked,
            max_abs_difference_m,
        });
        Ok(())
    }
}

/// Summaries of one pattern in `region`.
pub fn summarise(x: &[f64], y: &[f64], region: &Window) -> PatternSummary {
    let n = x.len();
    let centre = (n > 0).then(|| {
        [
            x.iter().sum::<f64>() / n as f64,
            y.iter().sum::<f64>() / n as f64,
        ]
    });
    let standard_distance_m = centre.map(|c| {
        (x.iter()
            .zip(y)
            .map(|(a, b)| (a - c[0]).powi(2) + (b - c[1]).powi(2))
            .sum::<f64>()
            / n as f64)
            .sqrt()
    });
    let mut mean_nn_m = None;
    let mut clark_evans_r = None;
    if let Some(nn) = GridIndex::new(x, y).nn_distances() {
        let mean = nn.iter().sum::<f64>() / n as f64;
        mean_nn_m = Some(mean);
        let area = region.area();
        if area > 0.0 && area.is_finite() {
            let lambda = n as f64 / area;
            clark_evans_r = Some(mean / (0.5 / lambda.sqrt()));
        }
    }
    PatternSummary {
        n,
        mean_nn_m,
        clark_evans_r,
        centre,
        standard_distance_m,
    }
}

/// Compares the original points with the masked ones (the ones that will be
/// shared; left-out points are simply absent).
pub fn compare(
    ox: &[f64],
    oy: &[f64],
    mx: &[f64],
    my: &[f64],
    region: &Window,
    p: &CostParams,
) -> Result<MaskingCost, AnalysisError> {
    if ox.len() != oy.len() || mx.len() != my.len() {
        return Err(bad("points", "x and y have different lengths"));
    }
    if let Some(h) = p.bandwidth_m {
        if !(h.is_finite() && h > 0.0) {
            return Err(bad("bandwidth", "must be a number > 0 (metres)"));
        }
    }
    if p.grid_cells < 2 || p.grid_cells > 1024 {
        return Err(bad("grid cells", "must be between 2 and 1024"));
    }
    let a = summarise(ox, oy, region);
    let b = summarise(mx, my, region);
    let diff = |u: Option<f64>, v: Option<f64>| u.zip(v).map(|(u, v)| v - u);
    let centre_shift_m = a
        .centre
        .zip(b.centre)
        .map(|(u, v)| (u[0] - v[0]).hypot(u[1] - v[1]));
    let h = match p.bandwidth_m {
        Some(h) => Some(h),
        None => normal_reference_bandwidth(ox, oy),
    };
    let surface = match h {
        Some(h) if !ox.is_empty() => surface_shift(ox, oy, mx, my, region, h, p.grid_cells),
        _ => None,
    };
    Ok(MaskingCost {
        original: a,
        masked: b,
        mean_nn_change_m: diff(a.mean_nn_m, b.mean_nn_m),
        clark_evans_change: diff(a.clark_evans_r, b.clark_evans_r),
        centre_shift_m,
        standard_distance_change_m: diff(a.standard_distance_m, b.standard_distance_m),
        surface,
        l_curves: None,
        pairs: None,
    })
}

/// σ̂·n^(−1/6), σ̂ = √((s_x² + s_y²)/2) with divisor n − 1; `None` if n < 2 or σ̂ = 0.
pub fn normal_reference_bandwidth(x: &[f64], y: &[f64]) -> Option<f64> {
    let n = x.len();
    if n < 2 {
        return None;
    }
    let var = |v: &[f64]| {
        let m = v.iter().sum::<f64>() / n as f64;
        v.iter().map(|a| (a - m).powi(2)).sum::<f64>() / (n as f64 - 1.0)
    };
    let s = ((var(x) + var(y)) / 2.0).sqrt();
    (s > 0.0 && s.is_finite()).then(|| s * (n as f64).powf(-1.0 / 6.0))
}

/// Gaussian kernel intensity (events per m²) at `(u, v)`, truncated at 4h.
pub fn gaussian_intensity(g: &GridIndex, u: f64, v: f64, h: f64) -> f64 {
    let mut s = 0.0;
    let c = 1.0 / (2.0 * PI * h * h);
    g.for_each_within(u, v, 4.0 * h, |_, d| s += (-d * d / (2.0 * h * h)).exp());
    c * s
}

fn surface_shift(
    ox: &[f64],
    oy: &[f64],
    mx: &[f64],
    my: &[f64],
    region: &Window,
    h: f64,
    cells: usize,
) -> Option<SurfaceShift> {
    let b = region.bbox();
    let (w, t) = (b[2] - b[0], b[3] - b[1]);
    if !(w.is_finite() && t.is_finite()) || w <= 0.0 || t <= 0.0 {
        return None;
    }
    let cell = w.max(t) / cells as f64;
    let nx = (w / cell).ceil().max(1.0) as usize;
    let ny = (t / cell).ceil().max(1.0) as usize;
    let go = GridIndex::new(ox, oy);
    let gm = GridIndex::new(mx, my);
    let mut peak: f64 = 0.0;
    let mut diffs = Vec::new();
    for j in 0..ny {
        for i in 0..nx {
            let (u, v) = (
                b[0] + (i as f64 + 0.5) * cell,
                b[1] + (j as f64 + 0.5) * cell,
            );
            if !region.contains(u, v) {
                continue;
            }
            let a = gaussian_intensity(&go, u, v, h);
            let m = gaussian_intensity(&gm, u, v, h);
            peak = peak.max(a);
            diffs.push((a - m).abs());
        }
    }
    if diffs.is_empty() || peak <= 0.0 {
        return None;
    }
    Some(SurfaceShift {
        bandwidth_m: h,
        cell_m: cell,
        nx,
        ny,
        cells_inside: diffs.len(),
        peak_original: peak,
        max_abs_diff_rel: diffs.iter().fold(0.0, |a: f64, &b| a.max(b)) / peak,
        mean_abs_diff_rel: diffs.iter().sum::<f64>() / diffs.len() as f64 / peak,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::Window;

    #[test]
    fn l_curves_of_both_patterns_on_one_grid() {
        use crate::distance::{simulate_thomas, ThomasParams};
        let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
        let p = simulate_thomas(
            &w,
            ThomasParams {
                kappa: 20.0 / 1e6,
                mu: 10.0,
                sigma: 25.0,
            },
            3,
        )
        .unwrap();
        let area = w.clone();
        let mut same = compare(p.x(), p.y(), p.x(), p.y(), &area, &CostParams::default()).unwrap();
        assert!(same.l_curves.is_none());
        same.add_l_curves(&p, p.x(), p.y(), &w);
        let c = same.l_curves.as_ref().unwrap();
        assert_eq!(c.r_m.len(), c.original.len());
        assert!(c.r_m.len() > 10);
        assert_eq!(c.max_abs_difference_m, 0.0);
        // A regular lattice instead of the clusters: L(r) − r drops.
        let (mut gx, mut gy) = (vec![], vec![]);
        for i in 0..15 {
            for j in 0..15 {
                gx.push(33.0 + 66.0 * i as f64);
                gy.push(33.0 + 66.0 * j as f64);
            }
        }
        let mut c2 = compare(p.x(), p.y(), &gx, &gy, &area, &CostParams::default()).unwrap();
        c2.add_l_curves(&p, &gx, &gy, &w);
        let c2 = c2.l_curves.unwrap();
        assert_eq!(c2.r_m, c.r_m, "the original's r grid");
        let peak = |v: &[f64]| v.iter().cloned().fold(f64::MIN, f64::max);
        assert!(peak(&c2.original) > peak(&c2.masked) + 10.0);
        assert!(c2.max_abs_difference_m > 10.0);
        // No masked points: no curves, no error.
        let mut c3 = compare(p.x(), p.y(), &gx, &gy, &area, &CostParams::default()).unwrap();
        c3.add_l_curves(&p, &[], &[], &w);
        assert!(c3.l_curves.is_none());
    }

    #[test]
    fn square_lattice_clark_evans_is_two() {
        // Clark & Evans (1954); docs/methods.md#clark-evans [C]: a k×k lattice with spacing d at
        // (i+½)d in a square of side k·d has every NN distance d, λ = 1/d², R = 2.
        let (k, d) = (10usize, 50.0);
        let mut x = vec![];
        let mut y = vec![];
        for i in 0..k {
            for j in 0..k {
                x.push((i as f64 + 0.5) * d);
                y.push((j as f64 + 0.5) * d);
            }
        }
        let area = Window::rectangle(0.0, 0.0, k as f64 * d, k as f64 * d).unwrap();
        let s = summarise(&x, &y, &area);
        assert!((s.mean_nn_m.unwrap() - d).abs() < 1e-9);
        assert!((s.clark_evans_r.unwrap() - 2.0).abs() < 1e-12);
        assert_eq!(s.centre, Some([250.0, 250.0]));
    }

    #[test]
    fn identical_patterns_cost_nothing_and_shift_is_seen() {
        let area = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
        let x = [100.0, 300.0, 500.0, 700.0];
        let y = [200.0, 400.0, 600.0, 800.0];
        let c = compare(&x, &y, &x, &y, &area, &CostParams::default()).unwrap();
        assert_eq!(c.centre_shift_m, Some(0.0));
        assert_eq!(c.surface.unwrap().max_abs_diff_rel, 0.0);
        let mx: Vec<f64> = x.iter().map(|v| v + 30.0).collect();
        let my: Vec<f64> = y.iter().map(|v| v - 40.0).collect();
        let c = compare(&x, &y, &mx, &my, &area, &CostParams::default()).unwrap();
        assert!((c.centre_shift_m.unwrap() - 50.0).abs() < 1e-9);
        assert!(c.standard_distance_change_m.unwrap().abs() < 1e-9);
        assert!(c.surface.unwrap().max_abs_diff_rel > 0.0);
    }

    #[test]
    fn one_point_kernel_peak() {
        // docs/methods.md#kernel [C]: a Gaussian kernel peaks at 1/(2πh²).
        let g = GridIndex::new(&[0.0], &[0.0]);
        assert!((gaussian_intensity(&g, 0.0, 0.0, 10.0) - 0.15915494 / 100.0).abs() < 1e-10);
    }

    #[test]
    fn compare_edge_cases() {
        let area = Window::rectangle(0.0, 0.0, 10.0, 10.0).unwrap();
        let c = compare(&[], &[], &[], &[], &area, &CostParams::default()).unwrap();
        assert!(c.original.mean_nn_m.is_none() && c.surface.is_none());
        let c = compare(
            &[1.0],
            &[1.0],
            &[2.0],
            &[2.0],
            &area,
            &CostParams::default(),
        )
        .unwrap();
        assert!(c.mean_nn_change_m.is_none());
        let bad = CostParams {
            bandwidth_m: Some(0.0),
            ..Default::default()
        };
        assert!(compare(&[1.0], &[1.0], &[2.0], &[2.0], &area, &bad).is_err());
    }
}
