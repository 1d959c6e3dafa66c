//! Where could an event have fallen?
//!
//! A [`Window`] is the study area in planar metres: one or more polygons, each
//! with any number of holes (a lake, an airport). Points on the boundary count
//! as inside, for data and simulations alike.
//!
//! It is the one study-area type of the crate: built once from the loaded
//! polygons, it answers every geometric question the analyses ask of the
//! area (area, perimeter, bounding box, containment, distance to the
//! boundary, uniform sampling, oriented edges and the edges near a point for
//! the isotropic correction, rectangle detection, raster masks, disc and
//! rectangle intersection areas, see [`geometry`]) and builds convex hulls
//! ([`hull`]). Zones for aggregation are windows too. Analyses keep only
//! their own method-specific formulas (e.g. the length of a circle inside
//! the area, `distance::edge`) as functions over [`Window::edges`].
//!
//! # Conventions
//! * Rings are stored closed (first vertex repeated last), exterior rings
//!   counter-clockwise and holes clockwise, whatever the input order was.
//! * Containment uses the even-odd rule over all rings of a polygon (so a
//!   point in a hole is outside), and a point is in the window if it is in
//!   any of its polygons. A point within [`Window::boundary_tolerance`]
//!   (`1e-12 ×` the larger of the bounding box's longer side and its largest
//!   absolute coordinate) of any edge counts as on the boundary, hence
//!   inside; this makes rounded coordinates that lie on an edge behave the
//!   same way in data and simulations (docs/methods.md#csr, "boundary counts as
//!   inside"), also for large planar coordinates such as UTM northings.
//! * The perimeter includes the boundaries of holes (docs/methods.md#conventions).
//! * Checked (OGC Simple Features validity, see `valid.rs`): no ring
//!   crosses itself or another ring of its polygon (refused, with the
//!   place), every corner of a hole lies inside or on its outer ring, and
//!   polygons do not overlap (overlapping polygons are replaced by their
//!   union, with a note in [`Window::notes`]). At most [`MAX_CORNERS`]
//!   corners.
//! * Containment is even-odd over all rings of all polygons, which is the
//!   union of the polygons once overlaps are merged.
//!
//! # Speed
//! The edges are listed in one grid of square cells (`grid.rs`), each edge
//! only in the cells its segment passes through, with the inside/outside
//! state of one corner of every cell. Containment, distance to the boundary
//! and the edges near a point look only at nearby cells. Building costs
//! O(V log V) time and O(V) memory for V corners, also for long thin teeth
//! (`cargo run --release --example bench_window`: 10⁶ corners in about a
//! second or two and about 100 MB).

pub mod geometry;
mod grid;
pub mod hull;
mod valid;

use grid::EdgeGrid;

pub use hull::convex_hull;

use crate::error::{InputError, InputErrorKind};
use crate::rng::Rng;
use rand::RngExt;
use serde::Serialize;

/// Where the study area came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum WindowOrigin {
    /// Drawn from a polygon file the user gave.
    File,
    /// The convex hull of the events (biases clustering tests: warn).
    ConvexHull,
    /// The bounding box of the events (biases clustering tests: warn).
    BoundingBox,
}

/// One directed boundary segment a → b, tagged with the polygon it belongs
/// to. Exterior rings run counter-clockwise and holes clockwise, so the
/// inside of the window is always **to the left** of every edge.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Edge {
    pub a: [f64; 2],
    pub b: [f64; 2],
    poly: u32,
}

impl Edge {
    /// Squared distance from (x, y) to the segment.
    #[inline]
    pub fn distance_sq(&self, x: f64, y: f64) -> f64 {
        seg_dist2(x, y, self.a, self.b)
    }
}

/// A study area: polygons with holes, in metres.
///
/// # Examples
/// The square [0, 10]² with the hole [4, 6]² (docs/methods.md#csr): area 96, the
/// hole is outside, its edge is inside.
/// ```
/// use cloister::window::{Window, WindowOrigin};
/// let w = Window::from_polygons(
///     vec![vec![
///         vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
///         vec![[4.0, 4.0], [6.0, 4.0], [6.0, 6.0], [4.0, 6.0]],
///     ]],
///     WindowOrigin::File,
/// )
/// .unwrap();
/// assert_eq!(w.area(), 96.0);
/// assert!(!w.contains(5.0, 5.0) && w.contains(4.0, 5.0));
/// assert_eq!(w.boundary_distance(2.0, 5.0), 2.0);
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct Window {
    polygons: Vec<Vec<Vec<[f64; 2]>>>,
    origin: WindowOrigin,
    edges: Vec<Edge>,
    /// Grid of edges for containment, distance and near-edge queries.
    grid: EdgeGrid,
    /// `Some([x0, y0, x1, y1])` when the window is one axis-aligned rectangle.
    rect: Option<[f64; 4]>,
    area: f64,
    perimeter: f64,
    bbox: [f64; 4],
    /// Distance below which a point counts as on the boundary.
    tol: f64,
    /// What was repaired on loading (overlapping parts merged), for the
    /// study's warnings.
    notes: Vec<String>,
}

/// Union of polygons (`geo`'s boolean operations, i_overlay), as cleaned
/// closed rings.
fn union(polys: &[Vec<Vec<[f64; 2]>>]) -> Vec<Vec<Vec<[f64; 2]>>> {
    let ls = |r: &Vec<[f64; 2]>| -> geo::LineString<f64> {
        r.iter().map(|p| geo::Coord { x: p[0], y: p[1] }).collect()
    };
    let gp: Vec<geo::Polygon<f64>> = polys
        .iter()
        .map(|p| geo::Polygon::new(ls(&p[0]), p[1..].iter().map(ls).collect()))
        .collect();
    let u = geo::unary_union(&gp);
    u.0.iter()
        .map(|p| {
            std::iter::once(p.exterior())
                .chain(p.interiors())
                .map(|r| r.0.iter().map(|c| [c.x, c.y]).collect())
                .collect()
        })
        .collect()
}

fn bad(detail: String) -> InputError {
    InputError::new(InputErrorKind::BadPolygon { detail })
}

/// Twice the signed area of a ring, open or closed; positive when
/// counter-clockwise. This is the crate's one polygon-area routine: `geo`'s
/// shoelace sum, which shifts every vertex by the first one for accuracy
/// with large coordinates (UTM northings).
pub fn signed_area2(ring: &[[f64; 2]]) -> f64 {
    use geo::Area;
    if ring.len() < 3 {
        return 0.0;
    }
    let mut ls: geo::LineString<f64> = ring
        .iter()
        .map(|p| geo::Coord { x: p[0], y: p[1] })
        .collect();
    ls.close();
    2.0 * geo::Polygon::new(ls, vec![]).signed_area()
}

/// Area of a ring (open or closed), m², whatever its orientation.
pub fn ring_area(ring: &[[f64; 2]]) -> f64 {
    0.5 * signed_area2(ring).abs()
}

/// Squared distance from (x, y) to the segment a–b.
fn seg_dist2(x: f64, y: f64, a: [f64; 2], b: [f64; 2]) -> f64 {
    let dx = b[0] - a[0];
    let dy = b[1] - a[1];
    let px = x - a[0];
    let py = y - a[1];
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 {
        ((px * dx + py * dy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    let ex = px - t * dx;
    let ey = py - t * dy;
    ex * ex + ey * ey
}

/// Most corners a study area may have (all rings together): five times the
/// 10⁶ corners of the most detailed real boundaries; a window this size
/// holds about 0.5 GB (`examples/bench_window.rs` measures 101 MB per
/// million corners).
pub const MAX_CORNERS: usize = 5_000_000;

/// The largest planar coordinate a study area may have, metres (10⁹ m, 25
/// times the Earth's circumference: any real projected coordinate is far
/// inside it). Larger values are typing or unit errors, and would overflow
/// the edge grid's cell counts.
pub const MAX_COORD_M: f64 = 1e9;

/// Cleans one ring: finite check, consecutive duplicates (and the closing
/// vertex) dropped, at least 3 distinct vertices. Returns the open ring and
/// its doubled signed area (possibly zero: checked later, after crossings,
/// so that a bow-tie is reported as crossing itself).
fn clean_ring(ring: &[[f64; 2]], what: &str) -> Result<(Vec<[f64; 2]>, f64), InputError> {
    let mut out: Vec<[f64; 2]> = Vec::with_capacity(ring.len() + 1);
    for (k, p) in ring.iter().enumerate() {
        if !(p[0].is_finite() && p[1].is_finite()) {
            return Err(bad(format!(
                "{what}, corner {}: coordinate ({}, {}) is not a finite number",
                k + 1,
                p[0],
                p[1]
            )));
        }
        if p[0].abs() > MAX_COORD_M || p[1].abs() > MAX_COORD_M {
            return Err(bad(format!(
                "{what}, corner {}: coordinate ({:e}, {:e}) is farther than {:e} m from the \
                 origin, which no place on Earth is in any map projection",
                k + 1,
                p[0],
                p[1],
                MAX_COORD_M
            )));
        }
        if out.last() != Some(p) {
            out.push(*p);
        }
    }
    while out.len() > 1 && out.first() == out.last() {
        out.pop();
    }
    let mut distinct = out.clone();
    distinct.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
    distinct.dedup();
    if distinct.len() < 3 {
        return Err(bad(format!(
            "{what} has {} distinct corner(s); a ring needs at least 3",
            distinct.len()
        )));
    }
    let a2 = signed_area2(&out);
    Ok((out, a2))
}

/// Whether a ring's doubled signed area is zero for its size.
fn flat(ring: &[[f64; 2]], a2: f64) -> bool {
    let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
    for p in ring {
        x0 = x0.min(p[0]);
        y0 = y0.min(p[1]);
        x1 = x1.max(p[0]);
        y1 = y1.max(p[1]);
    }
    let diag2 = (x1 - x0).powi(2) + (y1 - y0).powi(2);
    a2.is_nan() || a2.abs() <= 1e-12 * diag2
}

/// Whether all corners lie on one line (up to rounding).
fn collinear(ring: &[[f64; 2]]) -> bool {
    let p0 = ring[0];
    let d2 = |p: &[f64; 2]| (p[0] - p0[0]).powi(2) + (p[1] - p0[1]).powi(2);
    let pf = *ring
        .iter()
        .max_by(|a, b| d2(a).total_cmp(&d2(b)))
        .unwrap_or(&p0);
    let (ux, uy) = (pf[0] - p0[0], pf[1] - p0[1]);
    let len2 = ux * ux + uy * uy;
    ring.iter()
        .all(|p| (ux * (p[1] - p0[1]) - uy * (p[0] - p0[0])).abs() <= 1e-12 * len2)
}

/// Plain coordinates of a point, for messages about a window built
/// directly in metres.
fn plain_place(p: [f64; 2]) -> String {
    format!("({}, {})", p[0], p[1])
}

type Polys = Vec<Vec<Vec<[f64; 2]>>>;

impl Window {
    /// Builds a window from polygons (exterior ring first, then holes; rings
    /// need not be closed). Fails on fewer than 3 distinct vertices, zero area,
    /// non-finite coordinates, more than [`MAX_CORNERS`] corners, and rings
    /// that cross themselves or each other (OGC Simple Features validity,
    /// checked on the edge grid in about O(V log V)); overlapping
    /// polygons are merged (their union) with a note ([`Window::notes`]).
    pub fn from_polygons(polygons: Polys, origin: WindowOrigin) -> Result<Window, InputError> {
        Window::from_polygons_placed(polygons, origin, &plain_place)
    }

    /// [`Window::from_polygons`], with `place` writing a point (in metres)
    /// in the user's own coordinates for messages (e.g. back to lon/lat).
    pub fn from_polygons_placed(
        polygons: Polys,
        origin: WindowOrigin,
        place: &dyn Fn([f64; 2]) -> String,
    ) -> Result<Window, InputError> {
        let corners: usize = polygons.iter().flatten().map(|r| r.len()).sum();
        if corners > MAX_CORNERS {
            return Err(bad(format!(
                "the study area has {corners} corners; at most {MAX_CORNERS} are accepted \
                 (simplify the boundary first)"
            )));
        }
        Window::checked(polygons, origin, place, true)
    }

    fn checked(
        polygons: Polys,
        origin: WindowOrigin,
        place: &dyn Fn([f64; 2]) -> String,
        may_merge: bool,
    ) -> Result<Window, InputError> {
        if polygons.is_empty() {
            return Err(bad("the study area contains no polygon".to_string()));
        }
        let many = polygons.len() > 1;
        let pname = |pi: usize| {
            if many {
                format!("polygon {}", pi + 1)
            } else {
                "the polygon".into()
            }
        };
        let rname = |pi: usize, ri: usize| {
            if ri == 0 {
                format!("{}, outer ring", pname(pi))
            } else {
                format!("{}, hole {ri}", pname(pi))
            }
        };
        let mut clean: Polys = Vec::with_capacity(polygons.len());
        let mut flats: Vec<(usize, usize)> = Vec::new();
        let mut rings_tab: Vec<(valid::RingId, usize, usize)> = Vec::new();
        let mut edges: Vec<Edge> = Vec::new();
        let mut bbox = [f64::MAX, f64::MAX, f64::MIN, f64::MIN];
        let mut parea_all = Vec::with_capacity(polygons.len());
        for (pi, poly) in polygons.iter().enumerate() {
            if poly.is_empty() {
                return Err(bad(format!("{} has no rings", pname(pi))));
            }
            let mut rings = Vec::with_capacity(poly.len());
            let mut parea = 0.0;
            for (ri, ring) in poly.iter().enumerate() {
                let (mut r, a2) = clean_ring(ring, &rname(pi, ri))?;
                if flat(&r, a2) {
                    if collinear(&r) {
                        return Err(bad(format!(
                            "{} has zero area (its corners lie on one line)",
                            rname(pi, ri)
                        )));
                    }
                    // Zero area from lobes that cancel (a bow-tie): the
                    // crossing is reported below.
                    flats.push((pi, ri));
                }
                // Exterior counter-clockwise, holes clockwise.
                if (ri == 0) != (a2 > 0.0) {
                    r.reverse();
                }
                parea += if ri == 0 {
                    a2.abs() / 2.0
                } else {
                    -a2.abs() / 2.0
                };
                r.push(r[0]);
                rings_tab.push((
                    valid::RingId { poly: pi, ring: ri },
                    edges.len(),
                    r.len() - 1,
                ));
                for w in r.windows(2) {
                    edges.push(Edge {
                        a: w[0],
                        b: w[1],
                        poly: pi as u32,
                    });
                    bbox = [
                        bbox[0].min(w[0][0]),
                        bbox[1].min(w[0][1]),
                        bbox[2].max(w[0][0]),
                        bbox[3].max(w[0][1]),
                    ];
                }
                rings.push(r);
            }
            parea_all.push(parea);
            clean.push(rings);
        }
        // Crossings first, so that a bow-tie is called what it is.
        let grid = EdgeGrid::build(&edges, bbox, 0.0);
        let (within, between) = valid::first_crossings(&edges, &rings_tab, &grid);
        drop(grid);
        drop(edges);
        let crossing = |c: valid::Crossing| {
            let what = if c.a == c.b {
                format!("{} crosses itself", rname(c.a.poly, c.a.ring))
            } else {
                let other = if c.b.ring == 0 {
                    "its outer ring".to_string()
                } else {
                    format!("its hole {}", c.b.ring)
                };
                format!("{} and {other} cross", rname(c.a.poly, c.a.ring))
            };
            bad(format!(
                "{what} at about {}; a boundary must not cross itself or another ring of its \
                 polygon, nor run back along itself. Correct the file (e.g. with a GIS's \
                 geometry check) and load it again",
                place(c.at)
            ))
        };
        if let Some(c) = within.filter(|c| c.a == c.b) {
            return Err(crossing(c));
        }
        if let Some(&(pi, ri)) = flats.first() {
            return Err(bad(format!(
                "{} has zero area (its parts cancel out)",
                rname(pi, ri)
            )));
        }
        let mut area = 0.0;
        for (pi, rings) in clean.iter().enumerate() {
            let parea = parea_all[pi];
            if parea.is_nan() || parea <= 0.0 {
                return Err(bad(format!(
                    "{}: its holes cover all of its area",
                    pname(pi)
                )));
            }
            if rings.len() > 1 {
                // Every corner of every hole must be inside (or on) the outer ring.
                let outer = Self::assemble(vec![vec![rings[0].clone()]], origin, 0.0);
                for (hi, hole) in rings.iter().enumerate().skip(1) {
                    if let Some(p) = hole.iter().find(|p| !outer.contains(p[0], p[1])) {
                        return Err(bad(format!(
                            "{}, hole {hi}: its corner {} lies outside the outer ring",
                            pname(pi),
                            place(*p)
                        )));
                    }
                }
            }
            area += parea;
        }
        if let Some(c) = within {
            return Err(crossing(c));
        }
        // Overlapping parts: a crossing or a shared stretch of boundary
        // between two polygons, or one polygon inside another (tested at
        // its first corner).
        let mut overlap = between.map(|c| (c.a.poly, c.b.poly, c.at));
        if overlap.is_none() && many {
            let boxes: Vec<[f64; 4]> = clean
                .iter()
                .map(|p| {
                    p[0].iter()
                        .fold([f64::MAX, f64::MAX, f64::MIN, f64::MIN], |b, q| {
                            [
                                b[0].min(q[0]),
                                b[1].min(q[1]),
                                b[2].max(q[0]),
                                b[3].max(q[1]),
                            ]
                        })
                })
                .collect();
            'outer: for (pi, p) in clean.iter().enumerate() {
                let v = p[0][0];
                for (qi, q) in clean.iter().enumerate() {
                    let b = boxes[qi];
                    if qi != pi
                        && v[0] >= b[0]
                        && v[0] <= b[2]
                        && v[1] >= b[1]
                        && v[1] <= b[3]
                        && valid::in_ring(&q[0], v[0], v[1])
                        && !q[1..].iter().any(|h| valid::in_ring(h, v[0], v[1]))
                    {
                        overlap = Some((pi.min(qi), pi.max(qi), v));
                        break 'outer;
                    }
                }
            }
        }
        if let Some((pa, pb, at)) = overlap {
            if !may_merge {
                return Err(bad(format!(
                    "polygons {} and {} overlap at about {} and could not be merged",
                    pa + 1,
                    pb + 1,
                    place(at)
                )));
            }
            let mut w = Window::checked(union(&clean), origin, place, false)?;
            if w.area < area * (1.0 - 1e-9) {
                w.notes.push(format!(
                    "Parts of the study area overlap (polygons {} and {}, at about {}). They \
                     were merged into one area (their union) so that no ground is counted \
                     twice: the area is {:.6} km² instead of the {:.6} km² the parts add up to.",
                    pa + 1,
                    pb + 1,
                    place(at),
                    w.area / 1e6,
                    area / 1e6
                ));
                return Ok(w);
            }
        }
        Ok(Self::assemble(clean, origin, area))
    }

    /// Builds the derived fields from cleaned, oriented, closed rings.
    fn assemble(polygons: Vec<Vec<Vec<[f64; 2]>>>, origin: WindowOrigin, area: f64) -> Window {
        let mut edges = Vec::new();
        let mut perimeter = 0.0;
        let mut bbox = [f64::MAX, f64::MAX, f64::MIN, f64::MIN];
        for (pi, poly) in polygons.iter().enumerate() {
            for ring in poly {
                for w in ring.windows(2) {
                    let (a, b) = (w[0], w[1]);
                    perimeter += (b[0] - a[0]).hypot(b[1] - a[1]);
                    edges.push(Edge {
                        a,
                        b,
                        poly: pi as u32,
                    });
                    bbox[0] = bbox[0].min(a[0]);
                    bbox[1] = bbox[1].min(a[1]);
                    bbox[2] = bbox[2].max(a[0]);
                    bbox[3] = bbox[3].max(a[1]);
                }
            }
        }
        let extent = (bbox[2] - bbox[0]).max(bbox[3] - bbox[1]);
        let magnitude = bbox.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let tol = 1e-12 * extent.max(magnitude);
        let grid = EdgeGrid::build(&edges, bbox, tol);
        // One ring of four axis-parallel edges that fills its bounding box.
        let rect = if polygons.len() == 1 && polygons[0].len() == 1 && edges.len() == 4 {
            let axis = edges.iter().all(|e| e.a[0] == e.b[0] || e.a[1] == e.b[1]);
            let full = (area - (bbox[2] - bbox[0]) * (bbox[3] - bbox[1])).abs() <= 1e-12 * area;
            (axis && full).then_some(bbox)
        } else {
            None
        };
        Window {
            polygons,
            origin,
            edges,
            grid,
            rect,
            area,
            perimeter,
            bbox,
            tol,
            notes: Vec::new(),
        }
    }

    /// The rectangle [x0, x1] × [y0, y1] as a window (origin `File`).
    pub fn rectangle(x0: f64, y0: f64, x1: f64, y1: f64) -> Result<Window, InputError> {
        Window::from_polygons(
            vec![vec![vec![[x0, y0], [x1, y0], [x1, y1], [x0, y1]]]],
            WindowOrigin::File,
        )
    }

    /// The rectangle `[x0, x1] × [y0, y1]` with the rectangular hole
    /// `[hx0, hx1] × [hy0, hy1]` (which must lie inside it). The fixture
    /// "WH" of docs/methods.md#fixtures is
    /// `rectangle_with_hole([0, 0, 10, 10], [4, 4, 6, 6])`.
    pub fn rectangle_with_hole(outer: [f64; 4], hole: [f64; 4]) -> Result<Window, InputError> {
        let ring = |[x0, y0, x1, y1]: [f64; 4]| vec![[x0, y0], [x1, y0], [x1, y1], [x0, y1]];
        Window::from_polygons(vec![vec![ring(outer), ring(hole)]], WindowOrigin::File)
    }

    /// The bounding box of the points as a window.
    ///
    /// Non-finite points are ignored. Fails (with `BadPolygon`) when there
    /// are no points or they all share one x or one y value.
    pub fn bounding_box_of(x: &[f64], y: &[f64]) -> Result<Window, InputError> {
        let b = crate::index::bbox(x, y).unwrap_or([0.0; 4]);
        if !(b[2] > b[0] && b[3] > b[1]) {
            return Err(bad(
                "the events all share one x or one y coordinate (or there are \
                 none), so a box drawn around them has no area; give a study-area file"
                    .to_string(),
            ));
        }
        let mut w = Window::rectangle(b[0], b[1], b[2], b[3])?;
        w.origin = WindowOrigin::BoundingBox;
        Ok(w)
    }

    /// The convex hull of the points as a window (see [`convex_hull`]).
    ///
    /// Non-finite points are ignored. Fails (with `BadPolygon`) when fewer
    /// than 3 distinct points remain or all lie on one line.
    pub fn convex_hull_of(x: &[f64], y: &[f64]) -> Result<Window, InputError> {
        let pts: Vec<[f64; 2]> = x
            .iter()
            .zip(y)
            .filter(|(a, b)| a.is_finite() && b.is_finite())
            .map(|(&a, &b)| [a, b])
            .collect();
        let degenerate = || {
            bad(
                "the events lie on one straight line (or there are fewer than 3 distinct \
                 locations), so no area can be drawn around them; give a study-area file"
                    .to_string(),
            )
        };
        let mut hull = convex_hull(&pts);
        hull.pop();
        if hull.len() < 3 {
            return Err(degenerate());
        }
        let mut w = Window::from_polygons(vec![vec![hull]], WindowOrigin::ConvexHull)
            .map_err(|_| degenerate())?;
        w.origin = WindowOrigin::ConvexHull;
        Ok(w)
    }

    /// Polygons: exterior ring first, then holes; rings closed (first == last).
    pub fn polygons(&self) -> &[Vec<Vec<[f64; 2]>>] {
        &self.polygons
    }
    pub fn origin(&self) -> WindowOrigin {
        self.origin
    }
    /// Area in m², holes excluded.
    pub fn area(&self) -> f64 {
        self.area
    }
    /// Perimeter in m, hole boundaries included.
    pub fn perimeter(&self) -> f64 {
        self.perimeter
    }
    /// [min_x, min_y, max_x, max_y].
    pub fn bbox(&self) -> [f64; 4] {
        self.bbox
    }
    /// Distance (m) within which a point counts as on the boundary.
    pub fn boundary_tolerance(&self) -> f64 {
        self.tol
    }
    /// Inside or on the boundary. Non-finite points are outside.
    ///
    /// This is the crate's one point-in-polygon test, written by hand (even-
    /// odd crossings over the edges of the point's grid cell, from a cell
    /// corner whose state is stored, with the boundary tolerance) rather
    /// than `geo`'s `Intersects`, because the grid pays on detailed
    /// boundaries: `cargo run --release --example bench_window` measured
    /// 200,000 points against a 1200-edge window in 14 ms against 804 ms
    /// with `geo`, and 0.1–1.7 µs per point on saw-tooth outlines of 10⁴ to
    /// 10⁶ corners (shared machine, load average 6–8).
    pub fn contains(&self, x: f64, y: f64) -> bool {
        let t = self.tol;
        let b = self.bbox;
        // Written so that NaN fails every comparison.
        if !(x >= b[0] - t && x <= b[2] + t && y >= b[1] - t && y <= b[3] + t) {
            return false;
        }
        // A rectangle is its box (with the tolerance): nothing more to test.
        self.rect.is_some() || self.grid.contains(&self.edges, x, y, t)
    }
    /// Distance to the nearest boundary (outer rings and holes), whether the
    /// point is inside or outside; NaN for a non-finite point. Windows with
    /// Searches the edge grid outward from the point.
    pub fn boundary_distance(&self, x: f64, y: f64) -> f64 {
        if !(x.is_finite() && y.is_finite()) {
            return f64::NAN;
        }
        self.grid.min_dist2(&self.edges, x, y).sqrt()
    }
    /// All boundary edges (outer rings and holes), directed so that the
    /// inside is on their left; indices are stable (ring order).
    pub fn edges(&self) -> &[Edge] {
        &self.edges
    }
    /// Bytes the window holds on the heap (rings, edges and the edge grid),
    /// for the memory figures of `examples/bench_window.rs`.
    pub fn heap_bytes(&self) -> usize {
        let rings: usize = self
            .polygons
            .iter()
            .map(|p| p.iter().map(|r| r.capacity() * 16).sum::<usize>())
            .sum();
        rings + self.edges.capacity() * std::mem::size_of::<Edge>() + self.grid.heap_bytes()
    }
    /// What was repaired when the window was built (overlapping parts
    /// merged), in plain words.
    pub fn notes(&self) -> &[String] {
        &self.notes
    }
    /// Boundary edges as segments.
    pub fn segments(&self) -> impl Iterator<Item = ([f64; 2], [f64; 2])> + '_ {
        self.edges.iter().map(|e| (e.a, e.b))
    }
    /// `Some([x0, y0, x1, y1])` when the window is one axis-aligned
    /// rectangle (fast paths: sampling, translation correction, Donnelly's
    /// Clark–Evans correction).
    pub fn axis_rectangle(&self) -> Option<[f64; 4]> {
        self.rect
    }
    /// Indices (sorted) of the edges within distance `r` of (x, y): the
    /// edges a circle of radius r about the point can cross, from the edge
    /// grid.
    pub fn edges_near(&self, x: f64, y: f64, r: f64) -> Vec<u32> {
        self.grid.edges_near(&self.edges, x, y, r)
    }
    /// One uniform point in the window: proposals uniform on the bounding
    /// box, kept when [`Window::contains`] is true (every proposal is kept
    /// for a rectangle).
    #[inline]
    pub fn sample_one(&self, rng: &mut Rng) -> (f64, f64) {
        let [x0, y0, x1, y1] = self.bbox;
        loop {
            let x = x0 + (x1 - x0) * rng.random::<f64>();
            let y = y0 + (y1 - y0) * rng.random::<f64>();
            if self.rect.is_some() || self.contains(x, y) {
                return (x, y);
            }
        }
    }

    /// `n` independent uniform points in the window (binomial process).
    ///
    /// # Algorithm
    /// Rejection sampling (docs/methods.md#csr): a proposal uniform on the bounding
    /// box is kept when [`Window::contains`] is true; kept points are then
    /// uniform on the window. Two draws per proposal (x then y), so a seed
    /// gives the same points in every analysis that simulates. The number
    /// of proposals per point is geometric with mean (box area)/(window
    /// area).
    pub fn sample_uniform(&self, n: usize, rng: &mut Rng) -> (Vec<f64>, Vec<f64>) {
        let mut xs = Vec::with_capacity(n);
        let mut ys = Vec::with_capacity(n);
        for _ in 0..n {
            let (x, y) = self.sample_one(rng);
            xs.push(x);
            ys.push(y);
        }
        (xs, ys)
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::rng::rng_from_seed;

    /// The unit square [0, 1]².
    pub fn unit_square() -> Window {
        Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap()
    }

    /// docs/methods.md#fixtures "WH": [0,10]² minus the hole [4,6]².
    pub fn wh() -> Window {
        Window::rectangle_with_hole([0.0, 0.0, 10.0, 10.0], [4.0, 4.0, 6.0, 6.0]).unwrap()
    }

    #[test]
    fn test_window_with_hole_area() {
        let w = wh();
        assert_eq!(w.area(), 96.0);
        assert_eq!(w.perimeter(), 48.0);
        assert_eq!(w.bbox(), [0.0, 0.0, 10.0, 10.0]);
        assert_eq!(w.edges().len(), 8);
    }

    #[test]
    fn test_window_orientation_and_closing() {
        let w = wh();
        let rings = &w.polygons()[0];
        assert_eq!(rings[0].first(), rings[0].last());
        assert!(signed_area2(&rings[0][..rings[0].len() - 1]) > 0.0);
        assert!(signed_area2(&rings[1][..rings[1].len() - 1]) < 0.0);
        assert_eq!(rings[1].len(), 5);
    }

    #[test]
    fn test_window_contains_hole_and_boundary() {
        let w = wh();
        assert!(w.contains(1.0, 1.0));
        assert!(!w.contains(5.0, 5.0));
        assert!(w.contains(4.0, 5.0)); // on the hole's edge
        assert!(w.contains(0.0, 0.0)); // corner
        assert!(w.contains(10.0, 3.0)); // outer edge
        assert!(!w.contains(10.000001, 3.0));
        assert!(!w.contains(f64::NAN, 3.0));
        assert_eq!(w.boundary_distance(3.0, 5.0), 1.0);
        assert_eq!(w.boundary_distance(5.0, 5.0), 1.0);
        assert_eq!(w.boundary_distance(12.0, 5.0), 2.0);
    }

    /// Points computed on a slanted edge far from the origin (UTM-like
    /// coordinates) are inside; 1 mm outward they are outside.
    #[test]
    fn test_contains_edge_points_large_coordinates() {
        let (a, b) = ([500_123.25, 5_000_017.5], [501_377.75, 5_000_911.125]);
        let w = Window::from_polygons(
            vec![vec![vec![a, b, [500_100.0, 5_001_500.0]]]],
            WindowOrigin::File,
        )
        .unwrap();
        let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
        let len = dx.hypot(dy);
        // Outward normal of a counter-clockwise ring's edge a→b is (dy, −dx)/len.
        let (ox, oy) = (dy / len * 1e-3, -dx / len * 1e-3);
        for k in 0..=100 {
            let t = k as f64 / 100.0;
            let (x, y) = (a[0] + t * dx, a[1] + t * dy);
            assert!(w.contains(x, y), "t = {t}");
            assert!(!w.contains(x + ox, y + oy), "t = {t} outside");
        }
        assert!(w.boundary_tolerance() < 1e-5);
    }

    #[test]
    fn test_window_rejects_bad_rings() {
        let e = Window::from_polygons(
            vec![vec![vec![[0.0, 0.0], [1.0, 1.0], [0.0, 0.0]]]],
            WindowOrigin::File,
        );
        assert!(matches!(
            e.unwrap_err().kind,
            InputErrorKind::BadPolygon { .. }
        ));
        let e = Window::from_polygons(
            vec![vec![vec![[0.0, 0.0], [1.0, 1.0], [2.0, 2.0], [0.0, 0.0]]]],
            WindowOrigin::File,
        );
        assert!(e.unwrap_err().to_string().contains("zero area"));
        let e = Window::from_polygons(
            vec![vec![vec![[0.0, 0.0], [1.0, f64::NAN], [2.0, 2.0]]]],
            WindowOrigin::File,
        );
        assert!(e.unwrap_err().to_string().contains("corner 2"));
        assert!(Window::from_polygons(vec![], WindowOrigin::File).is_err());
        let e = Window::from_polygons(
            vec![vec![
                vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
                vec![[8.0, 8.0], [12.0, 8.0], [12.0, 9.0]],
            ]],
            WindowOrigin::File,
        );
        assert!(e
            .unwrap_err()
            .to_string()
            .contains("hole 1: its corner (12, 9) lies outside the outer ring"));
        let e = Window::from_polygons(
            vec![vec![
                vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
                vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
            ]],
            WindowOrigin::File,
        );
        assert!(e.unwrap_err().to_string().contains("holes cover all"));
        assert!(Window::from_polygons(vec![vec![]], WindowOrigin::File).is_err());
    }

    #[test]
    fn test_multipolygon_area_and_contains() {
        let w = Window::from_polygons(
            vec![
                vec![vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]]],
                vec![vec![[2.0, 0.0], [2.0, 2.0], [4.0, 2.0], [4.0, 0.0]]],
            ],
            WindowOrigin::File,
        )
        .unwrap();
        assert_eq!(w.area(), 5.0);
        assert_eq!(w.perimeter(), 12.0);
        assert!(w.contains(0.5, 0.5) && w.contains(3.0, 1.0) && !w.contains(1.5, 0.5));
    }

    #[test]
    fn test_bounding_box_and_hull() {
        let x = [0.0, 2.0, 1.0, 2.0, 0.0, 1.0];
        let y = [0.0, 0.0, 0.5, 3.0, 3.0, 1.0];
        let b = Window::bounding_box_of(&x, &y).unwrap();
        assert_eq!(b.area(), 6.0);
        assert_eq!(b.origin(), WindowOrigin::BoundingBox);
        let h = Window::convex_hull_of(&x, &y).unwrap();
        assert_eq!(h.area(), 6.0);
        assert_eq!(h.polygons()[0][0].len(), 5);
        assert_eq!(h.origin(), WindowOrigin::ConvexHull);
        // A triangle hull with interior and collinear edge points.
        let h =
            Window::convex_hull_of(&[0.0, 4.0, 0.0, 1.0, 2.0], &[0.0, 0.0, 4.0, 1.0, 0.0]).unwrap();
        assert_eq!(h.area(), 8.0);
        assert_eq!(h.polygons()[0][0].len(), 4);
    }

    #[test]
    fn test_hull_degenerate_inputs() {
        for (x, y) in [
            (vec![], vec![]),
            (vec![1.0], vec![1.0]),
            (vec![1.0, 1.0, 1.0], vec![2.0, 2.0, 2.0]),
            (vec![0.0, 1.0, 2.0, 3.0], vec![0.0, 1.0, 2.0, 3.0]),
        ] {
            let e = Window::convex_hull_of(&x, &y).unwrap_err();
            assert!(e.to_string().contains("one straight line"));
            // A box around points on a diagonal line still has area.
            assert_eq!(Window::bounding_box_of(&x, &y).is_err(), x.len() < 4);
        }
    }

    #[test]
    fn test_many_vertex_polygon_uses_bands() {
        // Regular 1000-gon of radius 1: area (n/2) sin(2π/n).
        let n = 1000;
        let ring: Vec<[f64; 2]> = (0..n)
            .map(|k| {
                let t = 2.0 * std::f64::consts::PI * k as f64 / n as f64;
                [t.cos(), t.sin()]
            })
            .collect();
        let w = Window::from_polygons(vec![vec![ring]], WindowOrigin::File).unwrap();
        assert!(w.grid.nx * w.grid.ny > 1);
        let want = n as f64 / 2.0 * (2.0 * std::f64::consts::PI / n as f64).sin();
        assert!((w.area() - want).abs() < 1e-12);
        let mut rng = rng_from_seed(7);
        for _ in 0..20000 {
            let x = rng.random::<f64>() * 2.2 - 1.1;
            let y = rng.random::<f64>() * 2.2 - 1.1;
            let r = x.hypot(y);
            // The polygon lies between radius cos(π/n) and 1.
            if r < 0.99999 {
                assert!(w.contains(x, y));
            } else if r > 1.0 {
                assert!(!w.contains(x, y));
            }
        }
    }

    /// A 1000 m × 600 m rectangle with a 300-vertex wiggly hole: enough
    /// edges for the edge grid to have several cells.
    fn wiggly_hole() -> Window {
        let hole: Vec<[f64; 2]> = (0..300)
            .map(|k| {
                let t = 2.0 * std::f64::consts::PI * k as f64 / 300.0;
                let r = 200.0 * (1.0 + 0.2 * (11.0 * t).sin());
                [500.0 + r * t.cos(), 300.0 + r * t.sin()]
            })
            .collect();
        let outer = vec![[0.0, 0.0], [1000.0, 0.0], [1000.0, 600.0], [0.0, 600.0]];
        Window::from_polygons(vec![vec![outer, hole]], WindowOrigin::File).unwrap()
    }

    /// The edge grid gives the same distance as a scan of every edge, for a
    /// long-edged rectangle with a 300-vertex wiggly hole, at points inside,
    /// in the hole and far outside.
    #[test]
    fn test_boundary_distance_grid_matches_scan() {
        let w = wiggly_hole();
        assert!(w.grid.nx * w.grid.ny > 1);
        let edges = w.edges();
        let mut rng = rng_from_seed(5);
        for _ in 0..5000 {
            let x = rng.random::<f64>() * 3000.0 - 1000.0;
            let y = rng.random::<f64>() * 2000.0 - 700.0;
            let scan = edges
                .iter()
                .map(|e| seg_dist2(x, y, e.a, e.b))
                .fold(f64::INFINITY, f64::min);
            assert_eq!(w.boundary_distance(x, y), scan.sqrt(), "({x}, {y})");
        }
        assert!(w.boundary_distance(f64::NAN, 0.0).is_nan());
    }

    /// docs/methods.md#csr check values: |W| = 96, mean (5, 5), none in the hole,
    /// P(x < 2) = 20/96; tolerance 4 standard errors.
    #[test]
    fn test_sample_uniform_in_window_with_hole() {
        let w = wh();
        let mut rng = rng_from_seed(20260311);
        let n = 200_000;
        let (x, y) = w.sample_uniform(n, &mut rng);
        assert_eq!(x.len(), n);
        let nf = n as f64;
        let mx = x.iter().sum::<f64>() / nf;
        let my = y.iter().sum::<f64>() / nf;
        // Var of x under uniform on W: E[x²] − 25 with E[x²] = (10·1000/3 − 2·(216−64)/3)/96.
        let ex2 = (10.0 * 1000.0 / 3.0 - 2.0 * (216.0 - 64.0) / 3.0) / 96.0;
        let se = ((ex2 - 25.0) / nf).sqrt();
        assert!((mx - 5.0).abs() < 4.0 * se, "mean x {mx}, se {se}");
        assert!((my - 5.0).abs() < 4.0 * se, "mean y {my}");
        assert!(x
            .iter()
            .zip(&y)
            .all(|(&a, &b)| !(a > 4.0 && a < 6.0 && b > 4.0 && b < 6.0)));
        let p = 20.0 / 96.0;
        let frac = x.iter().filter(|&&a| a < 2.0).count() as f64 / nf;
        assert!(
            (frac - p).abs() < 4.0 * (p * (1.0 - p) / nf).sqrt(),
            "P(x<2) {frac}"
        );
    }

    /// A thin L-shaped window (acceptance < 25 %) uses the cell cover; the
    /// fraction of points in each arm must match its share of the area.
    #[test]
    fn test_sample_uniform_thin_window() {
        let w = Window::from_polygons(
            vec![vec![vec![
                [0.0, 0.0],
                [100.0, 0.0],
                [100.0, 1.0],
                [1.0, 1.0],
                [1.0, 100.0],
                [0.0, 100.0],
            ]]],
            WindowOrigin::File,
        )
        .unwrap();
        assert_eq!(w.area(), 199.0);
        let mut rng = rng_from_seed(3);
        let n = 100_000;
        let (x, y) = w.sample_uniform(n, &mut rng);
        assert!(x.iter().zip(&y).all(|(&a, &b)| w.contains(a, b)));
        // Horizontal arm y < 1 has area 100 of 199.
        let p = 100.0 / 199.0;
        let frac = y.iter().filter(|&&b| b < 1.0).count() as f64 / n as f64;
        assert!(
            (frac - p).abs() < 4.0 * (p * (1.0 - p) / n as f64).sqrt(),
            "{frac}"
        );
        // Uniform along the arm: mean x of points in the horizontal arm (x ≥ 1) = 50.5.
        let arm: Vec<f64> = x
            .iter()
            .zip(&y)
            .filter(|(&a, &b)| b < 1.0 && a >= 1.0)
            .map(|(&a, _)| a)
            .collect();
        let m = arm.iter().sum::<f64>() / arm.len() as f64;
        let se = (99.0f64.powi(2) / 12.0 / arm.len() as f64).sqrt();
        assert!((m - 50.5).abs() < 4.0 * se, "{m}");
    }

    #[test]
    fn test_sample_zero_points() {
        let mut rng = rng_from_seed(1);
        assert_eq!(wh().sample_uniform(0, &mut rng).0.len(), 0);
    }

    #[test]
    fn test_region_area_perimeter_hole() {
        // |W| = 100 − 4 = 96 and P = 40 + 8 (hole included), docs/methods.md#fixtures WH.
        let w = wh();
        assert!((w.area() - 96.0).abs() < 1e-12);
        assert!((w.perimeter() - 48.0).abs() < 1e-12);
        assert!(w.axis_rectangle().is_none());
        assert!(unit_square().axis_rectangle().is_some());
        assert!(!w.contains(5.0, 5.0));
        assert!(w.contains(3.0, 5.0));
        assert!(w.contains(4.0, 5.0)); // on the hole boundary counts as inside
        assert!(!w.contains(10.5, 5.0));
    }

    #[test]
    fn test_boundary_distance_oracle() {
        let w = wh();
        let mut rng = crate::rng::rng_from_seed(5);
        for _ in 0..500 {
            let (x, y) = w.sample_one(&mut rng);
            let brute = w
                .edges()
                .iter()
                .map(|e| e.distance_sq(x, y).sqrt())
                .fold(f64::INFINITY, f64::min);
            assert!((w.boundary_distance(x, y) - brute).abs() < 1e-12);
        }
    }

    /// Rectangle fast path: only a single axis-parallel ring that fills its
    /// box is a rectangle; a rotated square, a square with a hole, two
    /// rectangles and a five-corner ring with a collinear corner are not.
    #[test]
    fn test_rectangle_detection() {
        let r = Window::rectangle(2.0, 3.0, 7.0, 4.0).unwrap();
        assert_eq!(r.axis_rectangle(), Some([2.0, 3.0, 7.0, 4.0]));
        let diamond = Window::from_polygons(
            vec![vec![vec![[1.0, 0.0], [2.0, 1.0], [1.0, 2.0], [0.0, 1.0]]]],
            WindowOrigin::File,
        )
        .unwrap();
        assert_eq!(diamond.axis_rectangle(), None);
        assert_eq!(wh().axis_rectangle(), None);
        let two = Window::from_polygons(
            vec![
                vec![vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]]],
                vec![vec![[2.0, 0.0], [3.0, 0.0], [3.0, 1.0], [2.0, 1.0]]],
            ],
            WindowOrigin::File,
        )
        .unwrap();
        assert_eq!(two.axis_rectangle(), None);
        let five = Window::from_polygons(
            vec![vec![vec![
                [0.0, 0.0],
                [1.0, 0.0],
                [2.0, 0.0],
                [2.0, 1.0],
                [0.0, 1.0],
            ]]],
            WindowOrigin::File,
        )
        .unwrap();
        assert_eq!(five.axis_rectangle(), None);
        // Sampling a rectangle keeps every proposal: the same points as
        // drawing x and y uniformly on the box.
        let mut a = rng_from_seed(9);
        let mut b = rng_from_seed(9);
        let (x, y) = r.sample_uniform(50, &mut a);
        for i in 0..50 {
            assert_eq!(x[i], 2.0 + 5.0 * b.random::<f64>());
            assert_eq!(y[i], 3.0 + 1.0 * b.random::<f64>());
        }
    }

    /// Edges near a point, with and without the edge grid, match a scan of
    /// every edge; indices are sorted and refer to `edges()`.
    #[test]
    fn test_edges_near_matches_scan() {
        let big = wiggly_hole();
        assert!(big.grid.nx * big.grid.ny > 4 && wh().grid.nx * wh().grid.ny <= 4);
        let mut rng = rng_from_seed(6);
        for w in [big, wh()] {
            let [x0, y0, x1, y1] = w.bbox();
            for _ in 0..2000 {
                let x = x0 + (x1 - x0) * rng.random::<f64>();
                let y = y0 + (y1 - y0) * rng.random::<f64>();
                let r = 0.3 * (x1 - x0) * rng.random::<f64>();
                let want: Vec<u32> = (0..w.edges().len() as u32)
                    .filter(|&k| w.edges()[k as usize].distance_sq(x, y) <= r * r)
                    .collect();
                assert_eq!(w.edges_near(x, y, r), want, "({x}, {y}) r = {r}");
            }
        }
    }

    /// Every edge has the inside on its left: a point a little to the left
    /// of each edge's midpoint is inside, a little to the right is outside
    /// (for the hole's edges too).
    #[test]
    fn test_edges_inside_on_the_left() {
        let w = wh();
        for e in w.edges() {
            let (mx, my) = (0.5 * (e.a[0] + e.b[0]), 0.5 * (e.a[1] + e.b[1]));
            let (dx, dy) = (e.b[0] - e.a[0], e.b[1] - e.a[1]);
            let len = dx.hypot(dy);
            let (lx, ly) = (-dy / len * 0.01, dx / len * 0.01);
            assert!(w.contains(mx + lx, my + ly));
            assert!(!w.contains(mx - lx, my - ly));
        }
    }

    /// A saw-tooth outline: base [0, n] at y = 0, then n teeth of height h
    /// (apex at y = h, valleys at y = 1). Area n·(1 + (h − 1)/2).
    pub fn saw_tooth(n: usize, h: f64) -> Vec<[f64; 2]> {
        let mut r = vec![[0.0, 0.0], [n as f64, 0.0]];
        for k in (0..n).rev() {
            r.push([k as f64 + 1.0, 1.0]);
            r.push([k as f64 + 0.5, h]);
        }
        r.push([0.0, 1.0]);
        r
    }

    /// Even-odd over every edge, with the boundary tolerance: the plain ray
    /// test the grid must agree with.
    fn scan_contains(w: &Window, x: f64, y: f64) -> bool {
        let t = w.boundary_tolerance();
        let mut odd = false;
        for e in w.edges() {
            if e.distance_sq(x, y) <= t * t {
                return true;
            }
            let (a, b) = (e.a, e.b);
            if (a[1] > y) != (b[1] > y) && x < a[0] + (y - a[1]) * (b[0] - a[0]) / (b[1] - a[1]) {
                odd = !odd;
            }
        }
        odd
    }

    /// The grid's containment agrees with a scan of every edge on a
    /// saw-tooth (long thin teeth, integer and half-integer corners) and on
    /// the wiggly hole, at random points and at points on the integer and
    /// half-integer lattice (through corners and along grid-aligned lines).
    #[test]
    fn test_grid_contains_matches_scan() {
        let teeth =
            Window::from_polygons(vec![vec![saw_tooth(300, 40.0)]], WindowOrigin::File).unwrap();
        assert_eq!(teeth.area(), 300.0 * (1.0 + 39.0 / 2.0));
        let wiggly = wiggly_hole();
        let mut rng = rng_from_seed(11);
        for w in [teeth, wiggly, wh()] {
            let [x0, y0, x1, y1] = w.bbox();
            for _ in 0..20000 {
                let x = x0 - 1.0 + (x1 - x0 + 2.0) * rng.random::<f64>();
                let y = y0 - 1.0 + (y1 - y0 + 2.0) * rng.random::<f64>();
                assert_eq!(w.contains(x, y), scan_contains(&w, x, y), "({x}, {y})");
            }
            let (mut x, step) = (x0.floor() - 1.0, ((x1 - x0) / 400.0).max(0.5));
            while x <= x1 + 1.0 {
                let mut y = y0.floor() - 1.0;
                while y <= y1 + 1.0 {
                    assert_eq!(w.contains(x, y), scan_contains(&w, x, y), "({x}, {y})");
                    y += 0.5;
                }
                x += step.round().max(0.5);
            }
        }
    }

    /// A 10,000-tooth saw-tooth (20,003 corners) builds with O(edges)
    /// entries in its grid (the former horizontal bands listed every tooth
    /// in almost every band: 2·10⁸ entries) and answers like a scan.
    #[test]
    fn test_saw_tooth_grid_is_linear() {
        let w =
            Window::from_polygons(vec![vec![saw_tooth(10_000, 10.0)]], WindowOrigin::File).unwrap();
        let n = w.edges().len();
        assert_eq!(n, 20_003);
        assert!(w.grid.idx.len() <= 12 * n, "{} entries", w.grid.idx.len());
        assert!(w.grid.nx * w.grid.ny <= 4 * n + 200);
        assert_eq!(w.area(), 10_000.0 * 5.5);
        let mut rng = rng_from_seed(12);
        for _ in 0..2000 {
            let x = -1.0 + 10_002.0 * rng.random::<f64>();
            let y = -1.0 + 12.0 * rng.random::<f64>();
            assert_eq!(w.contains(x, y), scan_contains(&w, x, y), "({x}, {y})");
        }
    }

    /// Found by fuzzing (fuzz/fuzz_targets/study_area.rs): a ring reaching
    /// −1.5e308 made the edge grid's cell count overflow (a panic, which in
    /// the page traps the engine). Now refused with a message.
    #[test]
    fn absurd_coordinates_are_refused_not_a_panic() {
        let ring = vec![
            [2.7813421638307e-310, 1.3610613628e-312],
            [-1.5280389948396637e308, -5.78078893066056e303],
            [1.7957041440046263e-307, 7.233271810412616e-304],
        ];
        let e = Window::from_polygons(vec![vec![ring]], WindowOrigin::File).unwrap_err();
        assert!(e.to_string().contains("farther than"), "{e}");
        let big = vec![[0.0, 0.0], [2e9, 0.0], [0.0, 2e9]];
        assert!(Window::from_polygons(vec![vec![big]], WindowOrigin::File).is_err());
        let fine = vec![[0.0, 0.0], [4e7, 0.0], [0.0, 4e7]];
        assert!(Window::from_polygons(vec![vec![fine]], WindowOrigin::File).is_ok());
    }
}
