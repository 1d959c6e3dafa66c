//! The distance functions G, F, J, K, L and the pair correlation g over a
//! grid of distances.
//!
//! # Definitions and estimators (docs/methods.md#distance-functions)
//! * **K** (Ripley 1976, 1977 [from memory]):
//!   K̂(r) = |W| / (n(n−1)) · Σ_{i≠j} 1{d_ij ≤ r}·e_ij. The n(n−1)
//!   normalisation is used (unbiased for λ² under Poisson, and K̂ is
//!   unbiased for πr² under binomial CSR with the isotropic or translation
//!   correction; docs/methods.md#csr [derived]). With the **border** correction
//!   K̂_B(r) = |W|/(n−1) · Σ_i 1{b_i ≥ r}·#{j ≠ i: d_ij ≤ r} / #{i: b_i ≥ r},
//!   i.e. λ̂ = (n−1)/|W| in place of n/|W|, consistent with the n(n−1)
//!   normalisation (the docs/methods.md#distance-functions table uses n/|W|; values differ by the
//!   factor n/(n−1)).
//! * **L** = √(K/π) (Besag 1977 [from memory]); CSR: L(r) = r.
//! * **g** (pair correlation): ĝ(r) = |W| / (2πr·n(n−1)) ·
//!   Σ_{i≠j} κ_h(r − d_ij)·e_ij with the Epanechnikov kernel
//!   κ_h(u) = 3/(4h)·(1 − u²/h²)₊ and h = 0.15/√λ̂ (Stoyan & Stoyan 1994,
//!   *Fractals, Random Shapes and Point Fields*, Wiley, pp. 284–285 [from
//!   memory]). Biased for r < h; undefined (NaN) at r = 0. The border
//!   correction is not defined for g: g then uses the isotropic weights.
//! * **G** (nearest neighbour), border (reduced sample):
//!   Ĝ(r) = #{i: d_i ≤ r, b_i ≥ r} / #{i: b_i ≥ r}. Kaplan–Meier and
//!   Hanisch estimators are not implemented.
//! * **F** (empty space) on a regular grid of test locations u_k in W (cell
//!   centres, spacing r_max/50 [common practice, docs/methods.md#distance-functions], widened so
//!   at most 65,536 grid nodes cover the bounding box):
//!   F̂(r) = #{k: e_k ≤ r, b_k ≥ r} / #{k: b_k ≥ r}.
//! * **J** = (1 − Ĝ)/(1 − F̂) (van Lieshout & Baddeley 1996), reported only
//!   where F̂ < 0.9 (NaN elsewhere) because it is noisy near F̂ = 1 [common
//!   practice, docs/methods.md#distance-functions].
//! * CSR curves: K = πr², L = r, g = 1, G = F = 1 − exp(−λ̂πr²) (exact
//!   under Poisson; binomial differences negligible for n ≳ 50), J = 1.
//!
//! # Distance grid
//! r_k = k·r_max/n_steps, k = 0..=n_steps (default 50 steps). Default
//! r_max: for an axis-aligned rectangle ¼ of the shorter side (Ripley 1988,
//! *Statistical Inference for Spatial Processes*, CUP [from memory]); for
//! any other window min(¼ of the shorter side of the bounding box,
//! ½·√(|W|/π)) — the second term (half the radius of a disc of the same
//! area) is our own rule [common practice, no source] that shrinks r_max for
//! thin or ragged windows.
//!
//! # Complexity
//! One pass over the pairs within r_max (+h for g) on [`crate::index::GridIndex`],
//! O(n + pairs), plus one boundary-distance query per point and, with the
//! isotropic correction, one analytic arc computation per ordered pair
//! whose circle reaches the boundary.

use super::edge::{Correction, IsoCache, NnCorrection, Translation};
use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::study::Pattern;
use crate::window::Window;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Parameters of the distance functions. Every field has a default, so
/// JavaScript may leave any of them out.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct FunctionParams {
    /// Largest distance in m (default: see the module docs).
    pub r_max: Option<f64>,
    /// Number of steps from 0 to r_max (the grid has n_steps + 1 values).
    pub n_steps: usize,
    /// Edge correction for K, L and g.
    pub correction: Correction,
    /// Edge correction for G, F and J.
    pub nn_correction: NnCorrection,
    /// Upper limit on isotropic and translation weights.
    pub weight_cap: f64,
    /// Kernel half-width for g in m (default 0.15/√λ̂).
    pub bandwidth: Option<f64>,
    /// Spacing of the F test locations in m (default r_max/50).
    pub f_spacing: Option<f64>,
}

impl Default for FunctionParams {
    fn default() -> Self {
        FunctionParams {
            r_max: None,
            n_steps: 50,
            correction: Correction::Isotropic,
            nn_correction: NnCorrection::Border,
            weight_cap: 4.0,
            bandwidth: None,
            f_spacing: None,
        }
    }
}

/// All distance functions of one pattern, with their CSR curves.
#[derive(Debug, Clone, Serialize)]
pub struct DistanceFunctions {
    pub n: usize,
    pub area_m2: f64,
    pub intensity_per_m2: f64,
    pub r: Vec<f64>,
    pub r_max: f64,
    /// How r_max was chosen, in words.
    pub r_max_rule: String,
    pub correction: Correction,
    pub nn_correction: NnCorrection,
    pub bandwidth_m: f64,
    pub weight_cap: f64,
    pub k: Vec<f64>,
    pub k_theo: Vec<f64>,
    pub l: Vec<f64>,
    pub l_theo: Vec<f64>,
    /// Pair correlation g.
    pub pcf: Vec<f64>,
    pub pcf_theo: Vec<f64>,
    /// Nearest-neighbour distribution G.
    pub g: Vec<f64>,
    /// Empty-space function F.
    pub f: Vec<f64>,
    /// CSR curve for G and F.
    pub gf_theo: Vec<f64>,
    pub j: Vec<f64>,
    pub j_theo: Vec<f64>,
    /// Number of F test locations.
    pub f_locations: usize,
    /// Pair weights that hit the cap.
    pub capped_weights: u64,
    pub warnings: Vec<String>,
}

/// What a computation needs.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Needs {
    pub k: bool,
    pub pcf: bool,
    pub g: bool,
    pub f: bool,
}

impl Needs {
    /// K alone.
    pub(crate) const K_ONLY: Needs = Needs {
        k: true,
        pcf: false,
        g: false,
        f: false,
    };
}

/// Curves of one pattern (only those asked for).
#[derive(Debug, Clone, Default)]
pub(crate) struct Curves {
    pub k: Vec<f64>,
    pub pcf: Vec<f64>,
    pub g: Vec<f64>,
    pub f: Vec<f64>,
    pub capped: u64,
}

/// Everything that depends on the window and parameters, not the points.
pub(crate) struct Context {
    pub region: Window,
    pub r: Vec<f64>,
    pub step: f64,
    pub r_max: f64,
    pub r_max_rule: String,
    pub correction: Correction,
    pub pcf_correction: Correction,
    pub nn_correction: NnCorrection,
    pub cap: f64,
    pub bandwidth: f64,
    pub n: usize,
    translation: Option<Translation>,
    f_x: Vec<f64>,
    f_y: Vec<f64>,
    f_b: Vec<f64>,
    pub warnings: Vec<String>,
}

fn bad(name: &str, detail: impl Into<String>) -> AnalysisError {
    AnalysisError::BadParameter {
        name: name.into(),
        detail: detail.into(),
    }
}

/// Default r_max for a region, with the rule in words.
pub(crate) fn default_r_max(region: &Window) -> (f64, String) {
    let [x0, y0, x1, y1] = region.bbox();
    let short = (x1 - x0).min(y1 - y0);
    if region.axis_rectangle().is_some() {
        (
            0.25 * short,
            "a quarter of the shorter side of the rectangle (Ripley 1988)".into(),
        )
    } else {
        let disc = 0.5 * (region.area() / PI).sqrt();
        if disc < 0.25 * short {
            (disc, "half the radius of a disc with the study area's area (our rule for irregular areas)".into())
        } else {
            (
                0.25 * short,
                "a quarter of the shorter side of the study area's bounding box".into(),
            )
        }
    }
}

/// Default kernel half-width for g at intensity `lambda` (events per m²).
pub(crate) fn default_bandwidth(lambda: f64) -> f64 {
    0.15 / lambda.sqrt()
}

impl Context {
    pub fn new(
        region: Window,
        n: usize,
        p: &FunctionParams,
        needs: Needs,
    ) -> Result<Context, AnalysisError> {
        if n < 2 {
            return Err(AnalysisError::TooFewPoints {
                needed: 2,
                found: n,
            });
        }
        if !(p.n_steps >= 1 && p.n_steps <= 10_000) {
            return Err(bad("n_steps", "must be between 1 and 10000"));
        }
        if p.weight_cap.is_nan() || p.weight_cap < 1.0 {
            return Err(bad("weight_cap", "must be at least 1"));
        }
        let (r_max, r_max_rule) = match p.r_max {
            Some(r) if r.is_finite() && r > 0.0 => (r, "set by the user".to_string()),
            Some(_) => return Err(bad("r_max", "must be a positive number of metres")),
            None => default_r_max(&region),
        };
        let mut warnings = Vec::new();
        let [bx0, by0, bx1, by1] = region.bbox();
        if r_max > 0.5 * (bx1 - bx0).min(by1 - by0) {
            warnings.push(format!(
                "the largest distance ({r_max:.4} m) exceeds half the study area's shorter side: edge-corrected estimates there rest on few points"
            ));
        }
        let lambda = n as f64 / region.area();
        let bandwidth = match p.bandwidth {
            Some(h) if h.is_finite() && h > 0.0 => h,
            Some(_) => return Err(bad("bandwidth", "must be a positive number of metres")),
            None => default_bandwidth(lambda),
        };
        let step = r_max / p.n_steps as f64;
        // k·r_max/n (not k·step) so that e.g. 0.25·3/5 is exactly 0.15.
        let r: Vec<f64> = (0..=p.n_steps)
            .map(|k| (k as f64 * r_max) / p.n_steps as f64)
            .collect();
        let pcf_correction = if p.correction == Correction::Border && needs.pcf {
            warnings.push(
                "the border correction is not defined for g: g uses the isotropic correction"
                    .into(),
            );
            Correction::Isotropic
        } else {
            p.correction
        };
        let uses_translation = (needs.k && p.correction == Correction::Translation)
            || (needs.pcf && pcf_correction == Correction::Translation);
        let translation = if uses_translation {
            // Same table whether or not g is computed, so K does not depend
            // on which other functions were asked for.
            Some(Translation::new(&region, r_max + bandwidth))
        } else {
            None
        };
        let (mut f_x, mut f_y, mut f_b) = (Vec::new(), Vec::new(), Vec::new());
        if needs.f {
            let w = bx1 - bx0;
            let h = by1 - by0;
            let mut s = match p.f_spacing {
                Some(s) if s.is_finite() && s > 0.0 => s,
                Some(_) => return Err(bad("f_spacing", "must be a positive number of metres")),
                None => r_max / 50.0,
            };
            if (w / s) * (h / s) > 65_536.0 {
                s = (w * h / 65_536.0).sqrt();
            }
            let nx = ((w / s).floor() as usize).max(1);
            let ny = ((h / s).floor() as usize).max(1);
            let ox = bx0 + 0.5 * (w - (nx as f64 - 1.0) * s);
            let oy = by0 + 0.5 * (h - (ny as f64 - 1.0) * s);
            for iy in 0..ny {
                for ix in 0..nx {
                    let (x, y) = (ox + ix as f64 * s, oy + iy as f64 * s);
                    if region.contains(x, y) {
                        f_x.push(x);
                        f_y.push(y);
                        f_b.push(region.boundary_distance(x, y));
                    }
                }
            }
            if f_x.is_empty() {
                warnings.push(
                    "no F test location falls inside the study area; F and J are undefined".into(),
                );
            }
        }
        Ok(Context {
            region,
            r,
            step,
            r_max,
            r_max_rule,
            correction: p.correction,
            pcf_correction,
            nn_correction: p.nn_correction,
            cap: p.weight_cap,
            bandwidth,
            n,
            translation,
            f_x,
            f_y,
            f_b,
            warnings,
        })
    }

    /// The translation weights, when the correction (of K or g) uses them.
    pub(crate) fn translation(&self) -> Option<&Translation> {
        self.translation.as_ref()
    }

    pub fn f_locations(&self) -> usize {
        self.f_x.len()
    }

    /// Index of the smallest grid value r_k ≥ d (may be r.len()).
    #[inline]
    fn bin(&self, d: f64) -> usize {
        let n = self.r.len();
        let q = d / self.step;
        if q.is_nan() || q >= n as f64 {
            return n;
        }
        let mut k = q as usize;
        if k < n && d > self.r[k] {
            k += 1;
        }
        if k > 0 && k <= n && d <= self.r[k - 1] {
            k -= 1;
        }
        k
    }

    /// Bins of the distances whose estimate is doubtful (within rounding of
    /// a grid value, [`BinScale`]), settled exactly against the grid. Rare
    /// except on lattices.
    fn settle_doubtful(&self, scale: &BinScale, ds: &[f64], ks: &mut [u32]) {
        for (k, &d) in ks.iter_mut().zip(ds) {
            if scale.doubtful(d) {
                *k = self.bin(d) as u32;
            }
        }
    }

    /// Largest k with r_k ≤ b, or None when b < 0.
    #[inline]
    fn last_at_most(&self, b: f64) -> Option<usize> {
        if b < 0.0 {
            return None;
        }
        let k = self.bin(b);
        let n = self.r.len();
        if k < n && self.r[k] <= b {
            Some(k)
        } else if k == 0 {
            None
        } else {
            Some(k - 1)
        }
    }

    /// Calls `visit(i, j, k, w)` once for every unordered pair of points
    /// (input indices i ≠ j) at most `r_max` apart: `k` is the grid bin of
    /// their distance (the smallest k with d ≤ r_k) and `w` the pair's K
    /// weight summed over both orders, as the K estimator adds it (2 without
    /// a correction, e_ij + e_ji isotropic, 2·e_ij translation). So K(r_k)
    /// = |W| / (n(n − 1)) · Σ_{pairs with bin ≤ k} w, and the same visit
    /// restricted to a subset of the points gives that subset's K. Returns
    /// how many weights reached the cap. Not for the border correction,
    /// whose weights depend on which points are centres (an error).
    pub(crate) fn for_each_k_pair<F: FnMut(usize, usize, usize, f64)>(
        &self,
        x: &[f64],
        y: &[f64],
        mut visit: F,
    ) -> Result<u64, AnalysisError> {
        if self.correction == Correction::Border {
            return Err(bad(
                "correction",
                "the border correction is not available here: use isotropic, translation or none",
            ));
        }
        let n = x.len();
        let grid = GridIndex::with_cell(x, y, self.r_max / 4.0);
        let iso = (self.correction == Correction::Isotropic).then(|| {
            let b: Vec<f64> = (0..n)
                .map(|p| self.region.boundary_distance(grid.xs[p], grid.ys[p]))
                .collect();
            IsoCache::new(&self.region, &grid.xs, &grid.ys, b, self.r_max, self.cap)
        });
        let mut capped = 0u64;
        grid.for_each_slot_pair(self.r_max, |a, b, d| {
            if d > self.r_max {
                return;
            }
            let w = match self.correction {
                Correction::Isotropic => {
                    let c = iso.as_ref().expect("isotropic cache built when used");
                    c.weight(a, d, &mut capped) + c.weight(b, d, &mut capped)
                }
                Correction::Translation => {
                    let t = self
                        .translation
                        .as_ref()
                        .expect("translation table built when used");
                    2.0 * t.weight(
                        grid.xs[b] - grid.xs[a],
                        grid.ys[b] - grid.ys[a],
                        self.cap,
                        &mut capped,
                    )
                }
                _ => 2.0,
            };
            visit(grid.id[a] as usize, grid.id[b] as usize, self.bin(d), w);
        });
        Ok(capped)
    }

    /// Computes the asked-for curves for points (x, y) in the region.
    pub fn compute(&self, x: &[f64], y: &[f64], needs: Needs) -> Curves {
        let n = x.len();
        let nr = self.r.len();
        let mut out = Curves::default();
        let nf = n as f64;
        let area = self.region.area();
        if needs.k || needs.pcf {
            let h = self.bandwidth;
            let reach = if needs.pcf {
                self.r_max + h
            } else {
                self.r_max
            };
            let grid = GridIndex::with_cell(x, y, reach / 4.0);
            // Fast path for the common case: K alone, any correction.
            let fast = needs.k && !needs.pcf;
            // The isotropic K's weight pass searches annuli, which finer
            // cells fit more tightly; its weights are indexed by that grid.
            // Fast path for g alone with the isotropic correction.
            let fast_pcf = needs.pcf && !needs.k && self.pcf_correction == Correction::Isotropic;
            let fine = ((fast && self.correction == Correction::Isotropic) || fast_pcf)
                .then(|| GridIndex::with_cell(x, y, reach / FINE));
            let wgrid = fine.as_ref().unwrap_or(&grid);
            let need_b = matches!(self.correction, Correction::Isotropic | Correction::Border)
                || (needs.pcf && self.pcf_correction == Correction::Isotropic);
            let b: Vec<f64> = if need_b {
                (0..n)
                    .map(|p| self.region.boundary_distance(wgrid.xs[p], wgrid.ys[p]))
                    .collect()
            } else {
                Vec::new()
            };
            let kmax: Vec<i64> = if self.correction == Correction::Border {
                b.iter()
                    .map(|&bb| self.last_at_most(bb).map_or(-1, |k| k as i64))
                    .collect()
            } else {
                Vec::new()
            };
            let use_iso = (needs.k && self.correction == Correction::Isotropic)
                || (needs.pcf && self.pcf_correction == Correction::Isotropic);
            let iso = if use_iso {
                Some(IsoCache::new(
                    &self.region,
                    &wgrid.xs,
                    &wgrid.ys,
                    b.clone(),
                    reach,
                    self.cap,
                ))
            } else {
                None
            };
            let mut kacc = vec![0.0f64; nr + 1];
            let mut border_diff = vec![0.0f64; nr + 1];
            let mut pacc = vec![0.0f64; nr];
            let mut capped = 0u64;
            if fast {
                let (h, diff) = match self.correction {
                    Correction::None => self.k_kernel::<0>(&grid, &[], &mut capped),
                    Correction::Isotropic => (
                        self.k_isotropic(
                            &grid,
                            wgrid,
                            iso.as_ref().expect("isotropic cache built when used"),
                            &mut capped,
                        ),
                        vec![0.0; nr + 1],
                    ),
                    Correction::Translation => self.k_kernel::<2>(&grid, &[], &mut capped),
                    Correction::Border => self.k_kernel::<3>(&grid, &kmax, &mut capped),
                };
                kacc = h;
                border_diff = diff;
            }
            let kc = self.correction;
            let pc = self.pcf_correction;
            let kernel = Kernel::new(h, self.step);
            if fast_pcf {
                pacc = self.pcf_isotropic(
                    &grid,
                    wgrid,
                    iso.as_ref().expect("isotropic cache built when used"),
                    reach,
                    &mut capped,
                );
            }
            let generic = !fast && !fast_pcf;
            if generic {
                grid.for_each_slot_pair(reach, |a, bb, d| {
                    let (xa, ya, xb, yb) = (grid.xs[a], grid.ys[a], grid.xs[bb], grid.ys[bb]);
                    // Pair weights (sum of both orders) per correction.
                    let mut iso_pair = f64::NAN;
                    let mut iso_w = |capped: &mut u64| -> f64 {
                        if iso_pair.is_nan() {
                            let c = iso.as_ref().expect("isotropic cache built when used");
                            iso_pair = c.weight(a, d, capped) + c.weight(bb, d, capped);
                        }
                        iso_pair
                    };
                    let mut trans_pair = f64::NAN;
                    let mut trans_w = |capped: &mut u64| -> f64 {
                        if trans_pair.is_nan() {
                            let t = self
                                .translation
                                .as_ref()
                                .expect("translation table built when used");
                            trans_pair = 2.0 * t.weight(xb - xa, yb - ya, self.cap, capped);
                        }
                        trans_pair
                    };
                    if needs.k && !fast && d <= self.r_max {
                        let k = self.bin(d);
                        match kc {
                            Correction::None => kacc[k] += 2.0,
                            Correction::Isotropic => kacc[k] += iso_w(&mut capped),
                            Correction::Translation => kacc[k] += trans_w(&mut capped),
                            Correction::Border => {
                                for c in [a, bb] {
                                    let km = kmax[c];
                                    if km >= k as i64 {
                                        border_diff[k] += 1.0;
                                        border_diff[km as usize + 1] -= 1.0;
                                    }
                                }
                            }
                        }
                    }
                    if needs.pcf {
                        let w = match pc {
                            Correction::Translation => trans_w(&mut capped),
                            Correction::None => 2.0,
                            _ => iso_w(&mut capped),
                        };
                        kernel.add(&self.r, &mut pacc, d, w);
                    }
                });
            }
            out.capped = capped;
            if needs.k {
                let mut kk = vec![0.0; nr];
                if kc == Correction::Border {
                    let mut denom = vec![0.0f64; nr + 1];
                    for &km in &kmax {
                        if km >= 0 {
                            denom[0] += 1.0;
                            denom[km as usize + 1] -= 1.0;
                        }
                    }
                    let (mut s, mut c) = (0.0, 0.0);
                    for k in 0..nr {
                        s += border_diff[k];
                        c += denom[k];
                        kk[k] = if c > 0.0 {
                            area / (nf - 1.0) * s / c
                        } else {
                            f64::NAN
                        };
                    }
                } else {
                    let norm = area / (nf * (nf - 1.0));
                    let mut s = 0.0;
                    for k in 0..nr {
                        s += kacc[k];
                        kk[k] = norm * s;
                    }
                }
                out.k = kk;
            }
            if needs.pcf {
                let norm = area / (nf * (nf - 1.0));
                out.pcf = (0..nr)
                    .map(|k| {
                        if self.r[k] > 0.0 {
                            norm * pacc[k] / (2.0 * PI * self.r[k])
                        } else {
                            f64::NAN
                        }
                    })
                    .collect();
            }
        }
        if needs.g || needs.f {
            let grid = GridIndex::new(x, y);
            if needs.g {
                let mut d = vec![0.0; n];
                let mut b = vec![0.0; n];
                for p in 0..n {
                    d[p] = grid.nearest_distance(grid.xs[p], grid.ys[p], p);
                    b[p] = if self.nn_correction == NnCorrection::Border {
                        self.region.boundary_distance(grid.xs[p], grid.ys[p])
                    } else {
                        f64::INFINITY
                    };
                }
                out.g = self.reduced_sample(&d, &b);
            }
            if needs.f {
                let e: Vec<f64> = (0..self.f_x.len())
                    .map(|k| grid.nearest_distance(self.f_x[k], self.f_y[k], usize::MAX))
                    .collect();
                let b: Vec<f64> = if self.nn_correction == NnCorrection::Border {
                    self.f_b.clone()
                } else {
                    vec![f64::INFINITY; e.len()]
                };
                out.f = self.reduced_sample(&e, &b);
            }
        }
        out
    }

    /// Sum over unordered pairs within r_max of the two ordered-pair
    /// weights, binned by the smallest r_k ≥ d (last slot: beyond r_max).
    /// Written without a distance test in the inner loop: every candidate
    /// goes to a bin (looked up by d², no square root), those beyond r_max
    /// to the overflow slot. (The isotropic correction has its own pass,
    /// [`Self::k_isotropic`].)
    fn k_kernel<const MODE: u8>(
        &self,
        grid: &GridIndex,
        kmax: &[i64],
        capped: &mut u64,
    ) -> (Vec<f64>, Vec<f64>) {
        // MODE: 0 none, 2 translation, 3 border.
        let nr = self.r.len();
        // Four interleaved count histograms (fewer store-to-load stalls
        // when consecutive pairs fall in the same bin); weight excesses
        // over 1 go to `extra`; border counts to a difference array.
        let mut h4 = vec![[0u64; 4]; nr + 1];
        let mut extra = vec![0.0f64; nr + 1];
        let mut diff = vec![0.0f64; nr + 1];
        let trans = self.translation.as_ref();
        let cap = self.cap;
        let scale = BinScale::new(self.step, nr);
        let (mut ds, mut ks): (Vec<f64>, Vec<u32>) = (Vec::new(), Vec::new());
        grid.for_each_block(self.r_max, |a, b0, b1| {
            let (xa, ya) = (grid.xs[a], grid.ys[a]);
            let bx = &grid.xs[b0..b1];
            let by = &grid.ys[b0..b1];
            // Phase 1: distances and bins (vectorised).
            ds.resize(bx.len(), 0.0);
            ks.resize(bx.len(), 0);
            if distance_bins(bx, by, xa, ya, &scale, &mut ds, &mut ks) > 0 {
                self.settle_doubtful(&scale, &ds, &mut ks);
            }
            // Phase 2: counts and weights.
            let ka = if MODE == 3 { kmax[a] } else { 0 };
            for (k, &bin) in ks.iter().enumerate() {
                let bin = bin as usize;
                if MODE == 3 {
                    if bin < nr {
                        for km in [ka, kmax[b0 + k]] {
                            if km >= bin as i64 {
                                diff[bin] += 1.0;
                                diff[km as usize + 1] -= 1.0;
                            }
                        }
                    }
                    continue;
                }
                h4[bin][k & 3] += 1;
                if MODE == 2 && bin < nr {
                    if let Some(t) = trans {
                        extra[bin] += 2.0 * (t.weight(bx[k] - xa, by[k] - ya, cap, capped) - 1.0);
                    }
                }
            }
        });
        let hist = (0..=nr)
            .map(|k| 2.0 * (h4[k].iter().map(|v| *v as f64).sum::<f64>()) + extra[k])
            .collect();
        (hist, diff)
    }

    /// Σ over ordered pairs (i, j), i ≠ j, of Ripley's isotropic weight
    /// e_i(d_ij), binned by the smallest r_k ≥ d_ij (last slot: beyond
    /// r_max), in two passes:
    ///
    /// 1. every ordered pair at weight 1: unordered pairs counted twice
    ///    (the pass of the uncorrected K, [`Self::k_kernel`]);
    /// 2. the weights' excess e_i − 1, which is zero unless the circle
    ///    reaches the boundary (b_i < d_ij): for each point with
    ///    b_i < r_max, only the cells beyond its inner disc of radius b_i
    ///    are searched ([`GridIndex::for_each_point_runs_beyond`]); the
    ///    candidates with b_i < d ≤ r_max are packed in a branch-free
    ///    loop, binned, and weighted in vectorised sweeps
    ///    ([`IsoCache::weights_minus_one`]).
    fn k_isotropic(
        &self,
        grid: &GridIndex,
        wgrid: &GridIndex,
        iso: &IsoCache,
        capped: &mut u64,
    ) -> Vec<f64> {
        let nr = self.r.len();
        let (mut hist, _) = self.k_kernel::<0>(grid, &[], capped);
        let grid = wgrid;
        let r_last = self.r[nr - 1];
        let scale = BinScale::new(self.step, nr);
        // Four interleaved sums (fewer store-to-load stalls when
        // consecutive pairs fall in the same bin).
        let mut e4 = vec![[0.0f64; 4]; nr + 1];
        let mut annulus = Annulus::default();
        let mut nk: Vec<u32> = Vec::new();
        let mut ws: Vec<f64> = Vec::new();
        let inner = |a: usize| {
            let ba = iso.b[a];
            (ba < r_last).then_some(ba)
        };
        grid.for_each_point_runs_beyond(self.r_max, inner, |a, runs| {
            let ba = iso.b[a];
            // b_a < d ≤ r_max (a itself, at d = 0 ≤ b_a, never counts).
            let nd = annulus.distances(grid, a, runs, (ba, r_last));
            let m = nd.len();
            if m == 0 {
                return;
            }
            nk.resize(m, 0);
            let mut doubtful = 0u32;
            for (k, &d) in nk.iter_mut().zip(nd) {
                let (kk, flag) = scale.estimate(d);
                *k = kk;
                doubtful += flag as u32;
            }
            if doubtful > 0 {
                self.settle_doubtful(&scale, nd, &mut nk);
            }
            iso.weights_minus_one(a, nd, &mut ws, capped);
            for (i, (&k, &w)) in nk.iter().zip(&ws).enumerate() {
                e4[k as usize][i & 3] += w;
            }
        });
        for (h, e) in hist.iter_mut().zip(&e4) {
            *h += (e[0] + e[1]) + (e[2] + e[3]);
        }
        hist
    }

    /// Kernel sums for g with the isotropic correction, over ordered pairs
    /// (i, j), i ≠ j, with d_ij ≤ r_max + h: Σ e_i(d_ij)·k_h(r_k − d_ij) at
    /// each grid value (Epanechnikov kernel, as in the general pass). Two
    /// passes, as for K ([`Self::k_isotropic`]): every unordered pair at
    /// weight 2, then for points whose circle can reach the boundary the
    /// weight's excess e_i − 1 over the pairs beyond b_i. The kernel values
    /// are computed in vectorised sweeps ([`KernelSweep`]).
    fn pcf_isotropic(
        &self,
        grid: &GridIndex,
        wgrid: &GridIndex,
        iso: &IsoCache,
        reach: f64,
        capped: &mut u64,
    ) -> Vec<f64> {
        let nr = self.r.len();
        let mut sweep = KernelSweep::new(Kernel::new(self.bandwidth, self.step), &self.r);
        let mut acc = vec![0.0f64; nr + 1];
        let mut ds: Vec<f64> = Vec::new();
        grid.for_each_block(reach, |a, b0, b1| {
            ds.resize(b1 - b0, 0.0);
            distances_to(grid, a, b0..b1, &mut ds);
            sweep.add(&ds, None, 2.0, &mut acc);
        });
        let grid = wgrid;
        let mut annulus = Annulus::default();
        let mut ws: Vec<f64> = Vec::new();
        let inner = |a: usize| {
            let ba = iso.b[a];
            (ba < reach).then_some(ba)
        };
        grid.for_each_point_runs_beyond(reach, inner, |a, runs| {
            // b_a < d ≤ reach (a itself, at d = 0, never counts).
            let nd = annulus.distances(grid, a, runs, (iso.b[a], reach));
            if nd.is_empty() {
                return;
            }
            iso.weights_minus_one(a, nd, &mut ws, capped);
            sweep.add(nd, Some(&ws), 1.0, &mut acc);
        });
        acc.truncate(nr);
        acc
    }

    /// #{i: d_i ≤ r, b_i ≥ r} / #{i: b_i ≥ r} on the grid (NaN when no
    /// point qualifies).
    pub(crate) fn reduced_sample(&self, d: &[f64], b: &[f64]) -> Vec<f64> {
        let nr = self.r.len();
        let mut num = vec![0.0f64; nr + 1];
        let mut den = vec![0.0f64; nr + 1];
        for i in 0..d.len() {
            let km = if b[i].is_infinite() {
                Some(nr - 1)
            } else {
                self.last_at_most(b[i])
            };
            let Some(km) = km else { continue };
            den[0] += 1.0;
            den[km + 1] -= 1.0;
            let k = self.bin(d[i]);
            if k <= km {
                num[k] += 1.0;
                num[km + 1] -= 1.0;
            }
        }
        let (mut s, mut c) = (0.0, 0.0);
        (0..nr)
            .map(|k| {
                s += num[k];
                c += den[k];
                if c > 0.0 {
                    s / c
                } else {
                    f64::NAN
                }
            })
            .collect()
    }
}

/// L from K.
pub(crate) fn l_from_k(k: &[f64]) -> Vec<f64> {
    k.iter().map(|v| (v.max(0.0) / PI).sqrt()).collect()
}

/// J from G and F (NaN where F ≥ 0.9).
pub(crate) fn j_from(g: &[f64], f: &[f64]) -> Vec<f64> {
    g.iter()
        .zip(f)
        .map(|(g, f)| {
            if *f < 0.9 {
                (1.0 - g) / (1.0 - f)
            } else {
                f64::NAN
            }
        })
        .collect()
}

/// CSR value of G and F: 1 − exp(−λπr²).
pub(crate) fn gf_theo(r: &[f64], lambda: f64) -> Vec<f64> {
    r.iter()
        .map(|r| 1.0 - (-lambda * PI * r * r).exp())
        .collect()
}

pub(crate) fn checked_region(pattern: &Pattern, window: &Window) -> Result<Window, AnalysisError> {
    let region = super::csr::prepare(window)?;
    if pattern.len() < 2 {
        return Err(AnalysisError::TooFewPoints {
            needed: 2,
            found: pattern.len(),
        });
    }
    Ok(region)
}

/// Computes G, F, J, K, L and g for a pattern in its window.
///
/// # Parameters
/// * `pattern`: events in metres, inside `window`.
/// * `params`: distance grid, corrections, weight cap, bandwidth.
///
/// # Returns
/// Every curve on the same r grid with its CSR curve; NaN where a value is
/// undefined (g at r = 0, G or F where no point qualifies for the border
/// correction, J where F̂ ≥ 0.9).
///
/// # Errors
/// `TooFewPoints` for fewer than 2 events; `BadParameter` for a bad
/// parameter or an unusable window.
pub fn distance_functions(
    pattern: &Pattern,
    window: &Window,
    params: &FunctionParams,
) -> Result<DistanceFunctions, AnalysisError> {
    let region = checked_region(pattern, window)?;
    distance_functions_in(region, pattern.x(), pattern.y(), params)
}

pub(crate) fn distance_functions_in(
    region: Window,
    x: &[f64],
    y: &[f64],
    params: &FunctionParams,
) -> Result<DistanceFunctions, AnalysisError> {
    let needs = Needs {
        k: true,
        pcf: true,
        g: true,
        f: true,
    };
    let ctx = Context::new(region, x.len(), params, needs)?;
    let c = ctx.compute(x, y, needs);
    let n = x.len();
    let area = ctx.region.area();
    let lambda = n as f64 / area;
    let r = ctx.r.clone();
    let mut warnings = ctx.warnings.clone();
    if c.capped > 0 {
        warnings.push(format!(
            "{} pair weights reached the cap of {}",
            c.capped, ctx.cap
        ));
    }
    Ok(DistanceFunctions {
        n,
        area_m2: area,
        intensity_per_m2: lambda,
        r_max: ctx.r_max,
        r_max_rule: ctx.r_max_rule.clone(),
        correction: ctx.correction,
        nn_correction: ctx.nn_correction,
        bandwidth_m: ctx.bandwidth,
        weight_cap: ctx.cap,
        l: l_from_k(&c.k),
        k_theo: r.iter().map(|r| PI * r * r).collect(),
        l_theo: r.clone(),
        pcf_theo: vec![1.0; r.len()],
        j: j_from(&c.g, &c.f),
        j_theo: vec![1.0; r.len()],
        gf_theo: gf_theo(&r, lambda),
        k: c.k,
        pcf: c.pcf,
        g: c.g,
        f: c.f,
        f_locations: ctx.f_locations(),
        capped_weights: c.capped,
        warnings,
        r,
    })
}

/// The Epanechnikov kernel of half-width h used for g, summed onto the
/// grid values r_k.
struct Kernel {
    h: f64,
    c: f64,
    inv_h2: f64,
    inv_step: f64,
}

impl Kernel {
    fn new(h: f64, step: f64) -> Kernel {
        Kernel {
            h,
            c: 0.75 / h,
            inv_h2: 1.0 / (h * h),
            inv_step: 1.0 / step,
        }
    }

    /// Adds w·k_h(r_k − d) at every grid value r_k within reach of d.
    /// Candidate nodes run from ⌈(d − h)/step⌉ to ⌊(d + h)/step⌋, widened
    /// by 1e-9 steps for the rounding of the products (relative error a
    /// few units in the last place) and capped to the grid; the kernel
    /// test drops any node outside. Ceiling and floor by truncation (no
    /// libm call), after clamping to [0, n] so that 32-bit conversions
    /// (cheaper than to usize on x86-64) are exact.
    #[inline(always)]
    fn add(&self, r: &[f64], acc: &mut [f64], d: f64, w: f64) {
        let nr = r.len();
        let top = nr as f64;
        let a = ((d - self.h) * self.inv_step - 1e-9).clamp(0.0, top);
        let b = ((d + self.h) * self.inv_step + 1e-9).clamp(0.0, top);
        let whole = a as i32;
        let lo = (whole + ((whole as f64) < a) as i32) as usize;
        let hi = (b as i32 as usize).min(nr - 1);
        for k in lo..=hi {
            let u = r[k] - d;
            let q = 1.0 - u * u * self.inv_h2;
            if q > 0.0 {
                acc[k] += self.c * q * w;
            }
        }
    }
}

/// Distances from sorted point `a` to the sorted points `b` (a
/// branch-free loop the compiler vectorises), into `out` (same length).
#[inline]
fn distances_to(grid: &GridIndex, a: usize, b: std::ops::Range<usize>, out: &mut [f64]) {
    let (xa, ya) = (grid.xs[a], grid.ys[a]);
    for ((d, x), y) in out.iter_mut().zip(&grid.xs[b.clone()]).zip(&grid.ys[b]) {
        let dx = x - xa;
        let dy = y - ya;
        *d = (dx * dx + dy * dy).sqrt();
    }
}

/// Scratch space for the distances from one point to the candidates in
/// its runs, kept to those in an annulus.
#[derive(Default)]
struct Annulus {
    all: Vec<f64>,
    kept: Vec<f64>,
}

impl Annulus {
    /// The distances d from sorted point `a` to the points in `runs` with
    /// lo < d ≤ hi, in run order. Packed without branches: every
    /// distance is written, the position advances only for those kept.
    fn distances(
        &mut self,
        grid: &GridIndex,
        a: usize,
        runs: &[(usize, usize)],
        (lo, hi): (f64, f64),
    ) -> &[f64] {
        let total: usize = runs.iter().map(|(b0, b1)| b1 - b0).sum();
        self.all.resize(total, 0.0);
        self.kept.resize(total, 0.0);
        let mut off = 0;
        for &(b0, b1) in runs {
            distances_to(grid, a, b0..b1, &mut self.all[off..off + b1 - b0]);
            off += b1 - b0;
        }
        let mut m = 0;
        for &d in &self.all {
            self.kept[m] = d;
            m += (d > lo && d <= hi) as usize;
        }
        &self.kept[..m]
    }
}

/// [`Kernel::add`] for many distances at once: the node range and kernel
/// values in branch-free loops the compiler vectorises, then one scalar
/// add per node. Each pair reaches at most `span` consecutive nodes from
/// the first one ⌈(d − h)/step⌉ (widened by 1e-9 steps as in
/// [`Kernel::add`]); nodes outside the kernel's support get q ≤ 0 and add
/// nothing, so the nodes that count, and each node's term
/// c·(1 − u²/h²)·w, are exactly those of [`Kernel::add`].
struct KernelSweep<'a> {
    kernel: Kernel,
    r: &'a [f64],
    span: usize,
    first: Vec<u32>,
    vals: Vec<f64>,
}

impl<'a> KernelSweep<'a> {
    fn new(kernel: Kernel, r: &'a [f64]) -> KernelSweep<'a> {
        let span = ((2.0 * kernel.h * kernel.inv_step + 2e-9).floor() as usize + 2).min(r.len());
        KernelSweep {
            kernel,
            r,
            span,
            first: Vec::new(),
            vals: Vec::new(),
        }
    }

    /// acc[k] += scale·w_i·k_h(r_k − d_i) for every distance d_i (w_i from
    /// `ws`, 1 without it); `acc` has one slot beyond the grid, which
    /// collects nothing that counts.
    fn add(&mut self, ds: &[f64], ws: Option<&[f64]>, scale: f64, acc: &mut [f64]) {
        let nr = self.r.len();
        let last = (nr - 1) as u32;
        let top = nr as f64;
        let Kernel {
            h,
            c,
            inv_h2,
            inv_step,
        } = self.kernel;
        let m = ds.len();
        self.first.resize(m, 0);
        self.vals.resize(m * self.span, 0.0);
        // First node ⌈a⌉, a = clamp((d − h)/step − 1e-9, 0, n).
        for (f, &d) in self.first.iter_mut().zip(ds) {
            let a = (d - h) * inv_step - 1e-9;
            let a = if a > 0.0 { a } else { 0.0 };
            let a = if a < top { a } else { top };
            *f = ceil_small(a).0;
        }
        let r = &self.r[..nr];
        for j in 0..self.span {
            let vals = &mut self.vals[j * m..(j + 1) * m];
            for (i, (v, (&f, &d))) in vals.iter_mut().zip(self.first.iter().zip(ds)).enumerate() {
                let k = f + j as u32;
                let inside = k <= last;
                let rk = r[(if inside { k } else { last }) as usize];
                let u = rk - d;
                let q = 1.0 - u * u * inv_h2;
                let w = match ws {
                    Some(ws) => ws[i] * scale,
                    None => scale,
                };
                *v = if inside && q > 0.0 { c * q * w } else { 0.0 };
            }
        }
        for j in 0..self.span {
            let vals = &self.vals[j * m..(j + 1) * m];
            for (&f, &v) in self.first.iter().zip(vals) {
                let k = ((f as usize) + j).min(nr);
                acc[k] += v;
            }
        }
    }
}

/// (⌈q⌉, the integer nearest q) for 0 ≤ q < 2^31. Adding 2^52 rounds q to
/// the nearest integer, which then sits in the low bits of the sum: a bit
/// cast, not a float-to-int conversion, so loops calling this vectorise.
#[inline(always)]
fn ceil_small(q: f64) -> (u32, f64) {
    const ROUND: f64 = 4_503_599_627_370_496.0; // 2^52
    let big = q + ROUND;
    let near = big - ROUND;
    ((big.to_bits() as u32) + (near < q) as u32, near)
}

/// Bins from distances without a table: k = ⌈d/step⌉ (capped at the
/// overflow slot), which is the exact bin unless d/step lies within
/// `SLACK` of an integer (of 0 only for d > 0), where the rounding of d/step and of the
/// grid values r_k = k·r_max/n could disagree (their relative errors are
/// a few units in the last place, so |d/step − k| < 1e-11 covers them
/// with a wide margin). Those few are flagged and settled exactly.
struct BinScale {
    inv_step: f64,
    /// d/step values above this go to the overflow slot.
    q_max: f64,
}

const SLACK: f64 = 1e-9;

/// Cells per search radius in the isotropic K's weight pass.
const FINE: f64 = 8.0;

impl BinScale {
    fn new(step: f64, nr: usize) -> BinScale {
        BinScale {
            inv_step: 1.0 / step,
            q_max: nr as f64 - 0.5,
        }
    }

    /// (bin estimate, doubtful) for distance d ≥ 0.
    #[inline(always)]
    fn estimate(&self, d: f64) -> (u32, bool) {
        let q0 = d * self.inv_step;
        let q = if q0 < self.q_max { q0 } else { self.q_max };
        let (k, near) = ceil_small(q);
        let gap = q - near;
        // Near 0 only d > 0 is in doubt (r_0 = 0; a tiny d/step may even
        // underflow to 0).
        let doubtful = (gap < SLACK) & (gap > -SLACK) & ((near > 0.5) | (d > 0.0));
        (k, doubtful)
    }

    fn doubtful(&self, d: f64) -> bool {
        self.estimate(d).1
    }
}

/// Distances from (xa, ya) to the points (xs, ys) and their bin estimates
/// ([`BinScale`]); returns how many estimates are doubtful. Branch-free,
/// so the compiler vectorises it.
#[inline]
fn distance_bins(
    xs: &[f64],
    ys: &[f64],
    xa: f64,
    ya: f64,
    scale: &BinScale,
    d_out: &mut [f64],
    k_out: &mut [u32],
) -> u32 {
    let mut doubtful = 0u32;
    for (((x, y), d), k) in xs
        .iter()
        .zip(ys)
        .zip(d_out.iter_mut())
        .zip(k_out.iter_mut())
    {
        let dx = x - xa;
        let dy = y - ya;
        let dd = (dx * dx + dy * dy).sqrt();
        let (kk, flag) = scale.estimate(dd);
        *d = dd;
        *k = kk;
        doubtful += flag as u32;
    }
    doubtful
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::window::tests::unit_square;

    /// The curves from a fast path (`fast` asks for K alone or g alone)
    /// and from the general pass (taken when K and g are both asked for).
    fn fast_and_general(
        region: &Window,
        x: &[f64],
        y: &[f64],
        p: &FunctionParams,
        fast: Needs,
    ) -> (Curves, Curves) {
        let both = Needs {
            k: true,
            pcf: true,
            ..Default::default()
        };
        let a = Context::new(region.clone(), x.len(), p, fast)
            .unwrap()
            .compute(x, y, fast);
        let b = Context::new(region.clone(), x.len(), p, both)
            .unwrap()
            .compute(x, y, both);
        (a, b)
    }

    /// a[k] and b[k] agree to 1e-12 (relative) for every k ≥ `from`.
    fn assert_agree(a: &[f64], b: &[f64], from: usize, what: &str) {
        assert_eq!(a.len(), b.len(), "{what}");
        for k in from..a.len() {
            assert!(
                (a[k] - b[k]).abs() <= 1e-12 * b[k].abs().max(1e-12),
                "{what} {k}: {} {}",
                a[k],
                b[k]
            );
        }
    }

    const ALL_CORRECTIONS: [Correction; 4] = [
        Correction::None,
        Correction::Isotropic,
        Correction::Translation,
        Correction::Border,
    ];

    /// Fixture F12 (docs/methods.md#fixtures).
    pub fn f12() -> (Vec<f64>, Vec<f64>) {
        let p = [
            (0.10, 0.20),
            (0.15, 0.25),
            (0.30, 0.80),
            (0.35, 0.75),
            (0.40, 0.78),
            (0.55, 0.50),
            (0.60, 0.10),
            (0.70, 0.90),
            (0.80, 0.30),
            (0.85, 0.35),
            (0.90, 0.60),
            (0.20, 0.55),
        ];
        (
            p.iter().map(|a| a.0).collect(),
            p.iter().map(|a| a.1).collect(),
        )
    }

    fn k_at(correction: Correction) -> Vec<f64> {
        let (x, y) = f12();
        // r grid 0, 0.05, ..., 0.25 so the table's r values are grid points.
        let p = FunctionParams {
            r_max: Some(0.25),
            n_steps: 5,
            correction,
            weight_cap: 100.0,
            ..Default::default()
        };
        distance_functions_in(unit_square(), &x, &y, &p).unwrap().k
    }

    /// docs/methods.md#distance-functions F12 table: K none / translation / isotropic / border at
    /// r = 0.10, 0.15, 0.20, 0.25 (values [C] there, 6 decimals).
    #[test]
    fn test_f12_k_table() {
        let idx = [2, 3, 4, 5];
        let none = [0.060606, 0.075758, 0.075758, 0.090909];
        let trans = [0.066807, 0.083986, 0.083986, 0.106268];
        let iso = [0.060606, 0.075758, 0.075758, 0.092861];
        // Table column "K border (n/|W|)"; we use (n−1)/|W| so multiply by n/(n−1) = 12/11.
        let border = [0.066667, 0.093750, 0.083333, 0.125000];
        for (c, want, scale) in [
            (Correction::None, none, 1.0),
            (Correction::Translation, trans, 1.0),
            (Correction::Isotropic, iso, 1.0),
            (Correction::Border, border, 12.0 / 11.0),
        ] {
            let k = k_at(c);
            for (i, &ix) in idx.iter().enumerate() {
                assert!(
                    (k[ix] - want[i] * scale).abs() < 6e-7 * scale,
                    "{c:?} r={} got {} want {}",
                    ix as f64 * 0.05,
                    k[ix],
                    want[i] * scale
                );
            }
        }
        // L_iso(0.10) = 0.138894; L_iso(0.25) = 0.171926 (docs/methods.md#distance-functions).
        let l = l_from_k(&k_at(Correction::Isotropic));
        assert!((l[2] - 0.138894).abs() < 1e-6 && (l[5] - 0.171926).abs() < 1e-6);
    }

    /// docs/methods.md#distance-functions: G, F, J on F12 with border correction, F on the
    /// 201×201 lattice linspace(0, 1, 201)² (as in methods-checks/part6.py).
    #[test]
    fn test_f12_gfj() {
        let (x, y) = f12();
        let p = FunctionParams {
            r_max: Some(0.25),
            n_steps: 5,
            ..Default::default()
        };
        let needs = Needs {
            g: true,
            ..Default::default()
        };
        let ctx = Context::new(unit_square(), 12, &p, needs).unwrap();
        let g = ctx.compute(&x, &y, needs).g;
        assert_eq!(g[1], 0.0);
        assert!((g[2] - 0.7).abs() < 1e-12 && (g[3] - 0.75).abs() < 1e-12);
        // F on the lattice.
        let grid = GridIndex::with_cell(&x, &y, 0.1);
        let (mut e, mut b) = (Vec::new(), Vec::new());
        for iy in 0..201 {
            for ix in 0..201 {
                // numpy.linspace(0, 1, 201) computes k·0.005 (last node 1.0);
                // copy it so ties at d = r break the same way.
                let node = |k: usize| if k == 200 { 1.0 } else { k as f64 * 0.005 };
                let (u, v) = (node(ix), node(iy));
                e.push(grid.nearest_distance(u, v, usize::MAX));
                b.push(u.min(1.0 - u).min(v).min(1.0 - v));
            }
        }
        let f = ctx.reduced_sample(&e, &b);
        for (k, want) in [(1, 0.10735), (2, 0.36379), (3, 0.69267)] {
            assert!((f[k] - want).abs() < 5e-6, "F {k}: {}", f[k]);
        }
        let j = j_from(&g, &f);
        for (k, want) in [(1, 1.12025), (2, 0.47154), (3, 0.81346)] {
            assert!((j[k] - want).abs() < 5e-5, "J {k}: {}", j[k]);
        }
    }

    /// Pair-correlation sum against a direct O(n²) evaluation.
    #[test]
    fn test_pcf_matches_direct_sum() {
        let (x, y) = f12();
        let p = FunctionParams {
            r_max: Some(0.25),
            n_steps: 10,
            bandwidth: Some(0.04),
            correction: Correction::Translation,
            ..Default::default()
        };
        let out = distance_functions_in(unit_square(), &x, &y, &p).unwrap();
        for (k, &r) in out.r.iter().enumerate().skip(1) {
            let mut s = 0.0;
            for i in 0..12 {
                for j in 0..12 {
                    if i == j {
                        continue;
                    }
                    let (dx, dy) = (x[j] - x[i], y[j] - y[i]);
                    let d = (dx * dx + dy * dy).sqrt();
                    let u = (r - d) / 0.04;
                    if u.abs() < 1.0 {
                        let e = 1.0 / ((1.0 - dx.abs()) * (1.0 - dy.abs()));
                        s += 0.75 / 0.04 * (1.0 - u * u) * e;
                    }
                }
            }
            let want = s / (2.0 * PI * r * 12.0 * 11.0);
            assert!(
                (out.pcf[k] - want).abs() < 1e-12,
                "r={r}: {} vs {want}",
                out.pcf[k]
            );
        }
        assert!(out.pcf[0].is_nan());
    }

    /// The K-only kernel (used by envelopes) and the general pass (used when
    /// g is also asked for) agree for every correction, on a rectangle and
    /// on a window with a hole; the F12 table above checks the general pass.
    #[test]
    fn test_k_kernel_matches_general_pass() {
        use crate::window::tests::wh;
        for (region, scale) in [(unit_square(), 1.0), (wh(), 10.0)] {
            let mut rng = crate::rng::rng_from_seed(31);
            let (x, y) = region.sample_uniform(400, &mut rng);
            for c in ALL_CORRECTIONS {
                let p = FunctionParams {
                    r_max: Some(0.2 * scale),
                    n_steps: 20,
                    correction: c,
                    ..Default::default()
                };
                let (a, b) = fast_and_general(&region, &x, &y, &p, Needs::K_ONLY);
                assert_agree(&a.k, &b.k, 0, &format!("{c:?}"));
            }
        }
    }

    /// g alone with the isotropic correction (the fast path used by
    /// envelopes) against the general pass (taken when K is also asked
    /// for), on a rectangle and on a window with a hole.
    #[test]
    fn test_pcf_fast_path_matches_general_pass() {
        use crate::window::tests::wh;
        // Bandwidths below half a step (one node per pair at most), at a
        // ratio that is no simple fraction of it, and of two steps (up to
        // five nodes per pair).
        for (region, scale) in [(unit_square(), 1.0), (wh(), 10.0)] {
            let mut rng = crate::rng::rng_from_seed(37);
            let (x, y) = region.sample_uniform(400, &mut rng);
            for h in [0.003, 0.0137, 0.02] {
                let p = FunctionParams {
                    r_max: Some(0.2 * scale),
                    n_steps: 20,
                    bandwidth: Some(h * scale),
                    ..Default::default()
                };
                let pcf_only = Needs {
                    pcf: true,
                    ..Default::default()
                };
                let (a, b) = fast_and_general(&region, &x, &y, &p, pcf_only);
                assert!(a.pcf[0].is_nan() && b.pcf[0].is_nan());
                assert_agree(&a.pcf, &b.pcf, 1, &format!("g, h = {h}"));
                assert_eq!(a.capped, b.capped);
            }
        }
    }

    #[test]
    fn test_too_few_points() {
        let r = distance_functions_in(unit_square(), &[0.5], &[0.5], &FunctionParams::default());
        assert_eq!(
            r.unwrap_err(),
            AnalysisError::TooFewPoints {
                needed: 2,
                found: 1
            }
        );
    }

    #[test]
    fn test_coincident_points_and_default_rmax() {
        let out = distance_functions_in(
            unit_square(),
            &[0.5, 0.5, 0.2],
            &[0.5, 0.5, 0.2],
            &FunctionParams::default(),
        )
        .unwrap();
        assert!((out.r_max - 0.25).abs() < 1e-15);
        assert_eq!(out.r.len(), 51);
        // One coincident pair (2 ordered pairs) counts at every r ≥ 0.
        assert!((out.k[0] - 2.0 / 6.0).abs() < 1e-12);
        assert!(out.k.iter().all(|v| v.is_finite()));
    }

    /// Bins from the vectorised estimate (settled exactly where doubtful)
    /// agree with the smallest r_k ≥ d found by scanning the grid, at,
    /// just below and just above every grid value and at random distances.
    #[test]
    fn test_bin_estimate_matches_scan() {
        let mut rng = crate::rng::rng_from_seed(8);
        for (r_max, steps) in [
            (0.25, 5usize),
            (250.0, 50),
            (1.0, 1),
            (3.7, 1000),
            (0.3, 10_000),
        ] {
            let p = FunctionParams {
                r_max: Some(r_max),
                n_steps: steps,
                ..Default::default()
            };
            let ctx = Context::new(unit_square(), 10, &p, Needs::default()).unwrap();
            let r = ctx.r.clone();
            let scale = BinScale::new(ctx.step, r.len());
            let want = |d: f64| r.iter().position(|&v| d <= v).unwrap_or(r.len());
            let mut probes = vec![0.0, 4.0 * r_max, 1e300, f64::MIN_POSITIVE];
            for &v in &r {
                probes.push(v);
                probes.push(f64::from_bits(v.to_bits() + 1));
                if v > 0.0 {
                    probes.push(f64::from_bits(v.to_bits() - 1));
                }
            }
            for _ in 0..20_000 {
                probes.push(rand::RngExt::random::<f64>(&mut rng) * 1.2 * r_max);
            }
            let mut settled = 0;
            for &d in &probes {
                let (k, doubtful) = scale.estimate(d);
                let k = if doubtful {
                    settled += 1;
                    ctx.bin(d)
                } else {
                    k as usize
                };
                assert_eq!(k, want(d), "steps {steps}, d = {d:e}");
                assert_eq!(ctx.bin(d), want(d), "steps {steps}, d = {d:e}");
            }
            // Every grid value and its neighbours are doubtful (r_0 = 0 is
            // exact and needs no settling).
            assert!(settled >= 3 * steps, "{settled}");
        }
        // F12-style exact distance: √(0.09² + 0.12²) against r = 0.25·3/5.
        let d = (0.09f64 * 0.09 + 0.12 * 0.12).sqrt();
        let p = FunctionParams {
            r_max: Some(0.25),
            n_steps: 5,
            ..Default::default()
        };
        let ctx = Context::new(unit_square(), 10, &p, Needs::default()).unwrap();
        assert_eq!(ctx.bin(d), ctx.r.iter().position(|&v| d <= v).unwrap());
    }

    /// Points on a lattice whose spacing is a multiple of the distance
    /// step: many pair distances equal grid values exactly, so the
    /// doubtful-bin path runs for most points; every correction's fast
    /// kernel still matches the general pass.
    #[test]
    fn test_lattice_distances_on_grid_values() {
        let (mut x, mut y) = (Vec::new(), Vec::new());
        for i in 0..12 {
            for j in 0..12 {
                x.push(0.04 + 0.08 * i as f64);
                y.push(0.04 + 0.08 * j as f64);
            }
        }
        for c in ALL_CORRECTIONS {
            let p = FunctionParams {
                r_max: Some(0.24),
                n_steps: 6,
                correction: c,
                ..Default::default()
            };
            let (a, b) = fast_and_general(&unit_square(), &x, &y, &p, Needs::K_ONLY);
            assert_agree(&a.k, &b.k, 0, &format!("{c:?}"));
            // Spacing 0.08 = 2 steps: nothing closer than r_2, and the
            // first neighbours (4 per inner point) count at r_2 exactly.
            assert_eq!(a.k[1], 0.0, "{c:?}");
            assert!(a.k[2] > 0.0, "{c:?}");
        }
    }
}
