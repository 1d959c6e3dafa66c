//! A raster over the study area: the grid every surface is evaluated on.

use serde::{Deserialize, Serialize};

/// A regular raster in metres.
///
/// Cell `(i, j)` (column `i` in `0..nx`, row `j` in `0..ny`) covers
/// `[x0 + i·cell, x0 + (i+1)·cell) × [y0 + j·cell, y0 + (j+1)·cell)`; its
/// centre is at `(x0 + (i+½)·cell, y0 + (j+½)·cell)`. `values` and `mask` are
/// **row-major with row 0 at the bottom** (south), index `j·nx + i`. A cell is
/// in the study area (`mask == true`) when its centre is; values of masked-out
/// cells are 0 and carry no meaning.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Grid {
    /// x of the lower-left corner of cell (0, 0), metres.
    pub x0: f64,
    /// y of the lower-left corner of cell (0, 0), metres.
    pub y0: f64,
    /// Side of a square cell, metres.
    pub cell_m: f64,
    pub nx: usize,
    pub ny: usize,
    pub values: Vec<f64>,
    pub mask: Vec<bool>,
}

/// How to lay the grid over the study area's bounding box.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct GridOptions {
    /// Cells along the longer side of the bounding box (ignored when
    /// `cell_m` is set). Default 256.
    pub cells_long_side: usize,
    /// Cell side in metres; `None` derives it from `cells_long_side`.
    pub cell_m: Option<f64>,
}

impl Default for GridOptions {
    fn default() -> Self {
        GridOptions {
            cells_long_side: 256,
            cell_m: None,
        }
    }
}

/// Largest grid side accepted (cells), to keep memory bounded in the page.
pub const MAX_SIDE: usize = 4096;

impl GridOptions {
    /// Origin, cell size and shape covering `bbox`.
    pub(crate) fn layout(&self, bbox: [f64; 4]) -> Result<(f64, f64, f64, usize, usize), String> {
        let w = bbox[2] - bbox[0];
        let h = bbox[3] - bbox[1];
        let long = w.max(h);
        if !(long > 0.0 && long.is_finite()) {
            return Err("the study area has no extent".into());
        }
        let cell = match self.cell_m {
            Some(c) if c > 0.0 && c.is_finite() => c,
            Some(_) => return Err("the cell size must be a positive number of metres".into()),
            None => {
                if self.cells_long_side < 2 {
                    return Err("at least 2 cells along the longer side are needed".into());
                }
                long / self.cells_long_side as f64
            }
        };
        let nx = ((w / cell).ceil() as usize).max(1);
        let ny = ((h / cell).ceil() as usize).max(1);
        if nx > MAX_SIDE || ny > MAX_SIDE {
            return Err(format!(
                "a {nx} × {ny} grid is too large (at most {MAX_SIDE} cells a side)"
            ));
        }
        // Centre the grid on the bounding box.
        let x0 = bbox[0] - 0.5 * (nx as f64 * cell - w);
        let y0 = bbox[1] - 0.5 * (ny as f64 * cell - h);
        Ok((x0, y0, cell, nx, ny))
    }
}

impl Grid {
    /// Centre of cell `(i, j)`.
    pub fn centre(&self, i: usize, j: usize) -> (f64, f64) {
        (
            self.x0 + (i as f64 + 0.5) * self.cell_m,
            self.y0 + (j as f64 + 0.5) * self.cell_m,
        )
    }

    /// Area of one cell, m².
    pub fn cell_area(&self) -> f64 {
        self.cell_m * self.cell_m
    }

    /// Sum of value × cell area over cells in the study area (midpoint rule).
    pub fn integral(&self) -> f64 {
        self.values
            .iter()
            .zip(&self.mask)
            .filter(|(_, &m)| m)
            .map(|(v, _)| v)
            .sum::<f64>()
            * self.cell_area()
    }

    /// Largest value over cells in the study area (0 if none).
    pub fn max_value(&self) -> f64 {
        self.values
            .iter()
            .zip(&self.mask)
            .filter(|(_, &m)| m)
            .map(|(v, _)| *v)
            .fold(0.0, f64::max)
    }

    /// Bilinear interpolation between cell centres (clamped at the edges).
    pub fn interpolate(&self, x: f64, y: f64) -> f64 {
        bilinear(
            &self.values,
            self.nx,
            self.ny,
            self.x0,
            self.y0,
            self.cell_m,
            x,
            y,
        )
    }
}

/// Bilinear interpolation of a row-major field sampled at cell centres.
#[allow(clippy::too_many_arguments)]
pub(crate) fn bilinear(
    v: &[f64],
    nx: usize,
    ny: usize,
    x0: f64,
    y0: f64,
    cell: f64,
    x: f64,
    y: f64,
) -> f64 {
    let fx = ((x - x0) / cell - 0.5).clamp(0.0, (nx - 1) as f64);
    let fy = ((y - y0) / cell - 0.5).clamp(0.0, (ny - 1) as f64);
    let i = (fx.floor() as usize).min(nx.saturating_sub(2));
    let j = (fy.floor() as usize).min(ny.saturating_sub(2));
    let tx = if nx > 1 { fx - i as f64 } else { 0.0 };
    let ty = if ny > 1 { fy - j as f64 } else { 0.0 };
    let i1 = (i + 1).min(nx - 1);
    let j1 = (j + 1).min(ny - 1);
    let a = v[j * nx + i];
    let b = v[j * nx + i1];
    let c = v[j1 * nx + i];
    let d = v[j1 * nx + i1];
    (1.0 - ty) * ((1.0 - tx) * a + tx * b) + ty * ((1.0 - tx) * c + tx * d)
}
