//! K, L and the pair correlation g with the translation correction from
//! counts on a fine grid: the cost per pattern does not grow with n².
//!
//! # Method (docs/methods.md#binned-k)
//! The translation estimator (Ohser & Stoyan 1981, Biometrical Journal
//! 23:523–533) is
//! K̂(r) = |W| / (n(n−1)) · Σ_{i≠j} 1{d_ij ≤ r} · |W| / γ(x_j − x_i),
//! γ(v) = |W ∩ (W + v)| the set covariance of the window. Every term
//! depends on the pair only through its offset x_j − x_i, so the sum can
//! be taken over offsets instead of pairs:
//!
//! 1. **Counts.** The events are counted on a square grid of cell side δ
//!    over the study area's bounding box (nearest-cell binning).
//! 2. **Lag counts.** The autocorrelation of the counts,
//!    A(v) = Σ_c N(c)·N(c + v), is the number of ordered pairs whose
//!    cells are v cells apart; it is computed by FFT (one forward and one
//!    inverse transform, [`crate::intensity::fft::autocorrelation_within`],
//!    padded only as far as the lags needed). The self pairs are removed:
//!    A(0) − n.
//! 3. **Distances within a lag.** Two events v cells apart are
//!    (v + t)·δ apart, t = u_j − u_i the difference of their positions
//!    within their cells. For events spread evenly within their cells, t
//!    has the density (1 − |t_x|)(1 − |t_y|) on (−1, 1)² (the difference
//!    of two uniforms per axis). So a lag adds to K̂(r) the share
//!    F_v(r) = P(|v + t|·δ ≤ r) of its pairs (computed once per job by
//!    quadrature: [`lag_cdf`]) and to ĝ(r) the expected kernel value
//!    E κ_h(r − |v + t|·δ). Because the shifted densities sum to one
//!    (Σ_v (1 − |t_x − v_x|)₊(1 − |t_y − v_y|)₊ = 1), Σ_v F_v(r) = πr²/δ²
//!    exactly, so under complete spatial randomness nothing is lost or
//!    added on average by the binning.
//! 4. **Weights.** Each lag's pairs take the translation weight of the lag's
//!    centre, |W| / γ(vδ) capped as in the exact estimator, from the same
//!    table ([`super::edge::Translation`]: exact polygon clipping at 65×65
//!    offsets, bilinear between them), so the binned and exact estimators
//!    share their edge correction and differ only by binning.
//!
//! K̂(r_k) = |W| / (n(n−1)) · Σ_v A(v)·w(v)·F_v(r_k),
//! ĝ(r_k) = |W| / (2πr_k·n(n−1)) · Σ_v A(v)·w(v)·E κ_h(r_k − |v + t|δ),
//! with the Epanechnikov kernel κ_h and half-width h of the exact g
//! ([`super::functions`]); L = √(K/π).
//!
//! # Grid
//! δ = (longer side of the bounding box + reach) / (FFT_SIDE − 5), reach =
//! r_max (r_max + h for g): the padded FFT is then at most
//! [`FFT_SIDE`] = 1024 per axis (nx + lags + 1 ≤ 1024), so the cost per
//! pattern is O(n + 1024²·log 1024) whatever n is. The lag table (weights,
//! shares F_v) is built once per job.
//!
//! # Error
//! The binned estimate replaces each pair's exact distance by the
//! distribution of distances of its lag. The error is zero on average under
//! CSR and for one pattern it falls with the distance in cells (few pairs
//! lie within a cell of r, compared with those inside r); the figures
//! measured against the exact translation estimator are in
//! [`STATED_RELATIVE_ERROR`] and docs/methods.md#binned-k.

use super::edge::{Correction, Translation};
use super::functions::{checked_region, l_from_k, Context, Curves, FunctionParams, Needs};
use crate::error::AnalysisError;
use crate::intensity::fft::{autocorrelation_pair_within, autocorrelation_within};
use crate::study::Pattern;
use crate::window::Window;
use serde::Serialize;
use std::f64::consts::PI;

/// Padded FFT size per axis the grid is chosen for.
pub const FFT_SIDE: usize = 1024;

/// The relative error of the binned K, L and g against the exact
/// translation estimator that the tests check, at distances of at least
/// [`STATED_FROM_CELLS`] cells (tests/distance.rs, binned section).
pub const STATED_RELATIVE_ERROR: f64 = 1e-3;
/// See [`STATED_RELATIVE_ERROR`].
pub const STATED_FROM_CELLS: f64 = 20.0;
/// The same for g (at distances of at least [`STATED_FROM_CELLS`] cells and
/// the kernel half-width): larger, because g's kernel is about a cell wide.
pub const STATED_G_RELATIVE_ERROR: f64 = 1e-2;

/// Subintervals of a lag's distance range for the kernel expectations of g.
const G_SUB: usize = 24;

/// Gauss–Legendre nodes and weights on [−1, 1], 8 points (Abramowitz &
/// Stegun 1964, Table 25.4).
const GL_X: [f64; 4] = [
    0.183_434_642_495_649_8,
    0.525_532_409_916_329,
    0.796_666_477_413_626_7,
    0.960_289_856_497_536_3,
];
const GL_W: [f64; 4] = [
    0.362_683_783_378_362,
    0.313_706_645_877_887_3,
    0.222_381_034_453_374_5,
    0.101_228_536_290_376_3,
];

/// CDF of the difference of two independent uniforms on (0, 1).
#[inline]
fn tri_cdf(x: f64) -> f64 {
    if x <= -1.0 {
        0.0
    } else if x <= 0.0 {
        0.5 * (1.0 + x) * (1.0 + x)
    } else if x < 1.0 {
        1.0 - 0.5 * (1.0 - x) * (1.0 - x)
    } else {
        1.0
    }
}

/// P(|v + t| ≤ ρ) for t with density (1 − |t_x|)(1 − |t_y|) on (−1, 1)²
/// (lengths in cells): the share of a lag's pairs within ρ. Outer
/// integral over t_x by 8-point Gauss–Legendre on the pieces between the
/// integrand's kinks (after a smoothstep substitution that smooths the
/// square-root ends), inner integral over t_y in closed form.
pub(crate) fn lag_cdf(vx: f64, vy: f64, rho: f64) -> f64 {
    let (vx, vy) = (vx.abs(), vy.abs());
    let ex = (vx - 1.0).max(0.0);
    let ey = (vy - 1.0).max(0.0);
    if rho * rho <= ex * ex + ey * ey {
        return 0.0;
    }
    let (fx, fy) = (vx + 1.0, vy + 1.0);
    if rho * rho >= fx * fx + fy * fy {
        return 1.0;
    }
    let r2 = rho * rho;
    let mut cuts: Vec<f64> = vec![-1.0, 0.0, 1.0, -vx - rho, -vx + rho];
    for c in [(vy - 1.0).abs(), vy, vy + 1.0] {
        if c < rho {
            let s = (r2 - c * c).sqrt();
            cuts.push(-vx - s);
            cuts.push(-vx + s);
        }
    }
    cuts.retain(|&t| (-1.0..=1.0).contains(&t));
    cuts.sort_by(f64::total_cmp);
    let integrand = |t: f64| {
        let u = vx + t;
        let q = r2 - u * u;
        if q <= 0.0 {
            return 0.0;
        }
        let s = q.sqrt();
        (1.0 - t.abs()) * (tri_cdf(-vy + s) - tri_cdf(-vy - s))
    };
    let mut total = 0.0;
    for w in cuts.windows(2) {
        let (a, b) = (w[0], w[1]);
        if b - a <= 0.0 {
            continue;
        }
        let mut s = 0.0;
        for (&x, &wt) in GL_X.iter().zip(&GL_W) {
            for tau in [0.5 * (1.0 - x), 0.5 * (1.0 + x)] {
                let t = a + (b - a) * tau * tau * (3.0 - 2.0 * tau);
                let jac = (b - a) * 6.0 * tau * (1.0 - tau);
                s += 0.5 * wt * integrand(t) * jac;
            }
        }
        total += s;
    }
    total.clamp(0.0, 1.0)
}

/// ∫ κ_h(u) du from −h to u (Epanechnikov κ_h(u) = 3/(4h)(1 − u²/h²)).
#[inline]
fn kernel_cdf(u: f64, h: f64) -> f64 {
    let u = u.clamp(-h, h) / h;
    0.5 + 0.75 * (u - u * u * u / 3.0)
}

/// The lag table and grid of a job: everything but the events.
pub(crate) struct Binned {
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
    lx: usize,
    ly: usize,
    lag_dx: Vec<i32>,
    lag_dy: Vec<i32>,
    /// Translation weight of the lag times 2 (the lags v and −v are
    /// counted once) or 1 (v = 0).
    lag_w: Vec<f64>,
    /// The lag's weight reached the cap (and it reaches below r_max).
    lag_capped: Vec<bool>,
    /// K increments: lag i adds A·w·k_inc[e] to bin k_bin[e] for e in
    /// k_off[i]..k_off[i + 1] (F_v(r_k) − F_v(r_{k−1})).
    k_off: Vec<u32>,
    k_bin: Vec<u32>,
    k_inc: Vec<f64>,
    /// g values: E κ_h(r_k − D) per lag, same layout.
    g_off: Vec<u32>,
    g_bin: Vec<u32>,
    g_val: Vec<f64>,
    r: Vec<f64>,
    area: f64,
}

fn bad(detail: &str) -> AnalysisError {
    AnalysisError::BadParameter {
        name: "estimator".into(),
        detail: detail.into(),
    }
}

impl Binned {
    /// Grid and lag table for the context's window and distances. The
    /// context must use the translation correction (for K, and for g when
    /// asked).
    pub(crate) fn new(ctx: &Context, needs: Needs, side: usize) -> Result<Binned, AnalysisError> {
        if !(side.is_power_of_two() && (64..=4096).contains(&side)) {
            return Err(bad("the grid side must be a power of two from 64 to 4096"));
        }
        if !(needs.k || needs.pcf) || needs.g || needs.f {
            return Err(bad("the grid estimator computes K, L and g only"));
        }
        if (needs.k && ctx.correction != Correction::Translation)
            || (needs.pcf && ctx.pcf_correction != Correction::Translation)
        {
            return Err(bad(
                "the grid estimator uses the translation correction only",
            ));
        }
        let trans: &Translation = ctx
            .translation()
            .ok_or_else(|| bad("the grid estimator needs the translation correction"))?;
        let h = ctx.bandwidth;
        let reach = if needs.pcf { ctx.r_max + h } else { ctx.r_max };
        let [bx0, by0, bx1, by1] = ctx.region.bbox();
        let (w, hgt) = (bx1 - bx0, by1 - by0);
        let long = w.max(hgt);
        let cell = (long + reach.min(long)) / (side - 5) as f64;
        let nx = ((w / cell).ceil() as usize).clamp(1, side);
        let ny = ((hgt / cell).ceil() as usize).clamp(1, side);
        let lmax = (reach / cell).ceil() as usize + 2;
        let (lx, ly) = (lmax.min(nx - 1), lmax.min(ny - 1));
        let r = ctx.r.clone();
        let nr = r.len();
        let step = ctx.step;
        let mut t = Binned {
            x0: bx0,
            y0: by0,
            cell,
            nx,
            ny,
            lx,
            ly,
            lag_dx: Vec::new(),
            lag_dy: Vec::new(),
            lag_w: Vec::new(),
            lag_capped: Vec::new(),
            k_off: vec![0],
            k_bin: Vec::new(),
            k_inc: Vec::new(),
            g_off: vec![0],
            g_bin: Vec::new(),
            g_val: Vec::new(),
            r,
            area: ctx.region.area(),
        };
        let mut fs = [0.0; G_SUB + 1];
        for dy in 0..=ly as i32 {
            for dx in -(lx as i32)..=lx as i32 {
                if dy == 0 && dx < 0 {
                    continue;
                }
                let (ax, ay) = (f64::from(dx.abs()), f64::from(dy));
                let ex = (ax - 1.0).max(0.0);
                let ey = (ay - 1.0).max(0.0);
                let dmin = (ex * ex + ey * ey).sqrt() * cell;
                let dmax = ((ax + 1.0) * (ax + 1.0) + (ay + 1.0) * (ay + 1.0)).sqrt() * cell;
                if dmin >= reach {
                    continue;
                }
                let k_start = t.k_bin.len();
                let g_start = t.g_bin.len();
                if needs.k && dmin < ctx.r_max {
                    let first = ((dmin / step).floor() as usize).min(nr);
                    let mut prev = 0.0;
                    for k in first..nr {
                        let rk = t.r[k];
                        if rk <= dmin {
                            continue;
                        }
                        let p = if rk >= dmax {
                            1.0
                        } else {
                            lag_cdf(ax, ay, rk / cell)
                        };
                        if p > prev {
                            t.k_bin.push(k as u32);
                            t.k_inc.push(p - prev);
                            prev = p;
                        }
                        if p >= 1.0 {
                            break;
                        }
                    }
                }
                if needs.pcf {
                    for (i, f) in fs.iter_mut().enumerate() {
                        let d = dmin + (dmax - dmin) * i as f64 / G_SUB as f64;
                        *f = match i {
                            0 => 0.0,
                            _ if i == G_SUB => 1.0,
                            _ => lag_cdf(ax, ay, d / cell),
                        };
                    }
                    let first = (((dmin - h) / step).floor().max(0.0) as usize).min(nr);
                    for k in first.max(1)..nr {
                        let rk = t.r[k];
                        if rk - h >= dmax {
                            break;
                        }
                        if rk + h <= dmin {
                            continue;
                        }
                        let mut val = 0.0;
                        for i in 0..G_SUB {
                            let df = fs[i + 1] - fs[i];
                            if df <= 0.0 {
                                continue;
                            }
                            let da = dmin + (dmax - dmin) * i as f64 / G_SUB as f64;
                            let db = dmin + (dmax - dmin) * (i + 1) as f64 / G_SUB as f64;
                            // Mean of κ_h(r_k − d) over [da, db].
                            let mean =
                                (kernel_cdf(rk - da, h) - kernel_cdf(rk - db, h)) / (db - da);
                            val += df * mean;
                        }
                        if val > 0.0 {
                            t.g_bin.push(k as u32);
                            t.g_val.push(val);
                        }
                    }
                }
                if t.k_bin.len() == k_start && t.g_bin.len() == g_start {
                    continue;
                }
                let mut capped = 0u64;
                let wt = trans.weight(
                    f64::from(dx) * cell,
                    f64::from(dy) * cell,
                    ctx.cap,
                    &mut capped,
                );
                let factor = if dx == 0 && dy == 0 { 1.0 } else { 2.0 };
                t.lag_dx.push(dx);
                t.lag_dy.push(dy);
                t.lag_w.push(factor * wt);
                t.lag_capped.push(capped > 0 && dmin < ctx.r_max);
                t.k_off.push(t.k_bin.len() as u32);
                t.g_off.push(t.g_bin.len() as u32);
            }
        }
        Ok(t)
    }

    /// Cell side δ in m.
    pub(crate) fn cell_m(&self) -> f64 {
        self.cell
    }

    /// The events counted on the grid.
    fn counts(&self, x: &[f64], y: &[f64]) -> Vec<f64> {
        let (nx, ny) = (self.nx, self.ny);
        let mut counts = vec![0.0; nx * ny];
        let inv = 1.0 / self.cell;
        for (&px, &py) in x.iter().zip(y) {
            // `as usize` saturates (negative and NaN to 0).
            let ix = (((px - self.x0) * inv).floor() as usize).min(nx - 1);
            let iy = (((py - self.y0) * inv).floor() as usize).min(ny - 1);
            counts[iy * nx + ix] += 1.0;
        }
        counts
    }

    /// The lag counts A(v) of the table's lags from an autocorrelation of
    /// `n` events' counts (self pairs removed). Counts are integers, so
    /// rounding removes the FFT's error: the result does not depend on
    /// whether the FFT was shared with another pattern.
    fn lag_counts(&self, ac: &[f64], px: usize, py: usize, n: usize) -> Vec<f64> {
        let n = n as f64;
        self.lag_dx
            .iter()
            .zip(&self.lag_dy)
            .map(|(&dx, &dy)| {
                let ix = (dx as isize).rem_euclid(px as isize) as usize;
                let iy = (dy as isize).rem_euclid(py as isize) as usize;
                let a = ac[iy * px + ix].round();
                if dx == 0 && dy == 0 {
                    (a - n).max(0.0)
                } else {
                    a
                }
            })
            .collect()
    }

    /// K (and g) of the events (x, y) on the context's grid of distances.
    pub(crate) fn compute(&self, x: &[f64], y: &[f64], needs: Needs) -> Curves {
        let c = self.counts(x, y);
        let (ac, px, py) = autocorrelation_within(&c, self.nx, self.ny, self.lx, self.ly);
        self.curves(&self.lag_counts(&ac, px, py, x.len()), x.len(), needs)
    }

    /// [`Binned::compute`] of two patterns with one FFT pair (the same
    /// curves, at about half the cost).
    pub(crate) fn compute_pair(
        &self,
        (x1, y1): (&[f64], &[f64]),
        (x2, y2): (&[f64], &[f64]),
        needs: Needs,
    ) -> (Curves, Curves) {
        let (c1, c2) = (self.counts(x1, y1), self.counts(x2, y2));
        let (a1, a2, px, py) =
            autocorrelation_pair_within(&c1, &c2, self.nx, self.ny, self.lx, self.ly);
        (
            self.curves(&self.lag_counts(&a1, px, py, x1.len()), x1.len(), needs),
            self.curves(&self.lag_counts(&a2, px, py, x2.len()), x2.len(), needs),
        )
    }

    fn curves(&self, a: &[f64], n: usize, needs: Needs) -> Curves {
        let nr = self.r.len();
        let n = n as f64;
        let mut kh = vec![0.0f64; nr];
        let mut gh = vec![0.0f64; nr];
        let mut capped = 0u64;
        for (i, &ai) in a.iter().enumerate() {
            if ai == 0.0 {
                continue;
            }
            let d = ai * self.lag_w[i];
            if self.lag_capped[i] {
                // Unordered pairs: the lag stands for v and −v (lag 0 is
                // never capped).
                capped += ai as u64;
            }
            for e in self.k_off[i] as usize..self.k_off[i + 1] as usize {
                kh[self.k_bin[e] as usize] += d * self.k_inc[e];
            }
            for e in self.g_off[i] as usize..self.g_off[i + 1] as usize {
                gh[self.g_bin[e] as usize] += d * self.g_val[e];
            }
        }
        let norm = self.area / (n * (n - 1.0));
        let mut out = Curves {
            capped,
            ..Default::default()
        };
        if needs.k {
            let mut s = 0.0;
            out.k = kh
                .iter()
                .map(|v| {
                    s += v;
                    norm * s
                })
                .collect();
        }
        if needs.pcf {
            out.pcf = gh
                .iter()
                .zip(&self.r)
                .map(|(v, &r)| {
                    if r > 0.0 {
                        norm * v / (2.0 * PI * r)
                    } else {
                        f64::NAN
                    }
                })
                .collect();
        }
        out
    }
}

/// K, L and g of one pattern from the grid estimator (for comparison with
/// [`super::distance_functions`] with the translation correction).
#[derive(Debug, Clone, Serialize)]
pub struct BinnedFunctions {
    pub r: Vec<f64>,
    pub k: Vec<f64>,
    pub l: Vec<f64>,
    pub pcf: Vec<f64>,
    /// Cell side δ in m.
    pub cell_m: f64,
    pub bandwidth_m: f64,
    /// Pairs (unordered) in lags whose translation weight reached the cap.
    pub capped_weights: u64,
}

/// K, L and g with the translation correction from binned counts (see the
/// module docs), on a grid whose padded FFT is `fft_side` per axis
/// ([`FFT_SIDE`] in the page; a power of two from 64 to 4096).
///
/// # Errors
/// `TooFewPoints` for fewer than 2 events; `BadParameter` for a bad
/// parameter, an unusable window or a correction other than translation.
pub fn binned_functions(
    pattern: &Pattern,
    window: &Window,
    params: &FunctionParams,
    fft_side: usize,
) -> Result<BinnedFunctions, AnalysisError> {
    if params.correction != Correction::Translation {
        return Err(bad(
            "the grid estimator uses the translation correction only",
        ));
    }
    let region = checked_region(pattern, window)?;
    let needs = Needs {
        k: true,
        pcf: true,
        ..Default::default()
    };
    let ctx = Context::new(region, pattern.len(), params, needs)?;
    let b = Binned::new(&ctx, needs, fft_side)?;
    let c = b.compute(pattern.x(), pattern.y(), needs);
    Ok(BinnedFunctions {
        r: ctx.r.clone(),
        l: l_from_k(&c.k),
        k: c.k,
        pcf: c.pcf,
        cell_m: b.cell_m(),
        bandwidth_m: ctx.bandwidth,
        capped_weights: c.capped,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Σ_v F_v(ρ) = πρ² exactly (the shifted lag densities sum to one),
    /// so the quadrature is checked against a closed form at every ρ.
    #[test]
    fn lag_shares_sum_to_disc_area() {
        for rho in [0.3f64, 0.7, 1.0, 1.5, 2.2, 5.37, 12.0] {
            let m = rho.ceil() as i32 + 2;
            let mut s = 0.0;
            for vy in -m..=m {
                for vx in -m..=m {
                    s += lag_cdf(f64::from(vx), f64::from(vy), rho);
                }
            }
            let want = PI * rho * rho;
            assert!((s - want).abs() < 1e-7 * want, "ρ = {rho}: {s} vs {want}");
        }
    }

    /// Two patterns through one FFT pair give exactly the curves of one at
    /// a time (lag counts are rounded to integers).
    #[test]
    fn paired_patterns_equal_single_ones() {
        let w = crate::window::tests::wh();
        let needs = Needs {
            k: true,
            pcf: true,
            ..Default::default()
        };
        let p = FunctionParams {
            correction: Correction::Translation,
            ..Default::default()
        };
        let ctx = Context::new(w.clone(), 300, &p, needs).unwrap();
        let b = Binned::new(&ctx, needs, 128).unwrap();
        let mut rng = crate::rng::rng_from_seed(4);
        let (x1, y1) = w.sample_uniform(300, &mut rng);
        let (x2, y2) = w.sample_uniform(300, &mut rng);
        let (p1, p2) = b.compute_pair((&x1, &y1), (&x2, &y2), needs);
        let (s1, s2) = (b.compute(&x1, &y1, needs), b.compute(&x2, &y2, needs));
        assert_eq!(
            format!("{:?}", (&p1.k, &p1.pcf)),
            format!("{:?}", (&s1.k, &s1.pcf))
        );
        assert_eq!(
            format!("{:?}", (&p2.k, &p2.pcf)),
            format!("{:?}", (&s2.k, &s2.pcf))
        );
        assert_ne!(p1.k, p2.k);
    }

    /// One lag against a midpoint sum over a fine grid of t (the defining
    /// double integral).
    #[test]
    fn lag_share_matches_direct_integral() {
        let m = 800;
        for (vx, vy, rho) in [(3.0, 1.0, 3.4), (0.0, 0.0, 0.9), (2.0, 2.0, 2.5)] {
            let mut s = 0.0;
            for i in 0..m {
                for j in 0..m {
                    let tx = -1.0 + (i as f64 + 0.5) * 2.0 / m as f64;
                    let ty = -1.0 + (j as f64 + 0.5) * 2.0 / m as f64;
                    let (u, v) = (vx + tx, vy + ty);
                    if u * u + v * v <= rho * rho {
                        s += (1.0 - tx.abs()) * (1.0 - ty.abs());
                    }
                }
            }
            s *= 4.0 / (m * m) as f64;
            let got = lag_cdf(vx, vy, rho);
            assert!((got - s).abs() < 2e-4, "{vx},{vy},{rho}: {got} vs {s}");
        }
    }
}
