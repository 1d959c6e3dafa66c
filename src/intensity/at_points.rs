//! The kernel intensity of [`super::kernel_surface`] evaluated at chosen
//! points instead of at grid cells: the same kernels ([`Kernel::value`]),
//! the same edge factor `e_h` (computed on the surface's grid by
//! [`super::edge::edge_mass`] and interpolated at a point, as the
//! likelihood cross-validation does), with the defining sum taken exactly
//! over the sources within reach (Gaussian cut at 8 SD, as
//! [`Evaluation::Exact`](super::Evaluation::Exact)).
//!
//! At a source point itself it can **leave that point out**:
//! `λ̂_{−i}(x_i) = Σ_{j≠i} w_j k_h(x_i − x_j)` (with the edge correction).
//! The plug-in value `λ̂(x_i)` includes the point's own bump `w_i k_h(0)`,
//! which is large for a small bandwidth; estimates that weight pairs by
//! `1/λ̂(x_i)` (the inhomogeneous K function) need the leave-one-out value
//! (docs/methods.md#inhomogeneous-k).
//!
//! Units: coordinates and `h` in metres, the result in events per m².

use super::edge::EdgeCorrection;
use super::grid::GridOptions;
use super::kernel::Kernel;
use super::{edge_and_event_weights, surface_on_canvas, Canvas, Evaluation};
use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::window::Window;

/// Reach of the Gaussian kernel in the exact sums, in SDs.
const SD_CUT: f64 = 8.0;

/// A kernel intensity estimate of some source points (weighted or not),
/// ready to be evaluated anywhere in the study area.
pub struct PointIntensity {
    x: Vec<f64>,
    y: Vec<f64>,
    /// Source weight after the Jones–Diggle factor 1/e_h(x_j) when used.
    w: Vec<f64>,
    /// Source weights as given (for the gridded surface).
    raw_w: Option<Vec<f64>>,
    kernel: Kernel,
    h: f64,
    edge: EdgeCorrection,
    cut: f64,
    index: GridIndex,
    canvas: Canvas,
    /// e_h on the padded canvas (None without a correction).
    e: Option<Vec<f64>>,
}

impl PointIntensity {
    /// Prepares the estimate of points (x, y) with optional weights (e.g.
    /// counts per point; `None` = 1 each) in `region`, kernel `kernel` of
    /// bandwidth `h` metres (Gaussian: SD; quartic: radius), edge correction
    /// `edge`, `e_h` resolved on the grid `grid`.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        x: &[f64],
        y: &[f64],
        weights: Option<&[f64]>,
        region: &Window,
        kernel: Kernel,
        h: f64,
        edge: EdgeCorrection,
        grid: &GridOptions,
    ) -> Result<PointIntensity, AnalysisError> {
        let bad = |name: &str, d: &str| AnalysisError::BadParameter {
            name: name.into(),
            detail: d.into(),
        };
        if x.len() != y.len() || weights.is_some_and(|w| w.len() != x.len()) {
            return Err(bad(
                "points",
                "coordinate and weight lists differ in length",
            ));
        }
        if !(h.is_finite() && h > 0.0) {
            return Err(bad("bandwidth", "must be a positive number of metres"));
        }
        if let Some(w) = weights {
            if w.iter().any(|v| !(v.is_finite() && *v >= 0.0)) {
                return Err(bad("weights", "a weight is negative or not a number"));
            }
        }
        let canvas = Canvas::new(region, grid).map_err(|_| {
            bad(
                "grid",
                "the study area is too small or too thin for the intensity grid",
            )
        })?;
        let stencil = kernel.stencil(h, canvas.cell, canvas.max_r());
        let (e, w) = edge_and_event_weights(&canvas, x, y, weights, kernel, h, edge, &stencil);
        let cut = kernel.cutoff(h, SD_CUT);
        Ok(PointIntensity {
            index: GridIndex::with_cell(x, y, cut),
            x: x.to_vec(),
            y: y.to_vec(),
            w,
            raw_w: weights.map(|v| v.to_vec()),
            kernel,
            h,
            edge,
            cut,
            canvas,
            e,
        })
    }

    /// The bandwidth, metres.
    pub fn bandwidth(&self) -> f64 {
        self.h
    }

    /// λ̂ at (u, v), events per m², leaving out source `skip` if given.
    pub fn at(&self, u: f64, v: f64, skip: Option<usize>) -> f64 {
        let c2 = self.cut * self.cut;
        let mut s = 0.0;
        self.index.for_each_candidate(u, v, self.cut, |j| {
            if Some(j) == skip {
                return;
            }
            let d2 = (self.x[j] - u).powi(2) + (self.y[j] - v).powi(2);
            if d2 <= c2 {
                s += self.w[j] * self.kernel.value(d2, self.h);
            }
        });
        match (&self.e, self.edge) {
            (Some(e), EdgeCorrection::Uniform) => {
                let eu = self.canvas.interpolate(e, u, v);
                if eu > 0.0 {
                    s / eu
                } else {
                    0.0
                }
            }
            _ => s,
        }
    }

    /// λ̂ at each of the points (u, v).
    pub fn at_points(&self, u: &[f64], v: &[f64]) -> Vec<f64> {
        u.iter()
            .zip(v)
            .map(|(&a, &b)| self.at(a, b, None))
            .collect()
    }

    /// λ̂_{−i}(x_i) at every source point i, each leaving itself out.
    pub fn leave_one_out(&self) -> Vec<f64> {
        (0..self.x.len())
            .map(|i| self.at(self.x[i], self.y[i], Some(i)))
            .collect()
    }

    /// The whole surface on the padded grid of the edge correction (binned
    /// evaluation, [`surface_on_canvas`]), with a bilinear reading at any
    /// point: what a simulation draws points from.
    pub fn surface(&self) -> GridSurface {
        let (v, _) = surface_on_canvas(
            &self.canvas,
            &self.x,
            &self.y,
            self.raw_w.as_deref(),
            self.kernel,
            self.h,
            self.edge,
            Evaluation::Binned,
        );
        let max = v.iter().copied().fold(0.0, f64::max);
        GridSurface {
            canvas: Canvas {
                x0: self.canvas.x0,
                y0: self.canvas.y0,
                cell: self.canvas.cell,
                nx: self.canvas.nx,
                ny: self.canvas.ny,
                mask: self.canvas.mask.clone(),
                inner: self.canvas.inner,
            },
            v,
            max,
        }
    }
}

/// A kernel surface on the padded grid (cells outside the study area keep
/// their value, so reading it near the boundary is not dragged to 0).
pub struct GridSurface {
    canvas: Canvas,
    v: Vec<f64>,
    max: f64,
}

/// A [`GridSurface`] as plain numbers (to hand to another worker): the
/// padded grid's origin, cell side (m), shape and values (per m², row by row).
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct SurfaceParts {
    pub x0: f64,
    pub y0: f64,
    pub cell: f64,
    pub nx: usize,
    pub ny: usize,
    pub values: Vec<f64>,
}

impl GridSurface {
    /// The surface as plain numbers.
    pub fn parts(&self) -> SurfaceParts {
        SurfaceParts {
            x0: self.canvas.x0,
            y0: self.canvas.y0,
            cell: self.canvas.cell,
            nx: self.canvas.nx,
            ny: self.canvas.ny,
            values: self.v.clone(),
        }
    }

    /// The surface back from [`GridSurface::parts`] (checked: a shape that
    /// does not match its values, or a value that is negative or not a
    /// number, is refused).
    pub fn from_parts(p: &SurfaceParts) -> Result<GridSurface, AnalysisError> {
        let ok = p.nx >= 3
            && p.ny >= 3
            && p.nx.checked_mul(p.ny) == Some(p.values.len())
            && p.cell.is_finite()
            && p.cell > 0.0
            && p.x0.is_finite()
            && p.y0.is_finite()
            && p.values.iter().all(|v| v.is_finite() && *v >= 0.0);
        if !ok {
            return Err(AnalysisError::BadParameter {
                name: "surface".into(),
                detail: "the shared intensity surface is not a usable grid".into(),
            });
        }
        Ok(GridSurface {
            canvas: Canvas {
                x0: p.x0,
                y0: p.y0,
                cell: p.cell,
                nx: p.nx,
                ny: p.ny,
                mask: vec![true; p.values.len()],
                inner: (p.x0 + p.cell, p.y0 + p.cell, p.nx - 2, p.ny - 2),
            },
            max: p.values.iter().copied().fold(0.0, f64::max),
            v: p.values.clone(),
        })
    }

    /// Bilinear value at (x, y), events per m².
    pub fn at(&self, x: f64, y: f64) -> f64 {
        self.canvas.interpolate(&self.v, x, y)
    }
    /// Largest cell value: an upper bound of [`GridSurface::at`].
    pub fn max(&self) -> f64 {
        self.max
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rng::rng_from_seed;

    /// Leave-one-out really leaves the point out: against a brute-force
    /// double loop over all pairs (no grid index, no cut-off beyond 8 SD,
    /// which drops < 1e-13 of a Gaussian), with and without weights, for
    /// both kernels, and the plug-in value exceeds it by exactly the
    /// point's own bump w_i k_h(0) (no edge correction).
    #[test]
    fn leave_one_out_matches_brute_force() {
        let w = Window::rectangle(0.0, 0.0, 1000.0, 800.0).unwrap();
        let mut rng = rng_from_seed(4);
        let (x, y) = w.sample_uniform(150, &mut rng);
        let wts: Vec<f64> = (0..150).map(|i| 1.0 + (i % 4) as f64).collect();
        for kernel in [Kernel::Gaussian, Kernel::Quartic] {
            for weights in [None, Some(&wts[..])] {
                let h = 90.0;
                let est = PointIntensity::new(
                    &x,
                    &y,
                    weights,
                    &w,
                    kernel,
                    h,
                    EdgeCorrection::None,
                    &GridOptions::default(),
                )
                .unwrap();
                let loo = est.leave_one_out();
                let wt = |j: usize| weights.map_or(1.0, |v| v[j]);
                for i in 0..150 {
                    let mut s = 0.0;
                    for j in 0..150 {
                        if j != i {
                            let d2 = (x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2);
                            s += wt(j) * kernel.value(d2, h);
                        }
                    }
                    assert!(
                        (loo[i] - s).abs() <= 1e-12 * s.max(1e-300) + 1e-18,
                        "{kernel:?} {i}: {} vs {s}",
                        loo[i]
                    );
                    let full = est.at(x[i], y[i], None);
                    let own = wt(i) * kernel.value(0.0, h);
                    assert!((full - loo[i] - own).abs() <= 1e-12 * full);
                }
            }
        }
    }

    /// The gridded surface (binned, what the population's intensity is read
    /// from) against the exact sum at points: within 1 % of the surface's
    /// peak (the intensity module's measure for binned against exact) at random points of a window with a hole, near its edges too,
    /// for a kernel SD of 8 cells (the population grid of the inhomogeneous K
    /// has at least that), each edge correction.
    #[test]
    fn grid_reading_matches_exact_sum() {
        let w =
            Window::rectangle_with_hole([0.0, 0.0, 1000.0, 600.0], [400.0, 200.0, 600.0, 400.0])
                .unwrap();
        let mut rng = rng_from_seed(12);
        let (x, y) = w.sample_uniform(400, &mut rng);
        let (u, v) = w.sample_uniform(300, &mut rng);
        for edge in [
            EdgeCorrection::None,
            EdgeCorrection::Uniform,
            EdgeCorrection::JonesDiggle,
        ] {
            for kernel in [Kernel::Gaussian, Kernel::Quartic] {
                let h =
                    kernel.cutoff(32.0, 1.0) * if kernel == Kernel::Quartic { 2.83 } else { 1.0 };
                let est =
                    PointIntensity::new(&x, &y, None, &w, kernel, h, edge, &GridOptions::default())
                        .unwrap();
                let surf = est.surface();
                let exact = est.at_points(&u, &v);
                // The intensity module's yardstick: the surface's peak.
                let top = surf.max();
                for i in 0..u.len() {
                    let g = surf.at(u[i], v[i]);
                    assert!(g <= surf.max() * (1.0 + 1e-12));
                    assert!(
                        (g - exact[i]).abs() < 0.01 * top,
                        "{edge:?} {kernel:?} at ({}, {}): {g} vs {}",
                        u[i],
                        v[i],
                        exact[i]
                    );
                }
            }
        }
    }

    /// Uniform correction divides by e_h at the evaluation point; far from
    /// the boundary e_h = 1 and it changes nothing, at a corner of a large
    /// rectangle e_h ≈ 1/4 (docs/methods.md#kernel check values: Gaussian
    /// e(corner) = 0.25), so the corrected value is about 4 times the raw one.
    #[test]
    fn uniform_correction_at_points() {
        let w = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
        let (x, y) = (vec![500.0, 10.0, 990.0], vec![500.0, 10.0, 990.0]);
        let make = |edge| {
            PointIntensity::new(
                &x,
                &y,
                None,
                &w,
                Kernel::Gaussian,
                20.0,
                edge,
                &GridOptions::default(),
            )
            .unwrap()
        };
        let (raw, uni) = (make(EdgeCorrection::None), make(EdgeCorrection::Uniform));
        let centre = (uni.at(500.0, 500.0, None), raw.at(500.0, 500.0, None));
        assert!((centre.0 / centre.1 - 1.0).abs() < 1e-9);
        let corner = uni.at(0.0, 0.0, None) / raw.at(0.0, 0.0, None);
        assert!((corner - 4.0).abs() < 0.1, "{corner}");
    }
}
