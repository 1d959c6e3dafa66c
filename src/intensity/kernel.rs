//! Smoothing kernels in two dimensions, each integrating to 1 over the plane.
//!
//! **What "bandwidth" means differs by kernel, on purpose, as in docs/methods.md#kernel:**
//! * [`Kernel::Gaussian`]: `h` is the standard deviation per axis,
//!   `k_h(u) = exp(−|u|²/(2h²)) / (2πh²)`, so `k_h(0) = 0.15915494/h²`.
//! * [`Kernel::Quartic`] (biweight): `h` is the support radius,
//!   `k_h(u) = 3/(πh²) · (1 − |u|²/h²)²` for `|u| ≤ h`, 0 beyond;
//!   `k_h(0) = 0.95492966/h²`; per-axis variance `h²/8`, so a quartic kernel
//!   with `h = 2√2·σ` spreads as much as a Gaussian of SD `σ`.

use super::fft::Stencil;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// The kernel shape.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Kernel {
    /// Bandwidth = standard deviation per axis.
    #[default]
    Gaussian,
    /// Bandwidth = support radius.
    Quartic,
}

/// Gaussian kernels are cut at this many SDs in the fast (gridded) path;
/// the mass outside the square of half-side 4σ is 1 − erf(4/√2)² ≈ 1.3e-4.
pub const GAUSS_TRUNCATE_SD: f64 = 4.0;

/// Ratio of quartic support radius to the Gaussian SD with the same spread.
pub const QUARTIC_PER_GAUSS_SD: f64 = 2.828_427_124_746_190_3;

impl Kernel {
    /// `k_h(u)` for `|u|² = d2`, per m² when `h` is in metres.
    #[inline]
    pub fn value(self, d2: f64, h: f64) -> f64 {
        match self {
            Kernel::Gaussian => (-d2 / (2.0 * h * h)).exp() / (2.0 * PI * h * h),
            Kernel::Quartic => {
                let t = 1.0 - d2 / (h * h);
                if t <= 0.0 {
                    0.0
                } else {
                    3.0 / (PI * h * h) * t * t
                }
            }
        }
    }

    /// Distance beyond which the kernel is treated as zero: the support
    /// radius for the quartic; `sd_cut`·h for the Gaussian.
    pub fn cutoff(self, h: f64, sd_cut: f64) -> f64 {
        match self {
            Kernel::Gaussian => sd_cut * h,
            Kernel::Quartic => h,
        }
    }

    /// Per-axis standard deviation of the kernel (for comparing kernels).
    pub fn sd(self, h: f64) -> f64 {
        match self {
            Kernel::Gaussian => h,
            Kernel::Quartic => h / QUARTIC_PER_GAUSS_SD,
        }
    }

    /// The kernel sampled at grid offsets, times the cell area: a
    /// convolution of a 0/1 mask then gives the kernel mass inside the area
    /// (midpoint rule), and of binned counts, intensity × cell area.
    /// Gaussian: separable, cut at 4 SD.
    /// `max_r` caps the radius in cells (offsets beyond the raster's size
    /// never matter), which keeps huge bandwidths from huge stencils.
    pub(crate) fn stencil(self, h: f64, cell: f64, max_r: usize) -> Stencil {
        match self {
            Kernel::Gaussian => {
                let r = ((GAUSS_TRUNCATE_SD * h / cell).ceil() as usize).clamp(1, max_r.max(1));
                // 1-D factors: exp(−x²/2h²)/(√(2π)h) · cell.
                let w = (0..=2 * r)
                    .map(|k| {
                        let x = (k as f64 - r as f64) * cell;
                        (-x * x / (2.0 * h * h)).exp() / ((2.0 * PI).sqrt() * h) * cell
                    })
                    .collect();
                Stencil::Separable { r, w }
            }
            Kernel::Quartic => {
                let r = ((h / cell).ceil() as usize).clamp(1, max_r.max(1));
                let m = 2 * r + 1;
                let mut w = vec![0.0; m * m];
                for b in 0..m {
                    for a in 0..m {
                        let dx = (a as f64 - r as f64) * cell;
                        let dy = (b as f64 - r as f64) * cell;
                        w[b * m + a] = self.value(dx * dx + dy * dy, h) * cell * cell;
                    }
                }
                Stencil::Full { r, w }
            }
        }
    }

    /// Σ over the whole lattice of the sampled kernel × cell area, without
    /// the `max_r` cap (≈ 1 when the bandwidth spans several cells): the
    /// normaliser that makes `e_h = 1` far from the boundary.
    pub(crate) fn lattice_mass(self, h: f64, cell: f64) -> f64 {
        match self {
            Kernel::Gaussian => {
                let r = ((GAUSS_TRUNCATE_SD * h / cell).ceil() as i64).max(1);
                let s: f64 = (-r..=r)
                    .map(|k| {
                        let x = k as f64 * cell;
                        (-x * x / (2.0 * h * h)).exp() / ((2.0 * PI).sqrt() * h) * cell
                    })
                    .sum();
                s * s
            }
            Kernel::Quartic => {
                let r = ((h / cell).ceil() as i64).max(1);
                if r > 1500 {
                    return 1.0; // midpoint rule error O((cell/h)²) < 1e-6
                }
                let mut s = 0.0;
                for b in -r..=r {
                    for a in -r..=r {
                        let (dx, dy) = (a as f64 * cell, b as f64 * cell);
                        s += self.value(dx * dx + dy * dy, h);
                    }
                }
                s * cell * cell
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// ∫ k over the plane by a fine midpoint rule.
    fn mass(k: Kernel, h: f64) -> f64 {
        let step = h / 200.0;
        let lim = k.cutoff(h, 9.0);
        let n = (lim / step).ceil() as i64;
        let mut s = 0.0;
        for j in -n..n {
            for i in -n..n {
                let x = (i as f64 + 0.5) * step;
                let y = (j as f64 + 0.5) * step;
                s += k.value(x * x + y * y, h);
            }
        }
        s * step * step
    }

    #[test]
    fn peak_values_match_methods_constants() {
        // docs/methods.md#kernel [C]: Gaussian k(0) = 0.15915494/h², quartic k(0) = 0.95492966/h².
        let h = 3.0;
        assert!((Kernel::Gaussian.value(0.0, h) * h * h - 0.15915494).abs() < 1e-8);
        assert!((Kernel::Quartic.value(0.0, h) * h * h - 0.95492966).abs() < 1e-8);
        assert_eq!(Kernel::Quartic.value(h * h, h), 0.0);
    }

    #[test]
    fn kernels_integrate_to_one() {
        // docs/methods.md#kernel [C]: each kernel integrates to 1.
        assert!((mass(Kernel::Gaussian, 1.7) - 1.0).abs() < 1e-6);
        assert!((mass(Kernel::Quartic, 1.7) - 1.0).abs() < 1e-4);
    }

    #[test]
    fn quartic_axis_variance_is_h2_over_8() {
        // docs/methods.md#kernel [C]: per-axis variance h²/8, so h = 2√2·σ.
        let h: f64 = 2.0;
        let step = h / 400.0;
        let n = (h / step).ceil() as i64;
        let mut v = 0.0;
        for j in -n..n {
            for i in -n..n {
                let x = (i as f64 + 0.5) * step;
                let y = (j as f64 + 0.5) * step;
                v += x * x * Kernel::Quartic.value(x * x + y * y, h);
            }
        }
        v *= step * step;
        assert!((v - h * h / 8.0).abs() < 1e-4, "{v}");
        assert!((QUARTIC_PER_GAUSS_SD - 8f64.sqrt()).abs() < 1e-15);
    }
}
