//! Counts per square or hexagonal cell, or per zone, with population and rates.
//!
//! Aggregating is the other way to share: counts per area instead of points.
//! Counts here are raw (unsuppressed) and stay in the page; pass them through
//! [`super::suppress::suppress`] before anything leaves.
//!
//! # Cells
//! * **Square**: side `cell_size_m`; the grid starts at `origin` (default the
//!   lower-left corner of the study area's bounding box). Row 0 is the bottom
//!   row, column 0 the left column. A point on a shared edge goes to the cell
//!   above / to the right (cells are [x0, x0+s) × [y0, y0+s)).
//! * **Hexagon**: `cell_size_m` is the side length, which equals the distance
//!   from the centre to a corner (the circumradius R); the cell area is
//!   (3√3/2)·R².
//!   * *Pointy-topped* (default): corners up and down; the hexagons sit in
//!     horizontal rows 1.5·R apart, √3·R wide, odd rows shifted right by half
//!     a width.
//!   * *Flat-topped*: flat edges up and down; vertical columns 1.5·R apart,
//!     √3·R tall, odd columns shifted up by half a height.
//!   * A point goes to the hexagon with the nearest centre.
//!   * Rows and columns are those offset rows and columns: they are the lines
//!     whose totals the suppression step protects.
//! * A cell is `in_area` when its centre, a corner or an edge midpoint lies in
//!   the study area, or a study-area vertex lies in the cell.
//!
//! # Zones
//! Already-projected polygons (metres) with names, an optional population and
//! an optional group name; a point is counted in the first zone containing it
//! (boundary included); points in no zone are counted in `outside`.
//!
//! # Population
//! Per cell: the population layer's points counted like the events. Per zone:
//! the zone's `population` when every zone has one, else layer points counted.

use super::bad;
use crate::error::AnalysisError;
use crate::window::{Window, WindowOrigin};
use serde::{Deserialize, Serialize};

/// Most cells a grid may have.
pub const MAX_CELLS: usize = 250_000;

/// Cell shape.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CellShape {
    #[default]
    Square,
    Hexagon,
}

/// Which way hexagons point (see module docs).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum HexOrientation {
    #[default]
    PointyTop,
    FlatTop,
}

/// Grid settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct AggregateParams {
    pub shape: CellShape,
    pub cell_size_m: f64,
    pub orientation: HexOrientation,
    /// Grid origin in metres; default the study area's lower-left corner.
    pub origin: Option<[f64; 2]>,
}

impl Default for AggregateParams {
    fn default() -> Self {
        AggregateParams {
            shape: CellShape::Square,
            cell_size_m: 1000.0,
            orientation: HexOrientation::PointyTop,
            origin: None,
        }
    }
}

/// How `aggregate` lays out its areas.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum AggregateLayout {
    #[default]
    Square,
    Hexagon,
    Zones,
}

/// The options of `aggregate` (counts per cell or zone, then suppression)
/// as the JS API takes them: the one home of their defaults and limits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct AggregateOptions {
    pub layout: AggregateLayout,
    /// Side of a square, or distance between opposite sides of a hexagon, m.
    pub cell_size_m: f64,
    pub orientation: HexOrientation,
    /// The zones file (GeoJSON polygons), for layout `zones`; passed as bytes.
    #[serde(skip)]
    pub zones: Option<Vec<u8>>,
    pub zone_name_property: Option<String>,
    pub zone_population_property: Option<String>,
    pub zone_group_property: Option<String>,
    pub min_count: u64,
    pub suppress_zeros: bool,
    pub publish_row_column_totals: bool,
    pub rate_per: f64,
    pub rate_min_population: f64,
    pub rate_unreliable_below: u64,
}

impl Default for AggregateOptions {
    fn default() -> Self {
        let g = AggregateParams::default();
        let s = super::suppress::SuppressionParams::default();
        AggregateOptions {
            layout: AggregateLayout::Square,
            cell_size_m: g.cell_size_m,
            orientation: g.orientation,
            zones: None,
            zone_name_property: None,
            zone_population_property: None,
            zone_group_property: None,
            min_count: s.min_count,
            suppress_zeros: s.suppress_zeros,
            publish_row_column_totals: s.publish_row_column_totals,
            rate_per: s.rate_per,
            rate_min_population: s.rate_min_population,
            rate_unreliable_below: s.rate_unreliable_below,
        }
    }
}

impl AggregateOptions {
    /// The settings of the suppression step.
    pub fn suppression(&self) -> super::suppress::SuppressionParams {
        super::suppress::SuppressionParams {
            min_count: self.min_count,
            suppress_zeros: self.suppress_zeros,
            publish_row_column_totals: self.publish_row_column_totals,
            rate_per: self.rate_per,
            rate_min_population: self.rate_min_population,
            rate_unreliable_below: self.rate_unreliable_below,
            ..Default::default()
        }
    }
}

impl crate::params::Params for AggregateOptions {
    const NAME: &'static str = "aggregate";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::{Field, EXTENT_FACTOR};
        vec![
            Field::choice(
                "layout",
                &["square", "hexagon", "zones"],
                "cells or the zones of a file",
            ),
            Field::number(
                "cell_size_m",
                Some("m"),
                "side of a square; distance between opposite sides of a hexagon",
            )
            .scale_length(EXTENT_FACTOR),
            Field::choice(
                "orientation",
                &["pointy_top", "flat_top"],
                "orientation of hexagons",
            ),
            Field::bytes(
                "zones",
                "the zones file (GeoJSON polygons) for layout zones",
            )
            .optional(),
            Field::text(
                "zone_name_property",
                "property naming each zone; empty = detect",
            )
            .optional(),
            Field::text(
                "zone_population_property",
                "property with each zone's population",
            )
            .optional(),
            Field::text(
                "zone_group_property",
                "property grouping zones for published subtotals",
            )
            .optional(),
            Field::integer("min_count", "counts from 1 to min_count − 1 are hidden")
                .range(1.0, 1000.0),
            Field::boolean("suppress_zeros", "hide zero counts too"),
            Field::boolean(
                "publish_row_column_totals",
                "publish row and column totals of the grid",
            ),
            Field::number("rate_per", None, "rates are given per this many people")
                .above(0.0, Some(1e9)),
            Field::number("rate_min_population", None, "no rate below this population")
                .range(0.0, 1e12),
            Field::integer(
                "rate_unreliable_below",
                "rates from fewer events are marked unreliable",
            )
            .range(0.0, 1e6),
        ]
    }
}

/// A zone to count in.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Zone {
    pub name: String,
    /// Polygons: exterior ring first, then holes; metres.
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    #[serde(default)]
    pub population: Option<f64>,
    /// Zones sharing a group name have their subtotal published.
    #[serde(default)]
    pub group: Option<String>,
}

/// One cell or zone with its raw count.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Cell {
    pub id: String,
    pub row: Option<i64>,
    pub col: Option<i64>,
    /// Multipolygon in metres (one polygon, one ring for grid cells).
    pub geometry: Vec<Vec<Vec<[f64; 2]>>>,
    pub count: u64,
    pub population: Option<f64>,
    pub in_area: bool,
}

/// A set of cells whose total is published (a row, a column, a zone group,
/// the grand total).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Line {
    pub name: String,
    pub kind: LineKind,
    pub cells: Vec<usize>,
}

/// What a published total sums.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum LineKind {
    Row,
    Column,
    Group,
    Grand,
}

/// How the cells were laid out.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "layout", rename_all = "snake_case")]
pub enum Layout {
    Grid {
        shape: CellShape,
        orientation: Option<HexOrientation>,
        cell_size_m: f64,
        origin: [f64; 2],
        rows: usize,
        cols: usize,
    },
    Zones {
        zones: usize,
    },
}

/// Raw counts per cell (internal: suppress before sharing).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Aggregation {
    pub layout: Layout,
    pub cells: Vec<Cell>,
    /// Lines whose totals may be published: rows, columns, groups, grand.
    pub lines: Vec<Line>,
    /// Events in no cell or zone.
    pub outside: u64,
    pub total: u64,
}

const SQRT3: f64 = 1.732_050_807_568_877_2;

/// Offset (row, col) of the hexagon holding (x, y), relative to the origin.
pub fn hex_index(x: f64, y: f64, r: f64, o: HexOrientation) -> (i64, i64) {
    let (q, s) = match o {
        HexOrientation::PointyTop => ((SQRT3 / 3.0 * x - y / 3.0) / r, (2.0 / 3.0 * y) / r),
        HexOrientation::FlatTop => ((2.0 / 3.0 * x) / r, (-x / 3.0 + SQRT3 / 3.0 * y) / r),
    };
    // Cube rounding (axial q, r; third coordinate −q−r).
    let t = -q - s;
    let (mut rq, mut rs, rt) = (q.round(), s.round(), t.round());
    let (dq, ds, dt) = ((rq - q).abs(), (rs - s).abs(), (rt - t).abs());
    if dq > ds && dq > dt {
        rq = -rs - rt;
    } else if ds > dt {
        rs = -rq - rt;
    }
    let (aq, ar) = (rq as i64, rs as i64);
    match o {
        // odd-r offset: rows are axial r
        HexOrientation::PointyTop => (ar, aq.saturating_add((ar - (ar & 1)) / 2)),
        // odd-q offset: columns are axial q
        HexOrientation::FlatTop => (ar.saturating_add((aq - (aq & 1)) / 2), aq),
    }
}

/// Centre of hexagon (row, col) relative to the origin.
pub fn hex_centre(row: i64, col: i64, r: f64, o: HexOrientation) -> [f64; 2] {
    match o {
        HexOrientation::PointyTop => [
            r * SQRT3 * (col as f64 + 0.5 * (row & 1) as f64),
            1.5 * r * row as f64,
        ],
        HexOrientation::FlatTop => [
            1.5 * r * col as f64,
            r * SQRT3 * (row as f64 + 0.5 * (col & 1) as f64),
        ],
    }
}

/// The six corners (closed ring, counter-clockwise) of a hexagon.
pub fn hex_ring(c: [f64; 2], r: f64, o: HexOrientation) -> Vec<[f64; 2]> {
    let start = match o {
        HexOrientation::PointyTop => 30.0f64,
        HexOrientation::FlatTop => 0.0,
    };
    let mut ring: Vec<[f64; 2]> = (0..6)
        .map(|i| {
            let a = (start + 60.0 * i as f64).to_radians();
            [c[0] + r * a.cos(), c[1] + r * a.sin()]
        })
        .collect();
    ring.push(ring[0]);
    ring
}

fn cell_in_area(ring: &[[f64; 2]], region: &Window, region_vertices: &[[f64; 2]]) -> bool {
    let n = ring.len() - 1;
    let mut cx = 0.0;
    let mut cy = 0.0;
    for v in &ring[..n] {
        cx += v[0];
        cy += v[1];
    }
    if region.contains(cx / n as f64, cy / n as f64) {
        return true;
    }
    for i in 0..n {
        let (a, b) = (ring[i], ring[i + 1]);
        if region.contains(a[0], a[1]) || region.contains(0.5 * (a[0] + b[0]), 0.5 * (a[1] + b[1]))
        {
            return true;
        }
    }
    // A study area smaller than a cell: one of its corners lies in the cell
    // (boundary included; `geo`'s exact orientation test).
    use geo::Intersects;
    let cell = geo::Polygon::new(
        ring.iter()
            .map(|p| geo::Coord { x: p[0], y: p[1] })
            .collect(),
        vec![],
    );
    region_vertices
        .iter()
        .any(|v| cell.intersects(&geo::Coord { x: v[0], y: v[1] }))
}

fn check_xy(x: &[f64], y: &[f64], what: &str) -> Result<(), AnalysisError> {
    if x.len() != y.len() {
        return Err(bad(what, "x and y have different lengths"));
    }
    if x.iter().chain(y).any(|v| !v.is_finite()) {
        return Err(bad(what, "a coordinate is not a finite number"));
    }
    Ok(())
}

/// Counts events (and population points) per square or hexagonal cell over
/// the bounding box of the study area (and of the points, if any fall outside).
pub fn aggregate_grid(
    x: &[f64],
    y: &[f64],
    region: &Window,
    region_vertices: &[[f64; 2]],
    population: Option<(&[f64], &[f64])>,
    p: &AggregateParams,
) -> Result<Aggregation, AnalysisError> {
    check_xy(x, y, "events")?;
    if let Some((px, py)) = population {
        check_xy(px, py, "population")?;
    }
    let s = p.cell_size_m;
    if !(s.is_finite() && s > 0.0) {
        return Err(bad("cell size", "must be a number > 0 (metres)"));
    }
    let mut b = region.bbox();
    for (&a, &c) in x.iter().zip(y) {
        b = [b[0].min(a), b[1].min(c), b[2].max(a), b[3].max(c)];
    }
    if !b.iter().all(|v| v.is_finite()) {
        return Err(bad("study area", "has no finite extent"));
    }
    let origin = p.origin.unwrap_or([b[0], b[1]]);
    if !(origin[0].is_finite() && origin[1].is_finite()) {
        return Err(bad("grid origin", "must be finite"));
    }
    // Index of a point: (row, col).
    let locate = |px: f64, py: f64| -> (i64, i64) {
        let (dx, dy) = (px - origin[0], py - origin[1]);
        match p.shape {
            CellShape::Square => ((dy / s).floor() as i64, (dx / s).floor() as i64),
            CellShape::Hexagon => hex_index(dx, dy, s, p.orientation),
        }
    };
    // Row/column range from the bbox corners and all points, one cell margin
    // for hexagons (their rows/columns interleave).
    let mut r0 = i64::MAX;
    let mut r1 = i64::MIN;
    let mut c0 = i64::MAX;
    let mut c1 = i64::MIN;
    let mut extend = |(r, c): (i64, i64)| {
        r0 = r0.min(r);
        r1 = r1.max(r);
        c0 = c0.min(c);
        c1 = c1.max(c);
    };
    // Square cells are half-open, so the area's upper/right edges belong to
    // the cell below/left: pull those corners in by a hair.
    let e = if p.shape == CellShape::Square {
        1e-9 * s
    } else {
        0.0
    };
    let (bx1, by1) = ((b[2] - e).max(b[0]), (b[3] - e).max(b[1]));
    for (cx, cy) in [(b[0], b[1]), (bx1, b[1]), (b[0], by1), (bx1, by1)] {
        extend(locate(cx, cy));
    }
    for (&a, &c) in x.iter().zip(y) {
        extend(locate(a, c));
    }
    if p.shape == CellShape::Hexagon {
        r0 = r0.saturating_sub(1);
        r1 = r1.saturating_add(1);
        c0 = c0.saturating_sub(1);
        c1 = c1.saturating_add(1);
    }
    let span = |a: i64, b: i64| (b as i128 - a as i128 + 1).clamp(0, usize::MAX as i128) as usize;
    let (rows, cols) = (span(r0, r1), span(c0, c1));
    if rows.saturating_mul(cols) > MAX_CELLS {
        return Err(bad(
            "cell size",
            &format!(
                "{s} m gives {rows} × {cols} cells, more than {MAX_CELLS}; choose larger cells"
            ),
        ));
    }
    let mut counts = vec![0u64; rows * cols];
    let mut pops = vec![0.0f64; rows * cols];
    let mut outside = 0;
    let slot = |(r, c): (i64, i64)| -> Option<usize> {
        if r < r0 || r > r1 || c < c0 || c > c1 {
            None
        } else {
            Some((r - r0) as usize * cols + (c - c0) as usize)
        }
    };
    for (&a, &c) in x.iter().zip(y) {
        match slot(locate(a, c)) {
            Some(k) => counts[k] += 1,
            None => outside += 1,
        }
    }
    if let Some((px, py)) = population {
        for (&a, &c) in px.iter().zip(py) {
            if let Some(k) = slot(locate(a, c)) {
                pops[k] += 1.0;
            }
        }
    }
    let mut cells = Vec::with_capacity(rows * cols);
    for ri in 0..rows {
        for ci in 0..cols {
            let (r, c) = (r0 + ri as i64, c0 + ci as i64);
            let ring = match p.shape {
                CellShape::Square => {
                    let (x0, y0) = (origin[0] + c as f64 * s, origin[1] + r as f64 * s);
                    vec![
                        [x0, y0],
                        [x0 + s, y0],
                        [x0 + s, y0 + s],
                        [x0, y0 + s],
                        [x0, y0],
                    ]
                }
                CellShape::Hexagon => {
                    let h = hex_centre(r, c, s, p.orientation);
                    hex_ring([h[0] + origin[0], h[1] + origin[1]], s, p.orientation)
                }
            };
            let k = ri * cols + ci;
            let in_area = cell_in_area(&ring, region, region_vertices);
            cells.push(Cell {
                id: format!("r{r}c{c}"),
                row: Some(r),
                col: Some(c),
                geometry: vec![vec![ring]],
                count: counts[k],
                population: population.map(|_| pops[k]),
                in_area,
            });
        }
    }
    let mut lines = Vec::new();
    for ri in 0..rows {
        lines.push(Line {
            name: format!("row {}", r0 + ri as i64),
            kind: LineKind::Row,
            cells: (0..cols).map(|ci| ri * cols + ci).collect(),
        });
    }
    for ci in 0..cols {
        lines.push(Line {
            name: format!("column {}", c0 + ci as i64),
            kind: LineKind::Column,
            cells: (0..rows).map(|ri| ri * cols + ci).collect(),
        });
    }
    lines.push(Line {
        name: "total".into(),
        kind: LineKind::Grand,
        cells: (0..rows * cols).collect(),
    });
    Ok(Aggregation {
        layout: Layout::Grid {
            shape: p.shape,
            orientation: (p.shape == CellShape::Hexagon).then_some(p.orientation),
            cell_size_m: s,
            origin,
            rows,
            cols,
        },
        cells,
        lines,
        outside,
        total: x.len() as u64,
    })
}

/// Counts events per zone. See module docs.
pub fn aggregate_zones(
    x: &[f64],
    y: &[f64],
    zones: &[Zone],
    population: Option<(&[f64], &[f64])>,
) -> Result<Aggregation, AnalysisError> {
    check_xy(x, y, "events")?;
    if zones.is_empty() {
        return Err(bad("zones", "no zone given"));
    }
    let mut areas = Vec::with_capacity(zones.len());
    for (i, z) in zones.iter().enumerate() {
        areas.push(
            Window::from_polygons(z.polygons.clone(), WindowOrigin::File)
                .map_err(|e| bad("zones", &format!("zone {} (\"{}\"): {e}", i + 1, z.name)))?,
        );
        if let Some(p) = z.population {
            if !(p.is_finite() && p >= 0.0) {
                return Err(bad(
                    "zones",
                    &format!("zone {} (\"{}\"): population must be ≥ 0", i + 1, z.name),
                ));
            }
        }
    }
    if let Some((px, py)) = population {
        check_xy(px, py, "population")?;
    }
    let which = |a: f64, c: f64| areas.iter().position(|w| w.contains(a, c));
    let mut counts = vec![0u64; zones.len()];
    let mut outside = 0;
    for (&a, &c) in x.iter().zip(y) {
        match which(a, c) {
            Some(k) => counts[k] += 1,
            None => outside += 1,
        }
    }
    let pops: Option<Vec<f64>> = if zones.iter().all(|z| z.population.is_some()) {
        Some(zones.iter().map(|z| z.population.unwrap_or(0.0)).collect())
    } else if let Some((px, py)) = population {
        let mut v = vec![0.0; zones.len()];
        for (&a, &c) in px.iter().zip(py) {
            if let Some(k) = which(a, c) {
                v[k] += 1.0;
            }
        }
        Some(v)
    } else {
        None
    };
    let cells = zones
        .iter()
        .enumerate()
        .map(|(i, z)| Cell {
            id: z.name.clone(),
            row: None,
            col: None,
            geometry: z.polygons.clone(),
            count: counts[i],
            population: pops.as_ref().map(|p| p[i]),
            in_area: true,
        })
        .collect();
    let mut lines = Vec::new();
    let mut groups: Vec<(String, Vec<usize>)> = Vec::new();
    for (i, z) in zones.iter().enumerate() {
        if let Some(g) = &z.group {
            match groups.iter_mut().find(|(n, _)| n == g) {
                Some((_, v)) => v.push(i),
                None => groups.push((g.clone(), vec![i])),
            }
        }
    }
    for (g, v) in groups {
        lines.push(Line {
            name: g,
            kind: LineKind::Group,
            cells: v,
        });
    }
    lines.push(Line {
        name: "total".into(),
        kind: LineKind::Grand,
        cells: (0..zones.len()).collect(),
    });
    Ok(Aggregation {
        layout: Layout::Zones { zones: zones.len() },
        cells,
        lines,
        outside,
        total: x.len() as u64,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::Window;

    #[test]
    fn hex_index_matches_nearest_centre() {
        // The hexagon holding a point is the one with the nearest centre
        // (definition of a hexagonal Voronoi tiling); checked by brute force.
        for o in [HexOrientation::PointyTop, HexOrientation::FlatTop] {
            let r = 10.0;
            for i in 0..40 {
                for j in 0..40 {
                    let (x, y) = (i as f64 * 2.37 - 20.0, j as f64 * 1.91 - 20.0);
                    let (row, col) = hex_index(x, y, r, o);
                    let c = hex_centre(row, col, r, o);
                    let d = (c[0] - x).hypot(c[1] - y);
                    let mut best = f64::INFINITY;
                    for rr in -6..7 {
                        for cc in -6..7 {
                            let h = hex_centre(rr, cc, r, o);
                            best = best.min((h[0] - x).hypot(h[1] - y));
                        }
                    }
                    assert!(d <= best + 1e-9, "{o:?} ({x},{y}) → ({row},{col})");
                    assert!(d <= r + 1e-9);
                }
            }
        }
    }

    #[test]
    fn hexagon_area_is_three_root3_over_two_r_squared() {
        let ring = hex_ring([0.0, 0.0], 2.0, HexOrientation::FlatTop);
        assert!((crate::window::ring_area(&ring) - 1.5 * SQRT3 * 4.0).abs() < 1e-9);
    }

    #[test]
    fn square_grid_counts_all_points() {
        let area = Window::rectangle(0.0, 0.0, 3000.0, 2000.0).unwrap();
        let x = [10.0, 1500.0, 1600.0, 2999.0, 3000.0];
        let y = [10.0, 500.0, 600.0, 1999.0, 2000.0];
        let verts = [[0.0, 0.0], [3000.0, 0.0], [3000.0, 2000.0], [0.0, 2000.0]];
        let a = aggregate_grid(&x, &y, &area, &verts, None, &AggregateParams::default()).unwrap();
        assert_eq!(a.cells.iter().map(|c| c.count).sum::<u64>(), 5);
        assert_eq!(a.outside, 0);
        match a.layout {
            Layout::Grid { rows, cols, .. } => {
                // The point at (3000, 2000) opens a 4th column and 3rd row.
                assert_eq!((rows, cols), (3, 4));
            }
            _ => panic!(),
        }
        let c11 = a.cells.iter().find(|c| c.id == "r0c1").unwrap();
        assert_eq!(c11.count, 2);
    }

    #[test]
    fn grid_edge_cases_are_errors_not_panics() {
        // A box whose area overflows is not a study area at all; one whose
        // grid would need more cells than can be counted is an error here.
        assert!(Window::rectangle(-1e300, -1e300, 1e300, 1e300).is_err());
        // Coordinates beyond 10⁹ m are refused by the study area itself.
        assert!(Window::rectangle(-1e150, -1e150, 1e150, 1e150).is_err());
        let huge = Window::rectangle(-1e9, -1e9, 1e9, 1e9).unwrap();
        for shape in [CellShape::Square, CellShape::Hexagon] {
            let p = AggregateParams {
                shape,
                cell_size_m: 1.0,
                ..Default::default()
            };
            assert!(aggregate_grid(&[], &[], &huge, &[], None, &p).is_err());
            let zero = AggregateParams {
                cell_size_m: 0.0,
                ..p
            };
            let small = Window::rectangle(0.0, 0.0, 10.0, 10.0).unwrap();
            assert!(aggregate_grid(&[], &[], &small, &[], None, &zero).is_err());
            let a = aggregate_grid(&[], &[], &small, &[], None, &p).unwrap();
            assert_eq!(a.total, 0);
            assert!(a.cells.iter().all(|c| c.count == 0));
        }
        assert!(aggregate_grid(
            &[f64::NAN],
            &[0.0],
            &Window::rectangle(0.0, 0.0, 1.0, 1.0).unwrap(),
            &[],
            None,
            &AggregateParams::default()
        )
        .is_err());
    }

    #[test]
    fn zones_count_and_groups() {
        let z = |n: &str, x0: f64, g: &str| Zone {
            name: n.into(),
            polygons: Window::rectangle(x0, 0.0, x0 + 10.0, 10.0)
                .unwrap()
                .polygons()
                .to_vec(),
            population: Some(100.0),
            group: Some(g.into()),
        };
        let zones = vec![z("a", 0.0, "g1"), z("b", 20.0, "g1"), z("c", 40.0, "g2")];
        let a = aggregate_zones(&[5.0, 25.0, 26.0, 100.0], &[5.0; 4], &zones, None).unwrap();
        assert_eq!(
            a.cells.iter().map(|c| c.count).collect::<Vec<_>>(),
            [1, 2, 0]
        );
        assert_eq!(a.outside, 1);
        assert_eq!(a.lines.len(), 3);
        assert_eq!(a.lines[0].cells, [0, 1]);
    }
}
