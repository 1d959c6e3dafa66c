//! Edge corrections: weights that make up for neighbours we cannot see
//! beyond the study-area boundary.
//!
//! * **Isotropic** (Ripley 1976, J Appl Prob 13:255–266; Ripley 1977, JRSS-B
//!   39:172–212 [from memory]): e_ij = 2π·d_ij / ℓ(∂b(x_i, d_ij) ∩ W), the
//!   reciprocal of the fraction of the circle centred at x_i through x_j
//!   that lies inside W. The arc length is computed analytically, holes
//!   included: per pattern, from the signed triangles each nearby edge
//!   forms with the point ([`IsoCache`]); for single checks, and for points
//!   on the boundary, from circle–edge crossings ([`arc_inside`]).
//!   The weight is asymmetric (e_ij ≠ e_ji). When the circle does not
//!   reach the boundary (b_i ≥ d) the weight is 1 and no geometry is done.
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
//! side, reached at a corner: docs/methods.md#distance-functions suggests capping at about 4
//! [common practice]). The number of pair weights that hit the cap is
//! reported.

use crate::window::Window;
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

/// Per-pattern cache for isotropic weights.
///
/// **Method (exact, no sorting of crossings).** Split the study area into
/// the signed triangles T_k = (x, a_k, b_k) formed by the point x and each
/// directed boundary edge a_k→b_k (holes included): 1_W = Σ_k s_k·1_{T_k}
/// almost everywhere, s_k = ±1 the orientation of T_k, and Σ_k s_k·span_k =
/// 2π for x inside W (winding number 1). Seen from x, the circle of radius
/// d at angle θ lies in T_k iff θ is within the triangle's angular span and
/// d·cos(θ − φ_k) ≤ p_k, where p_k is the distance from x to the edge's line
/// and φ_k the direction of the foot of the perpendicular. So
///
///   inside angle = 2π − Σ_k s_k·|[lo_k, hi_k] ∩ (−α_k, α_k)|,
///   α_k = acos(p_k/d) (0 when p_k ≥ d),
///
/// with [lo_k, hi_k] the edge's angular span measured from φ_k. Only edges
/// closer than `reach` can contribute; they are cached per point with p, lo,
/// hi, s, the distance to the segment (no cut below it) and to its farther
/// end (the whole span is cut beyond it, no `acos` needed).
///
/// The decomposition 1_W = Σ_k s_k·1_{T_k} holds wherever x is; only the
/// total Σ_k s_k·span_k (the angle of W seen from x) changes: 2π inside,
/// the interior angle for a point on the boundary (π on an edge, the
/// corner's angle at a vertex), 0 outside. For points within 1e-9 of the
/// area's extent of the boundary, or outside, that total is summed over
/// all edges, skipping the edges the point lies on (their triangles are
/// flat). This also gives the right answer where the crossing routine is
/// fragile (a circle through a vertex and tangent to an edge).
pub(crate) struct IsoCache {
    pub b: Vec<f64>,
    start: Vec<u32>,
    fan: Vec<FanEdge>,
    /// Angle of the area seen from each point (2π inside).
    base: Vec<f64>,
    cap: f64,
}

/// Σ_k s_k·span_k over all edges not within `tiny` of (x, y): the angle of
/// the area seen from the point.
fn seen_angle(region: &Window, x: f64, y: f64, tiny: f64) -> f64 {
    let t2 = tiny * tiny;
    region
        .edges()
        .iter()
        .filter(|e| e.distance_sq(x, y) > t2)
        .map(|e| {
            let (ax, ay, bx, by) = (e.a[0] - x, e.a[1] - y, e.b[0] - x, e.b[1] - y);
            (ax * by - ay * bx).atan2(ax * bx + ay * by)
        })
        .sum()
}

#[derive(Debug, Clone, Copy)]
struct FanEdge {
    p: f64,
    lo: f64,
    hi: f64,
    s: f64,
    seg: f64,
    far: f64,
}

/// |[lo, hi] ∩ (−α, α)|, with plain comparisons (no NaN can occur here).
#[inline(always)]
fn cut_part(lo: f64, hi: f64, a: f64) -> f64 {
    let top = if hi < a { hi } else { a };
    let bot = if lo > -a { lo } else { -a };
    let part = top - bot;
    if part > 0.0 {
        part
    } else {
        0.0
    }
}

impl IsoCache {
    /// Builds the cache for points (in any order; indices are kept).
    pub fn new(
        region: &Window,
        xs: &[f64],
        ys: &[f64],
        b: Vec<f64>,
        reach: f64,
        cap: f64,
    ) -> IsoCache {
        let n = xs.len();
        let mut start = Vec::with_capacity(n + 1);
        let mut fan = Vec::new();
        let mut base = vec![std::f64::consts::TAU; n];
        let scale = {
            let [x0, y0, x1, y1] = region.bbox();
            (x1 - x0).abs().max((y1 - y0).abs()).max(f64::MIN_POSITIVE)
        };
        let tiny = 1e-9 * scale;
        start.push(0u32);
        for i in 0..n {
            let (x, y) = (xs[i], ys[i]);
            if b[i] < reach {
                let near = region.edges_near(x, y, reach);
                let inside = b[i] > tiny && region.contains(x, y);
                if !inside {
                    base[i] = seen_angle(region, x, y, tiny);
                }
                for &e in &near {
                    let edge = &region.edges()[e as usize];
                    let (ex, ey) = (edge.b[0] - edge.a[0], edge.b[1] - edge.a[1]);
                    let len = (ex * ex + ey * ey).sqrt();
                    let seg = edge.distance_sq(x, y).sqrt();
                    if len.is_nan() || len <= 0.0 || (!inside && seg <= tiny) {
                        continue;
                    }
                    let (ux, uy) = (ex / len, ey / len);
                    let (fx, fy) = (x - edge.a[0], y - edge.a[1]);
                    // Signed distance to the line (> 0: x on the left).
                    let cross = ux * fy - uy * fx;
                    let p = cross.abs();
                    // Positions of the ends along the line, from the foot.
                    let ta = -(ux * fx + uy * fy);
                    let tb = ta + len;
                    let far = (p * p + ta * ta).max(p * p + tb * tb).sqrt();
                    fan.push(FanEdge {
                        p,
                        lo: ta.atan2(p),
                        hi: tb.atan2(p),
                        s: cross.signum(),
                        seg,
                        far,
                    });
                }
            }
            start.push(fan.len() as u32);
        }
        IsoCache {
            b,
            start,
            fan,
            base,
            cap,
        }
    }

    /// Inside angle of the circle of radius d > b_i about point i.
    #[inline]
    fn inside_angle(&self, i: usize, d: f64) -> f64 {
        let (s0, s1) = (self.start[i] as usize, self.start[i + 1] as usize);
        let acos = super::acos::acos01();
        let mut cut = 0.0;
        for f in &self.fan[s0..s1] {
            if d <= f.seg {
                continue;
            }
            if d >= f.far {
                cut += f.s * (f.hi - f.lo);
                continue;
            }
            cut += f.s * cut_part(f.lo, f.hi, acos(f.p / d));
        }
        self.base[i] - cut
    }

    /// e − 1 for point `i` and each distance in `ds` (all beyond b_i),
    /// into `out`. Same values as [`Self::weight`] (to rounding), in one
    /// branch-free sweep per cached edge, which the compiler vectorises.
    pub fn weights_minus_one(&self, i: usize, ds: &[f64], out: &mut Vec<f64>, capped: &mut u64) {
        use std::f64::consts::TAU;
        out.clear();
        let (s0, s1) = (self.start[i] as usize, self.start[i + 1] as usize);
        let acos = super::acos::acos01();
        let fan = &self.fan[s0..s1];
        let min_inside = TAU / self.cap;
        // Staged sweeps (short independent iterations pipeline well): the
        // cut of each cached edge, then the weights. t = p/d is divided
        // directly, not multiplied by 1/d: a tangent circle (d = p) must
        // give t = 1 exactly, where acos is steepest.
        out.resize(ds.len(), 0.0);
        for f in fan {
            let (p, lo, hi, sg) = (f.p, f.lo, f.hi, f.s);
            for (c, &d) in out.iter_mut().zip(ds) {
                // α = 0 when d ≤ p (t ≥ 1), and the clamp at 0 drops edges
                // whose span misses (−α, α): no branches needed.
                *c += sg * cut_part(lo, hi, acos(p / d));
            }
        }
        let base = self.base[i];
        let cap1 = self.cap - 1.0;
        let mut n_capped = 0u64;
        for c in out.iter_mut() {
            let inside = base - *c;
            let ok = inside > min_inside;
            n_capped += (!ok) as u64;
            *c = if ok { TAU / inside - 1.0 } else { cap1 };
        }
        *capped += n_capped;
    }

    /// Isotropic weight of point `i` for a neighbour at distance `d`;
    /// `capped` is set when the cap applies.
    #[inline]
    pub fn weight(&self, i: usize, d: f64, capped: &mut u64) -> f64 {
        if d <= self.b[i] {
            return 1.0;
        }
        let w = std::f64::consts::TAU / self.inside_angle(i, d);
        if !(w > 0.0 && w < self.cap) {
            *capped += 1;
            self.cap
        } else {
            w
        }
    }
}

/// Isotropic weight of one pair (uncached; for checks and small jobs).
pub(crate) fn isotropic_weight(region: &Window, x: f64, y: f64, d: f64) -> f64 {
    if d <= 0.0 {
        return 1.0;
    }
    let near = region.edges_near(x, y, d);
    std::f64::consts::TAU * d / arc_inside(region, x, y, d, &near)
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
    Ok(arc_inside(&region, x, y, r, &near))
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
            area: region.area(),
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

fn to_geo(region: &Window) -> MultiPolygon<f64> {
    let polys = region
        .polygons()
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
    pub fn new(region: &Window, reach: f64) -> Translation {
        if let Some([x0, y0, x1, y1]) = region.axis_rectangle() {
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
                    region.area()
                } else {
                    set_covariance_exact(&mp, dx, dy)
                };
            }
        }
        Translation::Table {
            area: region.area(),
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

/// Length of the circle of radius `d` about (cx, cy) that lies inside
/// the window, using only the edges listed in `near` (which must contain
/// every edge within `d` of the centre).
///
/// Algorithm: intersect the circle with each edge analytically (edge
/// parameter t in [0, 1), so a crossing at a shared vertex counts once);
/// each crossing is entering or leaving according to whether the
/// counter-clockwise tangent points to the left of the edge (inside).
/// With one edge crossed twice the inside arc is 2π·d minus (or just) the
/// arc 2·d·acos(p/d) cut off by the chord, p the distance from the
/// centre to the edge's line; otherwise crossing angles are sorted and
/// the arcs from each entering to the next leaving crossing are summed.
/// If entering and leaving do not alternate (tangencies, vertex
/// grazes), arc midpoints are tested for containment instead.
///
/// Known limit: for a centre exactly on the boundary, a circle through
/// a vertex can be misjudged (a crossing at the vertex is dropped). The
/// distance functions do not use this routine (see `IsoCache`, which
/// handles such points); it stays as an independent check for points
/// inside the area.
pub(crate) fn arc_inside(region: &Window, cx: f64, cy: f64, d: f64, near: &[u32]) -> f64 {
    const TAU: f64 = std::f64::consts::TAU;
    if d <= 0.0 {
        return 0.0;
    }
    let d2 = d * d;
    // Up to a few crossings is the common case: keep them on the stack.
    let mut buf: [(f64, bool, u32); 16] = [(0.0, false, 0); 16];
    let mut heap: Vec<(f64, bool, u32)> = Vec::new();
    let mut count = 0usize;
    let mut single_edge = u32::MAX;
    let mut single_ok = true;
    // First pass: t parameters and directions (no angles yet).
    for &k in near {
        let e = &region.edges()[k as usize];
        let (fx, fy) = (e.a[0] - cx, e.a[1] - cy);
        let (dx, dy) = (e.b[0] - e.a[0], e.b[1] - e.a[1]);
        let a = dx * dx + dy * dy;
        if a == 0.0 {
            continue;
        }
        let b = 2.0 * (fx * dx + fy * dy);
        let c = fx * fx + fy * fy - d2;
        let disc = b * b - 4.0 * a * c;
        if disc <= 0.0 {
            continue;
        }
        let sq = disc.sqrt();
        for t in [(-b - sq) / (2.0 * a), (-b + sq) / (2.0 * a)] {
            if (0.0..1.0).contains(&t) {
                let px = fx + t * dx;
                let py = fy + t * dy;
                let entering = px * dx + py * dy > 0.0;
                // Store the relative crossing point packed as an angle
                // later; for now keep t.
                let item = (t, entering, k);
                if count < buf.len() {
                    buf[count] = item;
                } else {
                    if heap.is_empty() {
                        heap.extend_from_slice(&buf);
                    }
                    heap.push(item);
                }
                count += 1;
                if single_edge == u32::MAX {
                    single_edge = k;
                } else if single_edge != k {
                    single_ok = false;
                }
            }
        }
    }
    if count == 0 {
        // The circle meets no edge: wholly inside or wholly outside.
        return if region.contains(cx + d, cy) {
            TAU * d
        } else {
            0.0
        };
    }
    if count == 2 && single_ok {
        let e = &region.edges()[single_edge as usize];
        let (dx, dy) = (e.b[0] - e.a[0], e.b[1] - e.a[1]);
        let len = (dx * dx + dy * dy).sqrt();
        let cross = dx * (cy - e.a[1]) - dy * (cx - e.a[0]);
        let p = (cross / len).abs();
        let cut = 2.0 * d * (p / d).min(1.0).acos();
        return if cross > 0.0 { TAU * d - cut } else { cut };
    }
    let items: &mut [(f64, bool, u32)] = if heap.is_empty() {
        &mut buf[..count]
    } else {
        &mut heap[..]
    };
    // Replace t by the crossing angle in [0, 2π).
    for it in items.iter_mut() {
        let e = &region.edges()[it.2 as usize];
        let px = e.a[0] + it.0 * (e.b[0] - e.a[0]) - cx;
        let py = e.a[1] + it.0 * (e.b[1] - e.a[1]) - cy;
        let mut th = py.atan2(px);
        if th < 0.0 {
            th += TAU;
        }
        it.0 = th;
    }
    items.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
    let n = items.len();
    let alternates = n.is_multiple_of(2) && (0..n).all(|i| items[i].1 != items[(i + 1) % n].1);
    let mut inside = 0.0;
    if alternates {
        for i in 0..n {
            if items[i].1 {
                let mut span = items[(i + 1) % n].0 - items[i].0;
                if span < 0.0 {
                    span += TAU;
                }
                inside += span;
            }
        }
    } else {
        for i in 0..n {
            let mut span = items[(i + 1) % n].0 - items[i].0;
            if span <= 0.0 {
                span += TAU;
            }
            if n == 1 {
                span = TAU;
            }
            let mid = items[i].0 + 0.5 * span;
            if region.contains(cx + d * mid.cos(), cy + d * mid.sin()) {
                inside += span;
            }
        }
    }
    inside * d
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::tests::{unit_square, wh};

    /// docs/methods.md#distance-functions single-weight checks (translation).
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

    /// The per-pattern cache (filtered edge lists) gives the same weights
    /// as the uncached routine on a window with a hole.
    #[test]
    fn test_cache_matches_uncached() {
        // WH (a polygon with a hole) and the unit square. Points inside:
        // the triangle-fan cache (one weight at a time and in sweeps)
        // against the crossing routine, to 1e-12. Points on the boundary
        // (on an edge, at a corner, on the hole): against a brute-force
        // count of 20,000 points on the circle, to 1e-3.
        type Case = (Window, f64, Vec<(f64, f64)>);
        let boundary: [Case; 2] = [
            (
                wh(),
                3.0,
                vec![(0.0, 5.0), (4.0, 5.0), (6.0, 6.0), (10.0, 0.0)],
            ),
            (
                unit_square(),
                0.3,
                vec![(0.0, 0.37), (0.0, 0.3), (0.0, 0.0), (0.5, 1.0)],
            ),
        ];
        let brute = |w: &Window, x: f64, y: f64, d: f64| {
            let m = 20_000;
            let inside = (0..m)
                .filter(|k| {
                    let t = std::f64::consts::TAU * (*k as f64 + 0.5) / m as f64;
                    w.contains(x + d * t.cos(), y + d * t.sin())
                })
                .count();
            m as f64 / inside as f64
        };
        for (w, reach, extra) in boundary {
            let mut rng = crate::rng::rng_from_seed(21);
            let (mut xs, mut ys) = w.sample_uniform(300, &mut rng);
            let n_inside = xs.len();
            for (x, y) in extra {
                xs.push(x);
                ys.push(y);
            }
            let b: Vec<f64> = xs
                .iter()
                .zip(&ys)
                .map(|(x, y)| w.boundary_distance(*x, *y))
                .collect();
            let cache = IsoCache::new(&w, &xs, &ys, b.clone(), reach, f64::INFINITY);
            let mut capped = 0;
            let mut out = Vec::new();
            for i in 0..xs.len() {
                let mut ds = Vec::new();
                for k in 1..=60 {
                    // Grid distances and random ones in between.
                    let d = if k <= 30 {
                        reach / 30.0 * k as f64
                    } else {
                        reach * rand::RngExt::random::<f64>(&mut rng)
                    };
                    let a = cache.weight(i, d, &mut capped);
                    let (e, tol) = if i < n_inside {
                        (isotropic_weight(&w, xs[i], ys[i], d), 1e-12)
                    } else {
                        (brute(&w, xs[i], ys[i], d), 1e-3)
                    };
                    assert!((a - e).abs() < tol * e, "{i} {d}: {a} vs {e}");
                    if d > b[i] {
                        ds.push((d, a));
                    }
                }
                let dist: Vec<f64> = ds.iter().map(|(d, _)| *d).collect();
                cache.weights_minus_one(i, &dist, &mut out, &mut capped);
                assert_eq!(out.len(), ds.len());
                for ((d, e), got) in ds.iter().zip(&out) {
                    assert!(
                        (got + 1.0 - e).abs() < 1e-11 * e,
                        "sweep {i} {d}: {} vs {e}",
                        got + 1.0
                    );
                }
            }
            assert_eq!(capped, 0);
        }
        // Exact cases on the boundary: half a circle inside (on an edge,
        // also when the circle passes through a corner of the area or of
        // the hole), a quarter at a corner.
        let sq = unit_square();
        let (xs, ys) = (vec![0.0, 0.0, 0.5], vec![0.3, 0.0, 1.0]);
        let c = IsoCache::new(&sq, &xs, &ys, vec![0.0; 3], 0.3, f64::INFINITY);
        let mut capped = 0;
        assert!((c.weight(0, 0.3, &mut capped) - 2.0).abs() < 1e-12);
        assert!((c.weight(1, 0.2, &mut capped) - 4.0).abs() < 1e-12);
        assert!((c.weight(2, 0.25, &mut capped) - 2.0).abs() < 1e-12);
        let h = wh();
        let c = IsoCache::new(&h, &[4.0], &[5.0], vec![0.0], 3.0, f64::INFINITY);
        assert!((c.weight(0, 1.0, &mut capped) - 2.0).abs() < 1e-12);
    }

    #[test]
    fn test_isotropic_weight_one_inside() {
        let w = unit_square();
        assert_eq!(isotropic_weight(&w, 0.5, 0.5, 0.2), 1.0);
        // Circle centred on a corner: a quarter inside, e = 4.
        assert!((isotropic_weight(&w, 0.0, 0.0, 0.2) - 4.0).abs() < 1e-12);
    }

    #[test]
    fn test_arc_inside_single_weights() {
        // docs/methods.md#distance-functions single-weight checks: unit square, x = (0.1, 0.2),
        // r = 0.3: inside arc length 0.79210827 (analytic; shapely 0.79210829).
        let w = unit_square();
        let near = w.edges_near(0.1, 0.2, 0.3);
        let arc = arc_inside(&w, 0.1, 0.2, 0.3, &near);
        assert!((arc - 0.79210827).abs() < 1e-7, "{arc}");
        let e = std::f64::consts::TAU * 0.3 / arc;
        assert!((e - 2.37966913).abs() < 1e-7, "{e}");
        // WH, x = (3.5, 5), r = 1: inside fraction exactly 2/3 (e = 1.5).
        let w = wh();
        let near = w.edges_near(3.5, 5.0, 1.0);
        let arc = arc_inside(&w, 3.5, 5.0, 1.0, &near);
        assert!((std::f64::consts::TAU / arc - 1.5).abs() < 1e-12, "{arc}");
    }
}
