//! Contours of a surface as closed polygons, and percent-volume isopleths.
//!
//! * **Percent-volume level** (docs/methods.md#kernel \[CP\]): the level `c_p` with
//!   `∫_{λ̂ ≥ c_p} λ̂ = p·∫_W λ̂`. On the grid: sort the cells in the area by
//!   value, highest first, accumulate value × cell area and stop at the
//!   fraction `p`; `c_p` is the value of the cell where the sum reaches it.
//!   The 50 % isopleth thus encloses the smallest area holding half the
//!   estimated events.
//! * **Contours** by marching squares (Lorensen & Cline 1987, Computer
//!   Graphics 21(4):163–169 \[M\], in its two-dimensional form) over the cell
//!   centres, with linear interpolation along cell edges and saddles resolved
//!   by the mean of the four corners. Cells outside the area count as 0, and
//!   the grid is framed by zeros, so every ring closes. A region is
//!   `value ≥ level`.
//! * Rings are oriented as GeoJSON (RFC 7946) asks: exteriors anticlockwise,
//!   holes clockwise; each hole is attached to the smallest exterior holding it.

use super::grid::Grid;
use serde::Serialize;
use std::collections::HashMap;

/// One contour level as polygons (exterior ring first, then holes; rings
/// closed, first point repeated at the end), coordinates in metres.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Contour {
    /// Level, in the grid's unit (events per km² for intensity surfaces).
    pub level: f64,
    /// For percent-volume isopleths, the fraction of the volume (0.5 = 50 %).
    pub percent_volume: Option<f64>,
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    /// Area enclosed by the polygons, km².
    pub area_km2: f64,
}

/// Several contours, highest level first (smallest percent first).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ContourSet {
    pub contours: Vec<Contour>,
}

/// Levels enclosing the fractions `ps` (each in (0, 1]) of the surface's
/// volume. Returns `None` for a fraction when the surface is all zero or the
/// fraction is out of range.
pub fn percent_volume_levels(grid: &Grid, ps: &[f64]) -> Vec<Option<f64>> {
    let mut v: Vec<f64> = grid
        .values
        .iter()
        .zip(&grid.mask)
        .filter(|(v, &m)| m && **v > 0.0)
        .map(|(v, _)| *v)
        .collect();
    v.sort_by(|a, b| b.total_cmp(a));
    let total: f64 = v.iter().sum();
    ps.iter()
        .map(|&p| {
            if !(p > 0.0 && p <= 1.0) || total <= 0.0 {
                return None;
            }
            let target = p * total;
            let mut acc = 0.0;
            for &x in &v {
                acc += x;
                if acc >= target * (1.0 - 1e-12) {
                    return Some(x);
                }
            }
            v.last().copied()
        })
        .collect()
}

/// Percent-volume isopleths (e.g. `[0.5, 0.75, 0.95]`) as polygons.
pub fn isopleths(grid: &Grid, ps: &[f64]) -> ContourSet {
    let levels = percent_volume_levels(grid, ps);
    let contours = ps
        .iter()
        .zip(levels)
        .filter_map(|(&p, l)| {
            l.map(|l| {
                let mut c = contour(grid, l);
                c.percent_volume = Some(p);
                c
            })
        })
        .collect();
    ContourSet { contours }
}

/// Fixed-level contours (levels in the grid's unit).
pub fn contours(grid: &Grid, levels: &[f64]) -> ContourSet {
    ContourSet {
        contours: levels
            .iter()
            .filter(|l| l.is_finite() && **l > 0.0)
            .map(|&l| contour(grid, l))
            .collect(),
    }
}

/// Signed area of a closed ring (positive counter-clockwise).
fn ring_area(r: &[[f64; 2]]) -> f64 {
    0.5 * crate::window::signed_area2(r)
}

/// Strictly inside a closed ring (`geo`'s exact point-in-polygon test).
fn ring_contains(r: &[[f64; 2]], p: [f64; 2]) -> bool {
    use geo::Contains;
    let poly = geo::Polygon::new(
        r.iter().map(|q| geo::Coord { x: q[0], y: q[1] }).collect(),
        vec![],
    );
    poly.contains(&geo::Coord { x: p[0], y: p[1] })
}

/// Key of a crossing: (vertical edge?, i, j) of the edge's lower/left corner.
type Key = (bool, usize, usize);

/// The `level` contour of a grid (values ≥ level inside).
pub fn contour(grid: &Grid, level: f64) -> Contour {
    let (nx, ny) = (grid.nx + 2, grid.ny + 2);
    // Zero-framed copy; masked cells are 0.
    let mut v = vec![0.0; nx * ny];
    for j in 0..grid.ny {
        for i in 0..grid.nx {
            let k = j * grid.nx + i;
            if grid.mask[k] {
                v[(j + 1) * nx + i + 1] = grid.values[k];
            }
        }
    }
    let at = |i: usize, j: usize| v[j * nx + i];
    let inside = |i: usize, j: usize| at(i, j) >= level;
    let xy = |fi: f64, fj: f64| {
        [
            grid.x0 + (fi - 0.5) * grid.cell_m,
            grid.y0 + (fj - 0.5) * grid.cell_m,
        ]
    };
    let point = |k: Key| -> [f64; 2] {
        let (vert, i, j) = k;
        let (v0, v1) = if vert {
            (at(i, j), at(i, j + 1))
        } else {
            (at(i, j), at(i + 1, j))
        };
        let t = if v1 != v0 {
            ((level - v0) / (v1 - v0)).clamp(0.0, 1.0)
        } else {
            0.5
        };
        if vert {
            xy(i as f64, j as f64 + t)
        } else {
            xy(i as f64 + t, j as f64)
        }
    };
    // Segments start → end with the inside on the left.
    let mut next: HashMap<Key, Key> = HashMap::new();
    for j in 0..ny - 1 {
        for i in 0..nx - 1 {
            let corners = [(i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1)];
            let ins = corners.map(|(a, b)| inside(a, b));
            if ins.iter().all(|&b| b) || ins.iter().all(|&b| !b) {
                continue;
            }
            // Edges in anticlockwise order: bottom, right, top, left.
            let edges: [Key; 4] = [
                (false, i, j),
                (true, i + 1, j),
                (false, i, j + 1),
                (true, i, j),
            ];
            // (edge, is_exit) in anticlockwise order.
            let mut xs: Vec<(Key, bool)> = Vec::with_capacity(4);
            for e in 0..4 {
                let (from, to) = (ins[e], ins[(e + 1) % 4]);
                if from != to {
                    xs.push((edges[e], from));
                }
            }
            if xs.len() == 2 {
                let (a, b) = (xs[0], xs[1]);
                let (s, t) = if a.1 { (a.0, b.0) } else { (b.0, a.0) };
                next.insert(s, t);
            } else {
                let centre_in = corners.iter().map(|&(a, b)| at(a, b)).sum::<f64>() / 4.0 >= level;
                for q in 0..4 {
                    if xs[q].1 {
                        let partner = if centre_in { (q + 1) % 4 } else { (q + 3) % 4 };
                        next.insert(xs[q].0, xs[partner].0);
                    }
                }
            }
        }
    }
    // Chain segments into rings.
    let mut rings: Vec<Vec<[f64; 2]>> = Vec::new();
    let mut keys: Vec<Key> = next.keys().copied().collect();
    keys.sort_unstable();
    for start in keys {
        if !next.contains_key(&start) {
            continue;
        }
        let mut ring = vec![point(start)];
        let mut k = start;
        while let Some(n) = next.remove(&k) {
            ring.push(point(n));
            k = n;
            if k == start {
                break;
            }
        }
        if ring.len() >= 4 && ring_area(&ring).abs() > 0.0 {
            rings.push(ring);
        }
    }
    // Exteriors (anticlockwise) and holes (clockwise).
    let (mut outers, holes): (Vec<_>, Vec<_>) = rings.into_iter().partition(|r| ring_area(r) > 0.0);
    outers.sort_by(|a, b| ring_area(a).total_cmp(&ring_area(b)));
    let mut polys: Vec<Vec<Vec<[f64; 2]>>> = outers.into_iter().map(|r| vec![r]).collect();
    for h in holes {
        let p = h[0];
        if let Some(poly) = polys.iter_mut().find(|poly| ring_contains(&poly[0], p)) {
            poly.push(h);
        }
    }
    let area: f64 = polys
        .iter()
        .flat_map(|p| p.iter())
        .map(|r| ring_area(r))
        .sum();
    Contour {
        level,
        percent_volume: None,
        polygons: polys,
        area_km2: area / 1.0e6,
    }
}

/// The contours as a GeoJSON FeatureCollection (one MultiPolygon feature per
/// level, properties `level`, `percent_volume`, `area_km2`). `to_output`
/// maps each (x, y) in metres to output coordinates: pass
/// `|x, y| [x, y]` to keep metres, or a back-projection to longitude/latitude.
pub fn to_geojson(set: &ContourSet, to_output: impl Fn(f64, f64) -> [f64; 2]) -> String {
    let features: Vec<serde_json::Value> = set
        .contours
        .iter()
        .map(|c| {
            let coords: Vec<Vec<Vec<[f64; 2]>>> = c
                .polygons
                .iter()
                .map(|p| {
                    p.iter()
                        .map(|r| r.iter().map(|q| to_output(q[0], q[1])).collect())
                        .collect()
                })
                .collect();
            serde_json::json!({
                "type": "Feature",
                "properties": {
                    "level": c.level,
                    "percent_volume": c.percent_volume,
                    "area_km2": c.area_km2,
                },
                "geometry": { "type": "MultiPolygon", "coordinates": coords },
            })
        })
        .collect();
    serde_json::json!({ "type": "FeatureCollection", "features": features }).to_string()
}
