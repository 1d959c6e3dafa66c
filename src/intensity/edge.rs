//! Edge correction for kernel intensity near the study-area boundary.
//!
//! Events near the edge lose part of their kernel mass outside the area, so an
//! uncorrected surface sags there. With `e_h(u) = ∫_W k_h(u − v) dv`, the share
//! of a kernel centred at `u` that falls inside `W`:
//! * **Uniform** (Diggle 1985, Applied Statistics 34:138–147):
//!   `λ̂_U(u) = λ̂(u) / e_h(u)`.
//! * **Jones–Diggle** (Jones 1993, Statistics and Computing 3:135–146; the name
//!   follows Baddeley, Rubak & Turner 2015): `λ̂_JD(u) = Σ_i k_h(u − x_i)/e_h(x_i)`.
//!   Each event keeps exactly one unit of mass inside `W`, so `∫_W λ̂_JD = n`.
//!
//! `e_h` is computed on the grid by convolving the 0/1 mask of cells whose
//! centre is in `W` with the sampled kernel, divided by the sampled kernel's
//! sum over the whole lattice (so
//! `e_h = 1` wherever the whole stencil is inside); `e_h(x_i)` at events is the
//! bilinear interpolation of that grid (quadrature at cell resolution,
//! docs/methods.md#kernel \[CP\]). The boundary is therefore resolved to one cell.

use super::fft::{convolve, Stencil};
use serde::{Deserialize, Serialize};

/// Which edge correction to apply.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum EdgeCorrection {
    /// No correction: the surface sags near the boundary.
    None,
    /// Divide the surface by `e_h(u)` (Diggle 1985).
    Uniform,
    /// Weight each event by `1/e_h(x_i)` (Jones 1993); keeps ∫_W λ̂ = n.
    #[default]
    JonesDiggle,
}

/// `e_h` at cell centres of a (padded) raster with the given mask.
/// `total` is the kernel's lattice mass ([`super::kernel::Kernel`]'s
/// normaliser), so that `e_h = 1` where the whole kernel is inside.
pub(crate) fn edge_mass(
    mask: &[bool],
    nx: usize,
    ny: usize,
    stencil: &Stencil,
    total: f64,
) -> Vec<f64> {
    let m: Vec<f64> = mask.iter().map(|&b| if b { 1.0 } else { 0.0 }).collect();
    let s = total;
    let mut e = convolve(&m, nx, ny, stencil);
    for v in &mut e {
        *v = (*v / s).clamp(0.0, 1.0);
    }
    e
}
