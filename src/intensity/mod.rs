//! Where is it dense?
//!
//! A kernel estimate of the intensity (events per unit area) on a grid over
//! the study area, after Diggle (1985), "A kernel method for smoothing point
//! process data", Applied Statistics 34:138–147:
//! `λ̂(u) = Σ_i w_i k_h(u − x_i)` (with `w_i = 1` unless weights are used),
//! optionally edge-corrected ([`edge`]). Bandwidths come from [`bandwidth`];
//! contours and percent-volume areas from [`isopleth`].
//!
//! # Units
//! Coordinates and bandwidths are metres. Internally intensity is **events
//! per m²**; the returned grid holds **events per km²** (× 10⁶), the number a
//! reader can picture. `integral_events` is `∫_W λ̂` in events.
//!
//! # Evaluation
//! * [`Evaluation::Binned`] (default, fast): linear binning of the events onto
//!   the cell centres (Wand 1994, J. Comput. Graph. Stat. 3:433–445 \[M\]), then a
//!   convolution with the kernel sampled on the grid, direct and separable for
//!   the Gaussian (cut at 4 SD) and by FFT for the quartic. Cost
//!   O(n + cells·stencil) or O(cells·log cells).
//! * [`Evaluation::Exact`]: the defining sum at every cell centre over events
//!   within the kernel support (Gaussian cut at 8 SD, relative tail < 1e-13).
//!   Cost O(cells·events within reach). The reference for the binned path.
//!
//! Measured difference between the two at benchmark size (100 000 events,
//! 512 × 384 grid, Gaussian h ≈ 3.8 cells; `examples/bench_hotspots.rs`):
//! largest error 2.8 × 10⁻³ of the peak, total absolute error 9 × 10⁻⁴ of
//! the total; the same for the quartic kernel. Tests hold it under 1 % of
//! the peak (`binned_matches_exact`, and against scikit-learn in
//! `tests/intensity.rs`).
//!
//! # Grid
//! Cells whose centre is outside the study area are masked (value 0, mask
//! false). The same mask defines `W` for the edge correction.

pub mod at_points;
pub mod bandwidth;
pub mod edge;
pub(crate) mod fft;
pub mod grid;
pub mod isopleth;
pub mod kernel;

pub use bandwidth::{BandwidthChoice, BandwidthMethod, BandwidthOptions};
pub use edge::EdgeCorrection;
pub use grid::{Grid, GridOptions};
pub use isopleth::{Contour, ContourSet};
pub use kernel::Kernel;

use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::study::Pattern;
use crate::window::Window;
use fft::convolve;
use serde::{Deserialize, Serialize};

/// Events per m² → events per km².
pub const PER_KM2: f64 = 1.0e6;

/// How the sum over events is evaluated on the grid.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Evaluation {
    /// Linear binning + convolution (fast).
    #[default]
    Binned,
    /// Direct sum at each cell centre (slow, reference).
    Exact,
}

/// Options for [`kernel_surface`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(default)]
pub struct SurfaceOptions {
    pub kernel: Kernel,
    pub bandwidth: BandwidthOptions,
    pub edge: EdgeCorrection,
    pub grid: GridOptions,
    pub evaluation: Evaluation,
    /// Use the events' weights (e.g. household size) when they have them.
    pub use_weights: bool,
}

/// The options of `intensitySurface` as the JS API takes them: flat, the
/// one home of their defaults and limits. [`SurfaceParams::options`] gives
/// the [`SurfaceOptions`] of [`kernel_surface`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SurfaceParams {
    pub kernel: Kernel,
    pub method: BandwidthMethod,
    /// The bandwidth when `method` is `fixed`, metres.
    pub fixed_m: Option<f64>,
    /// Candidates tried by the two criteria.
    pub candidates: usize,
    pub edge: EdgeCorrection,
    /// Cells along the longer side of the study area's bounding box.
    pub cells: usize,
    pub use_weights: bool,
    /// Percent-volume fractions for the isopleths.
    pub isopleths: Vec<f64>,
    /// Whether to count events that the bandwidth would expose.
    pub privacy_check: bool,
}

impl Default for SurfaceParams {
    fn default() -> Self {
        let d = SurfaceOptions::default();
        SurfaceParams {
            kernel: d.kernel,
            method: d.bandwidth.method,
            fixed_m: d.bandwidth.fixed_m,
            candidates: d.bandwidth.candidates,
            edge: d.edge,
            cells: d.grid.cells_long_side,
            use_weights: d.use_weights,
            isopleths: vec![0.5, 0.75, 0.95],
            privacy_check: true,
        }
    }
}

impl SurfaceParams {
    /// The options of [`kernel_surface`].
    pub fn options(&self) -> SurfaceOptions {
        SurfaceOptions {
            kernel: self.kernel,
            bandwidth: BandwidthOptions {
                method: self.method,
                fixed_m: self.fixed_m,
                candidates: self.candidates,
                ..Default::default()
            },
            edge: self.edge,
            grid: GridOptions {
                cells_long_side: self.cells,
                cell_m: None,
            },
            use_weights: self.use_weights,
            ..Default::default()
        }
    }
}

impl crate::params::Params for SurfaceParams {
    const NAME: &'static str = "intensitySurface";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::{Field, EXTENT_FACTOR};
        vec![
            Field::choice("kernel", &["gaussian", "quartic"], "kernel shape"),
            Field::choice(
                "method",
                &["normal_reference", "likelihood_cv", "diggle_mse", "fixed"],
                "how the bandwidth is chosen",
            ),
            Field::number("fixed_m", Some("m"), "the bandwidth when method is fixed")
                .scale_length(EXTENT_FACTOR)
                .optional(),
            Field::integer("candidates", "bandwidths tried by the two criteria").range(3.0, 200.0),
            Field::choice(
                "edge",
                &["none", "uniform", "jones_diggle"],
                "edge correction",
            ),
            Field::integer("cells", "grid cells along the study area's longer side")
                .range(2.0, grid::MAX_SIDE as f64),
            Field::boolean("use_weights", "weigh events by their weight column"),
            Field::numbers("isopleths", "percent-volume fractions of the isopleths")
                .above(0.0, Some(1.0)),
            Field::boolean(
                "privacy_check",
                "count events whose bump would point at a single address",
            ),
        ]
    }
    fn check(&self) -> Result<(), AnalysisError> {
        if self.method == BandwidthMethod::Fixed && self.fixed_m.is_none() {
            return Err(crate::params::bad(
                "fixed_m",
                "a fixed bandwidth needs fixed_m (metres)",
            ));
        }
        Ok(())
    }
}

/// A kernel intensity surface and how it was made.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IntensitySurface {
    /// Values in **events per km²**; masked cells hold 0.
    pub grid: Grid,
    pub kernel: Kernel,
    /// The bandwidth used, metres (Gaussian: SD per axis; quartic: radius).
    pub bandwidth_m: f64,
    /// How the bandwidth was chosen, with the criterion curve if any.
    pub bandwidth: BandwidthChoice,
    pub edge: EdgeCorrection,
    pub evaluation: Evaluation,
    pub n_events: usize,
    /// Sum of weights (= n_events when unweighted).
    pub total_weight: f64,
    /// `∫_W λ̂` over cells in the area, in events.
    pub integral_events: f64,
    /// Highest value, events per km².
    pub max_per_km2: f64,
    /// Area of the cells in the study area, km².
    pub area_km2: f64,
    /// Plain-words cautions (e.g. bandwidth smaller than a cell).
    pub notes: Vec<String>,
}

fn bad(name: &str, detail: impl Into<String>) -> AnalysisError {
    AnalysisError::BadParameter {
        name: name.into(),
        detail: detail.into(),
    }
}

/// Kernel intensity of a pattern over a window (see the module docs).
///
/// # Errors
/// `BadParameter` for an unusable bandwidth, grid or window;
/// `TooFewPoints` when a data-driven bandwidth needs more events.
pub fn kernel_surface(
    pattern: &Pattern,
    window: &Window,
    o: &SurfaceOptions,
) -> Result<IntensitySurface, AnalysisError> {
    // A point without a usable weight counts 0 (see `Pattern`), and the
    // result says how many.
    let w = if o.use_weights {
        pattern.weights_or_zero()
    } else {
        None
    };
    let mut out = kernel_surface_in(pattern.x(), pattern.y(), w.as_deref(), window, o)?;
    let missing = if o.use_weights {
        pattern.missing_weight()
    } else {
        0
    };
    if missing > 0 {
        out.notes.push(format!(
            "{missing} event(s) have no usable weight and count 0 in this weighted surface."
        ));
    }
    Ok(out)
}

/// The bandwidth alone, chosen as [`kernel_surface`] would choose it (for
/// showing the criterion curve before drawing the surface).
pub fn select_bandwidth(
    pattern: &Pattern,
    window: &Window,
    o: &SurfaceOptions,
) -> Result<BandwidthChoice, AnalysisError> {
    bandwidth::choose(
        pattern.x(),
        pattern.y(),
        window,
        o.kernel,
        o.edge,
        &o.bandwidth,
        &o.grid,
    )
}

impl IntensitySurface {
    /// Percent-volume isopleths, e.g. `&[0.5, 0.75, 0.95]`.
    pub fn isopleths(&self, fractions: &[f64]) -> ContourSet {
        isopleth::isopleths(&self.grid, fractions)
    }
    /// Contours at fixed levels in events per km².
    pub fn contours(&self, levels_per_km2: &[f64]) -> ContourSet {
        isopleth::contours(&self.grid, levels_per_km2)
    }
}

/// Where the work happens: a raster padded by one cell on every side so
/// linear binning never falls off it.
pub(crate) struct Canvas {
    pub x0: f64,
    pub y0: f64,
    pub cell: f64,
    pub nx: usize,
    pub ny: usize,
    pub mask: Vec<bool>,
    /// Inner (output) grid shape and origin.
    pub inner: (f64, f64, usize, usize),
}

impl Canvas {
    pub(crate) fn new(region: &Window, g: &GridOptions) -> Result<Canvas, AnalysisError> {
        let (x0, y0, cell, nx, ny) = g.layout(region.bbox()).map_err(|d| bad("grid", d))?;
        let (px, py) = (nx + 2, ny + 2);
        let (cx0, cy0) = (x0 - cell, y0 - cell);
        let mask = region.raster_mask(cx0, cy0, cell, px, py);
        Ok(Canvas {
            x0: cx0,
            y0: cy0,
            cell,
            nx: px,
            ny: py,
            mask,
            inner: (x0, y0, nx, ny),
        })
    }

    /// Linear binning of weighted points onto cell centres.
    pub(crate) fn bin(&self, x: &[f64], y: &[f64], w: impl Fn(usize) -> f64) -> Vec<f64> {
        let mut c = vec![0.0; self.nx * self.ny];
        for i in 0..x.len() {
            let (a, b, tx, ty) = self.cell_weights(x[i], y[i]);
            let wi = w(i);
            let k = b * self.nx + a;
            c[k] += wi * (1.0 - tx) * (1.0 - ty);
            c[k + 1] += wi * tx * (1.0 - ty);
            c[k + self.nx] += wi * (1.0 - tx) * ty;
            c[k + self.nx + 1] += wi * tx * ty;
        }
        c
    }

    /// Largest stencil radius that can matter on this raster.
    pub(crate) fn max_r(&self) -> usize {
        self.nx.max(self.ny)
    }

    /// Lower-left cell and bilinear fractions used by both [`Canvas::bin`]
    /// and [`Canvas::interpolate`] for a point.
    pub(crate) fn cell_weights(&self, x: f64, y: f64) -> (usize, usize, f64, f64) {
        let fx = ((x - self.x0) / self.cell - 0.5).clamp(0.0, (self.nx - 1) as f64);
        let fy = ((y - self.y0) / self.cell - 0.5).clamp(0.0, (self.ny - 1) as f64);
        let (a, b) = (
            (fx as usize).min(self.nx - 2),
            (fy as usize).min(self.ny - 2),
        );
        (a, b, fx - a as f64, fy - b as f64)
    }

    pub(crate) fn interpolate(&self, v: &[f64], x: f64, y: f64) -> f64 {
        grid::bilinear(v, self.nx, self.ny, self.x0, self.y0, self.cell, x, y)
    }

    /// Copies the inner part of a padded field, zeroing cells outside `W`,
    /// scaled by `scale`.
    pub(crate) fn crop(&self, v: &[f64], scale: f64) -> (Vec<f64>, Vec<bool>) {
        let (_, _, nx, ny) = self.inner;
        let mut out = Vec::with_capacity(nx * ny);
        let mut mask = Vec::with_capacity(nx * ny);
        for j in 0..ny {
            for i in 0..nx {
                let k = (j + 1) * self.nx + i + 1;
                mask.push(self.mask[k]);
                out.push(if self.mask[k] { v[k] * scale } else { 0.0 });
            }
        }
        (out, mask)
    }
}

/// The edge mass e_h on the canvas (`None` without edge correction) and
/// each event's weight after the Jones–Diggle factor 1/e_h(x_i) (its own
/// weight, or 1, otherwise; 0 where e_h is 0). `stencil` is the kernel's
/// stencil on the canvas.
#[allow(clippy::too_many_arguments)]
pub(crate) fn edge_and_event_weights(
    cv: &Canvas,
    x: &[f64],
    y: &[f64],
    weights: Option<&[f64]>,
    kernel: Kernel,
    h: f64,
    edge: EdgeCorrection,
    stencil: &fft::Stencil,
) -> (Option<Vec<f64>>, Vec<f64>) {
    let e = match edge {
        EdgeCorrection::None => None,
        _ => Some(edge::edge_mass(
            &cv.mask,
            cv.nx,
            cv.ny,
            stencil,
            kernel.lattice_mass(h, cv.cell),
        )),
    };
    let wt = |i: usize| weights.map_or(1.0, |w| w[i]);
    let ew: Vec<f64> = match (&e, edge) {
        (Some(e), EdgeCorrection::JonesDiggle) => (0..x.len())
            .map(|i| {
                let ei = cv.interpolate(e, x[i], y[i]);
                if ei > 0.0 {
                    wt(i) / ei
                } else {
                    0.0
                }
            })
            .collect(),
        _ => (0..x.len()).map(wt).collect(),
    };
    (e, ew)
}

/// Intensity per m² at the padded canvas's cell centres, plus `e_h` there.
#[allow(clippy::too_many_arguments)]
pub(crate) fn surface_on_canvas(
    cv: &Canvas,
    x: &[f64],
    y: &[f64],
    weights: Option<&[f64]>,
    kernel: Kernel,
    h: f64,
    edge: EdgeCorrection,
    evaluation: Evaluation,
) -> (Vec<f64>, Option<Vec<f64>>) {
    let stencil = kernel.stencil(h, cv.cell, cv.max_r());
    let (e, ew) = edge_and_event_weights(cv, x, y, weights, kernel, h, edge, &stencil);
    let mut v = match evaluation {
        Evaluation::Binned => {
            // The stencil carries the cell area (see Kernel::stencil); divide
            // it out to get events per m². Dividing by the stencil's lattice
            // mass too makes each binned event spread exactly its weight over
            // the grid: for a bandwidth near or below one cell the sampled
            // kernel sums to more than 1 (e.g. 1.11 at h = 0.43 cell) and the
            // surface would hold more events than there are.
            let counts = cv.bin(x, y, |i| ew[i]);
            let inv_a = 1.0 / (cv.cell * cv.cell * sampling_mass(kernel, h, cv.cell));
            let mut v = convolve(&counts, cv.nx, cv.ny, &stencil);
            v.iter_mut().for_each(|t| *t *= inv_a);
            v
        }
        Evaluation::Exact => exact_sum(cv, x, y, &ew, kernel, h),
    };
    if let (Some(e), EdgeCorrection::Uniform) = (&e, edge) {
        for (vk, ek) in v.iter_mut().zip(e) {
            *vk = if *ek > 0.0 { *vk / ek } else { 0.0 };
        }
    }
    for vk in &mut v {
        if *vk < 0.0 {
            *vk = 0.0; // FFT round-off
        }
    }
    (v, e)
}

/// Σ of the kernel sampled on the whole (untruncated) lattice × cell area:
/// 1 up to round-off once the bandwidth spans a few cells (Poisson summation),
/// above 1 when the kernel is narrower than a cell. Dividing binned surfaces
/// by it corrects the under-sampling without touching the 4-SD truncation.
fn sampling_mass(kernel: Kernel, h: f64, cell: f64) -> f64 {
    match kernel {
        Kernel::Gaussian => {
            let r = ((8.0 * h / cell).ceil() as i64).max(1);
            let s: f64 = (-r..=r)
                .map(|k| {
                    let x = k as f64 * cell;
                    (-x * x / (2.0 * h * h)).exp() / ((2.0 * std::f64::consts::PI).sqrt() * h)
                        * cell
                })
                .sum();
            s * s
        }
        Kernel::Quartic => kernel.lattice_mass(h, cell),
    }
}

fn exact_sum(cv: &Canvas, x: &[f64], y: &[f64], w: &[f64], kernel: Kernel, h: f64) -> Vec<f64> {
    let cut = kernel.cutoff(h, 8.0);
    let b = GridIndex::with_cell(x, y, cut);
    let mut v = vec![0.0; cv.nx * cv.ny];
    for j in 0..cv.ny {
        crate::progress::report(j, cv.ny);
        for i in 0..cv.nx {
            let k = j * cv.nx + i;
            if !cv.mask[k] {
                continue;
            }
            let ux = cv.x0 + (i as f64 + 0.5) * cv.cell;
            let uy = cv.y0 + (j as f64 + 0.5) * cv.cell;
            let mut s = 0.0;
            b.for_each_candidate(ux, uy, cut, |p| {
                let d2 = (x[p] - ux).powi(2) + (y[p] - uy).powi(2);
                if d2 <= cut * cut {
                    s += w[p] * kernel.value(d2, h);
                }
            });
            v[k] = s;
        }
    }
    v
}

/// [`kernel_surface`] on bare coordinates and a [`Window`].
pub fn kernel_surface_in(
    x: &[f64],
    y: &[f64],
    weights: Option<&[f64]>,
    region: &Window,
    o: &SurfaceOptions,
) -> Result<IntensitySurface, AnalysisError> {
    if x.len() != y.len() || weights.is_some_and(|w| w.len() != x.len()) {
        return Err(bad(
            "events",
            "coordinate and weight lists differ in length",
        ));
    }
    if let Some(w) = weights {
        if let Some(i) = w.iter().position(|v| !(v.is_finite() && *v >= 0.0)) {
            return Err(bad(
                "weights",
                format!(
                    "event {} has a weight that is negative or not a number",
                    i + 1
                ),
            ));
        }
    }
    let cv = Canvas::new(region, &o.grid)?;
    // Progress: a data-driven bandwidth search is most of the work.
    let searched = matches!(
        o.bandwidth.method,
        BandwidthMethod::LikelihoodCv | BandwidthMethod::DiggleMse
    );
    let split = if searched { 0.85 } else { 0.05 };
    let choice = crate::progress::part(0.0, split, || {
        bandwidth::choose(x, y, region, o.kernel, o.edge, &o.bandwidth, &o.grid)
    })?;
    let h = choice.bandwidth_m.ok_or_else(|| {
        bad(
            "bandwidth",
            choice
                .note
                .clone()
                .unwrap_or_else(|| "no bandwidth could be chosen".into()),
        )
    })?;
    let (v, _) = crate::progress::part(split, 1.0, || {
        let out = surface_on_canvas(&cv, x, y, weights, o.kernel, h, o.edge, o.evaluation);
        crate::progress::report(1, 1);
        out
    });
    let (values, mask) = cv.crop(&v, PER_KM2);
    let (x0, y0, nx, ny) = cv.inner;
    let grid = Grid {
        x0,
        y0,
        cell_m: cv.cell,
        nx,
        ny,
        values,
        mask,
    };
    let mut notes = Vec::new();
    if o.kernel.sd(h) < cv.cell {
        notes.push(format!(
            "the bandwidth ({h:.0} m) is about a grid cell ({:.0} m) or less: the surface is \
             coarse; use more cells",
            cv.cell
        ));
    }
    let cells_in = grid.mask.iter().filter(|&&m| m).count();
    let integral_events = grid.integral() / PER_KM2;
    Ok(IntensitySurface {
        max_per_km2: grid.max_value(),
        area_km2: cells_in as f64 * grid.cell_area() / PER_KM2,
        grid,
        kernel: o.kernel,
        bandwidth_m: h,
        bandwidth: choice,
        edge: o.edge,
        evaluation: o.evaluation,
        n_events: x.len(),
        total_weight: weights.map_or(x.len() as f64, |w| w.iter().sum()),
        integral_events,
        notes,
    })
}

#[cfg(test)]
mod tests;
