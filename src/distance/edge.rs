//! Edge corrections: weights that make up for neighbours we cannot see
//! beyond the study-area boundary.
//!
//! * **Isotropic** (Ripley 1976, J Appl Prob 13:255–266; Ripley 1977, JRSS-B
//!   39:172–212 [from memory]): e_ij = 2π·d_ij / ℓ(∂b(x_i, d_ij) ∩ W), the
//!   reciprocal of the fraction of the circle centred at x_i through x_j
//!   that lies inside W. The arc length is computed analytically from
//!   circle–edge intersections ([`super::region`]), holes included. The
//!   weight is asymmetric (e_ij ≠ e_ji). When the circle does not reach
//!   the boundary (b_i ≥ d) the weight is 1 and no geometry is done; the
//!   edges within reach of each point near the boundary are cached once
//!   per pattern.
//! * **Translation** (Ohser & Stoyan 1981; Ohser 1983 [from memory]):
//!   e_ij = |W| / |W ∩ (W + (x_j − x_i))|. Exact for an axis-aligned
//!   rectangle a×b: ab/((a − |Δx|)(b − |Δy|)). For other windows the set
//!   covariance γ(v) = |W ∩ (W + v)| is computed exactly (polygon clipping
//!   with `geo`'s boolean operations) at the nodes of a 65×65 grid of
//!   offsets covering [−R, R]² (R the largest distance used) and
//!   interpolated bilinearly. γ is continuous and piecewise quadratic in v,
//!   so the interpolation error is O(step²); the test against shapely on a
//!   polygon with a hole (tests/reference/edge_reference.json) bounds the
//!   relative weight error at 1e-3.
//! * **Border** (reduced sample): only points at least r from the boundary
//!   serve as centres at distance r.
//! * **None**: no correction (biased low; for comparison only).
//!
//! **Weight cap.** Isotropic and translation weights are capped at
//! [`FunctionParams::weight_cap`](super::FunctionParams) (default 4, the
//! largest isotropic weight in a rectangle for r up to ¼ of the shorter
//! side, reached at a corner: METHODS §4.1 suggests capping at about 4
//! [common practice]). The number of pair weights that hit the cap is
//! reported.

use super::region::Region;
use geo::{Area, BooleanOps, Coord, LineString, MultiPolygon, Polygon, Translate};
use serde::{Deserialize, Serialize};

/// Edge correction for K, L and g.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Correction {
    /// Ripley's isotropic correction (default).
    #[default]
    Isotropic,
    /// Ohser–Stoyan translation correction.
    Translation,
    /// Border (reduced-sample) correction.
    Border,
    /// No correction.
    None,
}

/// Edge correction for the nearest-neighbour functions G, F and J.
/// (The Kaplan–Meier estimator of Baddeley & Gill 1997 is not offered.)
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum NnCorrection {
    /// Border (reduced sample): default.
    #[default]
    Border,
    /// No correction.
    None,
}

/// Per-pattern cache for isotropic weights: the boundary distance of each
/// point and, for points closer than `reach` to the boundary, the edges
/// within `reach`.
pub(crate) struct IsoCache {
    pub b: Vec<f64>,
    start: Vec<u32>,
    near: Vec<u32>,
    /// Per cached edge: distance from the point to the segment and to its
    /// farther end. A circle of radius d can cross the edge only when
    /// near_lo < d < near_hi.
    near_lo: Vec<f64>,
    near_hi: Vec<f64>,
    /// For a rectangular window: distances to the left, right, bottom and
    /// top sides of each point (closed form, no edge loop).
    sides: Vec<[f64; 4]>,
    /// For a rectangular window: the second-smallest side distance of each
    /// point. Up to that radius only the nearest side cuts the circle, so
    /// the inside angle is 2π − 2·acos(b/d) (no corner terms).
    second: Vec<f64>,
    cap: f64,
}

/// Inside angle (radians) of the circle of radius `d` about a point whose
/// distances to the left, right, bottom and top sides of a rectangle are
/// `s`: 2π minus the arcs 2·acos(s_k/d) cut off by each side reached, plus,
/// for each corner inside the circle, the overlap α_a + α_b − π/2 of the
/// two cut arcs meeting there (inclusion–exclusion; arcs of opposite sides
/// never overlap).
#[inline]
pub(crate) fn rectangle_inside_angle(s: &[f64; 4], d: f64) -> f64 {
    use std::f64::consts::{FRAC_PI_2, TAU};
    let cut = |v: f64| if v < d { (v / d).acos() } else { 0.0 };
    let (l, r, b, t) = (cut(s[0]), cut(s[1]), cut(s[2]), cut(s[3]));
    let mut ang = TAU - 2.0 * (l + r + b + t);
    for (p, q) in [(l, b), (l, t), (r, b), (r, t)] {
        let o = p + q - FRAC_PI_2;
        if o > 0.0 {
            ang += o;
        }
    }
    ang
}

impl IsoCache {
    /// Builds the cache for points (in any order; indices are kept).
    pub fn new(
        region: &Region,
        xs: &[f64],
        ys: &[f64],
        mut b: Vec<f64>,
        reach: f64,
        cap: f64,
    ) -> IsoCache {
        let mut start = Vec::with_capacity(xs.len() + 1);
        let mut near = Vec::new();
        let (mut near_lo, mut near_hi) = (Vec::new(), Vec::new());
        let mut sides = Vec::new();
        let mut second = Vec::new();
        start.push(0);
        if let Some([x0, y0, x1, y1]) = region.rectangle {
            sides = (0..xs.len())
                .map(|i| [xs[i] - x0, x1 - xs[i], ys[i] - y0, y1 - ys[i]])
                .collect();
            // Boundary distance = nearest side, computed the same way as
            // the closed form below.
            for (bi, s) in b.iter_mut().zip(&sides) {
                *bi = s[0].min(s[1]).min(s[2]).min(s[3]);
            }
            second = sides
                .iter()
                .map(|s| {
                    let mut v = *s;
                    v.sort_unstable_by(f64::total_cmp);
                    v[1]
                })
                .collect();
        } else {
            for i in 0..xs.len() {
                if b[i] < reach {
                    for e in region.edges_near(xs[i], ys[i], reach) {
                        let edge = &region.edges[e as usize];
                        let (x, y) = (xs[i], ys[i]);
                        let far = ((edge.ax - x).powi(2) + (edge.ay - y).powi(2))
                            .max((edge.bx - x).powi(2) + (edge.by - y).powi(2))
                            .sqrt();
                        near.push(e);
                        near_lo.push(edge.distance_sq(x, y).sqrt());
                        near_hi.push(far);
                    }
                }
                start.push(near.len() as u32);
            }
        }
        IsoCache {
            b,
            start,
            near,
            near_lo,
            near_hi,
            sides,
            second,
            cap,
        }
    }

    /// Isotropic weight of point `i` at (x, y) for a neighbour at distance
    /// `d`; `capped` is set when the cap applies.
    #[inline]
    pub fn weight(
        &self,
        region: &Region,
        i: usize,
        x: f64,
        y: f64,
        d: f64,
        capped: &mut u64,
    ) -> f64 {
        if d <= self.b[i] {
            return 1.0;
        }
        let w = if self.sides.is_empty() {
            let (s0, s1) = (self.start[i] as usize, self.start[i + 1] as usize);
            // Keep only edges the circle can cross (with a relative margin
            // of 1e-9 so rounding never drops a crossing).
            let mut buf = [0u32; 32];
            let mut m = 0;
            let mut overflow = false;
            for k in s0..s1 {
                if self.near_lo[k] < d * (1.0 + 1e-9) && self.near_hi[k] > d * (1.0 - 1e-9) {
                    if m < buf.len() {
                        buf[m] = self.near[k];
                        m += 1;
                    } else {
                        overflow = true;
                        break;
                    }
                }
            }
            let arc = if overflow {
                region.arc_inside(x, y, d, &self.near[s0..s1])
            } else {
                region.arc_inside(x, y, d, &buf[..m])
            };
            std::f64::consts::TAU * d / arc
        } else {
            if d <= self.second[i] {
                // One side only: 2π / (2π − 2·acos(b/d)).
                std::f64::consts::PI / (std::f64::consts::PI - (self.b[i] / d).acos())
            } else {
                std::f64::consts::TAU / rectangle_inside_angle(&self.sides[i], d)
            }
        };
        if !(w < self.cap) {
            *capped += 1;
            self.cap
        } else {
            w
        }
    }
}

/// Isotropic weight of one pair (uncached; for checks and small jobs).
pub(crate) fn isotropic_weight(region: &Region, x: f64, y: f64, d: f64) -> f64 {
    if d <= 0.0 {
        return 1.0;
    }
    let near = region.edges_near(x, y, d);
    std::f64::consts::TAU * d / region.arc_inside(x, y, d, &near)
}

/// Length (m) of the circle of radius `r` about (x, y) that lies inside the
/// window (analytic, holes included). For checks and displays; the distance
/// functions use a per-pattern cache instead.
pub fn inside_arc_length(
    window: &crate::Window,
    x: f64,
    y: f64,
    r: f64,
) -> Result<f64, crate::AnalysisError> {
    let region = super::csr::prepare(window)?;
    let near = region.edges_near(x, y, r);
    Ok(region.arc_inside(x, y, r, &near))
}

/// Ripley's isotropic weight 2πd / ℓ(∂b(x, d) ∩ W), uncapped (infinite when
/// no part of the circle is inside).
pub fn isotropic_weight_at(
    window: &crate::Window,
    x: f64,
    y: f64,
    d: f64,
) -> Result<f64, crate::AnalysisError> {
    let region = super::csr::prepare(window)?;
    Ok(isotropic_weight(&region, x, y, d))
}

/// Translation weights |W| / |W ∩ (W + v)| for one window (see the module
/// docs for the interpolation table used for non-rectangular windows).
pub struct TranslationWeights {
    table: Translation,
    exact: MultiPolygon<f64>,
    area: f64,
}

impl TranslationWeights {
    /// Prepares weights for shifts up to `reach` m long.
    pub fn new(
        window: &crate::Window,
        reach: f64,
    ) -> Result<TranslationWeights, crate::AnalysisError> {
        let region = super::csr::prepare(window)?;
        Ok(TranslationWeights {
            table: Translation::new(&region, reach),
            exact: to_geo(&region),
            area: region.area,
        })
    }
    /// The weight used by the distance functions (uncapped).
    pub fn weight(&self, dx: f64, dy: f64) -> f64 {
        let mut c = 0;
        self.table.weight(dx, dy, f64::INFINITY, &mut c)
    }
    /// |W ∩ (W + (dx, dy))| by exact polygon clipping.
    pub fn set_covariance_exact(&self, dx: f64, dy: f64) -> f64 {
        set_covariance_exact(&self.exact, dx, dy)
    }
    /// |W| in m².
    pub fn area(&self) -> f64 {
        self.area
    }
}

const TRANS_NODES: usize = 65;

/// Translation-correction weights for one window.
#[derive(Debug, Clone)]
pub(crate) enum Translation {
    Rectangle {
        w: f64,
        h: f64,
    },
    Table {
        area: f64,
        reach: f64,
        step: f64,
        gamma: Vec<f64>,
    },
}

fn to_geo(region: &Region) -> MultiPolygon<f64> {
    let polys = region
        .polygons
        .iter()
        .map(|rings| {
            let mut it = rings.iter().map(|r| {
                LineString::from(
                    r.iter()
                        .map(|p| Coord { x: p[0], y: p[1] })
                        .collect::<Vec<_>>(),
                )
            });
            let ext = it.next().unwrap_or_else(|| LineString::new(vec![]));
            Polygon::new(ext, it.collect())
        })
        .collect();
    MultiPolygon(polys)
}

/// |W ∩ (W + (dx, dy))| by exact polygon clipping.
pub(crate) fn set_covariance_exact(mp: &MultiPolygon<f64>, dx: f64, dy: f64) -> f64 {
    let moved = mp.translate(dx, dy);
    mp.intersection(&moved).unsigned_area()
}

impl Translation {
    /// Prepares the weights for offsets up to `reach` in length.
    pub fn new(region: &Region, reach: f64) -> Translation {
        if let Some([x0, y0, x1, y1]) = region.rectangle {
            return Translation::Rectangle {
                w: x1 - x0,
                h: y1 - y0,
            };
        }
        let mp = to_geo(region);
        let n = TRANS_NODES;
        let step = 2.0 * reach / (n - 1) as f64;
        let mut gamma = vec![0.0; n * n];
        let half = n / 2;
        for iy in 0..n {
            for ix in 0..n {
                let k = iy * n + ix;
                let mirror = (n - 1 - iy) * n + (n - 1 - ix);
                if mirror < k {
                    gamma[k] = gamma[mirror]; // γ(v) = γ(−v)
                    continue;
                }
                let dx = -reach + ix as f64 * step;
                let dy = -reach + iy as f64 * step;
                gamma[k] = if ix == half && iy == half {
                    region.area
                } else {
                    set_covariance_exact(&mp, dx, dy)
                };
            }
        }
        Translation::Table {
            area: region.area,
            reach,
            step,
            gamma,
        }
    }

    /// Weight |W| / γ(dx, dy), capped.
    #[inline]
    pub fn weight(&self, dx: f64, dy: f64, cap: f64, capped: &mut u64) -> f64 {
        let w = match self {
            Translation::Rectangle { w, h } => (w * h) / ((w - dx.abs()) * (h - dy.abs())),
            Translation::Table {
                area,
                reach,
                step,
                gamma,
            } => {
                let n = TRANS_NODES;
                let fx = ((dx + reach) / step).clamp(0.0, (n - 1) as f64);
                let fy = ((dy + reach) / step).clamp(0.0, (n - 1) as f64);
                let ix = (fx.floor() as usize).min(n - 2);
                let iy = (fy.floor() as usize).min(n - 2);
                let (tx, ty) = (fx - ix as f64, fy - iy as f64);
                let g00 = gamma[iy * n + ix];
                let g10 = gamma[iy * n + ix + 1];
                let g01 = gamma[(iy + 1) * n + ix];
                let g11 = gamma[(iy + 1) * n + ix + 1];
                let g =
                    (1.0 - ty) * ((1.0 - tx) * g00 + tx * g10) + ty * ((1.0 - tx) * g01 + tx * g11);
                area / g
            }
        };
        if !(w > 0.0 && w < cap) {
            *capped += 1;
            cap
        } else {
            w
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::distance::region::tests::{unit_square, wh};

    /// METHODS §4.3 single-weight checks (translation).
    #[test]
    fn test_translation_single_weights() {
        let mut c = 0;
        // Unit square, (Δx, Δy) = (0.2, −0.1): e = 1/(0.8·0.9) = 1.38888889.
        let t = Translation::new(&unit_square(), 0.3);
        assert!((t.weight(0.2, -0.1, 10.0, &mut c) - 1.0 / 0.72).abs() < 1e-12);
        // WH, shift (1, 0): e = 96/84 = 1.14285714 (exact clipping).
        let w = wh();
        let mp = to_geo(&w);
        assert!((96.0 / set_covariance_exact(&mp, 1.0, 0.0) - 96.0 / 84.0).abs() < 1e-9);
        // Interpolated table at a node-free offset: within 1e-3 relative.
        let t = Translation::new(&w, 2.5);
        let exact = 96.0 / set_covariance_exact(&mp, 1.0, 0.0);
        assert!((t.weight(1.0, 0.0, 10.0, &mut c) / exact - 1.0).abs() < 1e-3);
        assert_eq!(c, 0);
    }

    /// The rectangle closed form agrees with the general arc routine.
    #[test]
    fn test_rectangle_formula_matches_arcs() {
        let w = unit_square();
        let mut rng = crate::rng::rng_from_seed(12);
        for _ in 0..2000 {
            let (x, y) = w.sample_one(&mut rng);
            let d = 0.6 * rand::RngExt::random::<f64>(&mut rng);
            let near = w.edges_near(x, y, d);
            let arc = w.arc_inside(x, y, d, &near);
            let ang = rectangle_inside_angle(&[x, 1.0 - x, y, 1.0 - y], d);
            assert!(
                (arc - ang * d).abs() < 1e-12,
                "{x} {y} {d}: {arc} {}",
                ang * d
            );
        }
    }

    /// The per-pattern cache (filtered edge lists) gives the same weights
    /// as the uncached routine on a window with a hole.
    #[test]
    fn test_cache_matches_uncached() {
        // WH (general polygon path) and the unit square (closed form with
        // its one-side shortcut) against the general uncached routine.
        for (w, reach) in [(wh(), 3.0), (unit_square(), 0.3)] {
            let mut rng = crate::rng::rng_from_seed(21);
            let (xs, ys) = w.sample(300, &mut rng);
            let b: Vec<f64> = xs
                .iter()
                .zip(&ys)
                .map(|(x, y)| w.boundary_distance(*x, *y))
                .collect();
            let cache = IsoCache::new(&w, &xs, &ys, b, reach, f64::INFINITY);
            let mut capped = 0;
            for i in 0..xs.len() {
                for k in 1..=30 {
                    let d = reach / 30.0 * k as f64;
                    let a = cache.weight(&w, i, xs[i], ys[i], d, &mut capped);
                    let e = isotropic_weight(&w, xs[i], ys[i], d);
                    assert!((a - e).abs() < 1e-12 * e, "{i} {d}: {a} vs {e}");
                }
            }
        }
    }

    #[test]
    fn test_isotropic_weight_one_inside() {
        let w = unit_square();
        assert_eq!(isotropic_weight(&w, 0.5, 0.5, 0.2), 1.0);
        // Circle centred on a corner: a quarter inside, e = 4.
        assert!((isotropic_weight(&w, 0.0, 0.0, 0.2) - 4.0).abs() < 1e-12);
    }
}
