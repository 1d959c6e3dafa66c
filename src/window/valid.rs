//! Is the study area a valid polygon set?
//!
//! The OGC Simple Features rules (ISO 19125-1:2004, §6.1.11): a ring must
//! not cross itself, the rings of one polygon must not cross each other,
//! and the polygons of a MultiPolygon must not overlap. RFC 7946 (GeoJSON,
//! §3.1.6) asks the same of GeoJSON polygons. Breaking them makes the area
//! and the inside/outside test wrong without any visible sign, so they are
//! checked here.
//!
//! # Algorithm
//! The edges are listed in the window's edge grid ([`super::grid`]); only
//! pairs of edges sharing a cell are tested (two edges that meet share the
//! cell holding the meeting point), with exact orientation predicates
//! (`geo`'s robust kernel, Shewchuk's adaptive arithmetic). The grid keeps
//! the number of edges per cell small for real outlines, so the check costs
//! about O(V log V) for V corners.
//!
//! Touching at a single point is allowed (a hole touching its outer ring at
//! a corner, two parts meeting at a corner); crossing, and running along
//! each other (a shared stretch of boundary), are problems.

use super::grid::EdgeGrid;
use super::Edge;
use geo::kernels::{Kernel, Orientation, RobustKernel};
use geo::Coord;

/// Where a ring sits: polygon index and ring index within it (0 = outer).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) struct RingId {
    pub poly: usize,
    pub ring: usize,
}

/// The first problem found (smallest pair of edge indices).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct Crossing {
    pub a: RingId,
    pub b: RingId,
    /// A point where the two edges meet (metres).
    pub at: [f64; 2],
}

fn orient(p: [f64; 2], q: [f64; 2], r: [f64; 2]) -> i8 {
    let c = |v: [f64; 2]| Coord { x: v[0], y: v[1] };
    match RobustKernel::orient2d(c(p), c(q), c(r)) {
        Orientation::CounterClockwise => 1,
        Orientation::Clockwise => -1,
        Orientation::Collinear => 0,
    }
}

/// Whether two segments cross or overlap along a stretch (touching at one
/// point does not count), and a point where they do.
fn meet(p: &Edge, q: &Edge) -> Option<[f64; 2]> {
    if p.a[0].max(p.b[0]) < q.a[0].min(q.b[0])
        || q.a[0].max(q.b[0]) < p.a[0].min(p.b[0])
        || p.a[1].max(p.b[1]) < q.a[1].min(q.b[1])
        || q.a[1].max(q.b[1]) < p.a[1].min(p.b[1])
    {
        return None;
    }
    let (o1, o2) = (orient(p.a, p.b, q.a), orient(p.a, p.b, q.b));
    let (o3, o4) = (orient(q.a, q.b, p.a), orient(q.a, q.b, p.b));
    if o1 * o2 < 0 && o3 * o4 < 0 {
        // Proper crossing.
        let (d1, d2) = (
            [p.b[0] - p.a[0], p.b[1] - p.a[1]],
            [q.b[0] - q.a[0], q.b[1] - q.a[1]],
        );
        let den = d1[0] * d2[1] - d1[1] * d2[0];
        let t = ((q.a[0] - p.a[0]) * d2[1] - (q.a[1] - p.a[1]) * d2[0]) / den;
        return Some([p.a[0] + t * d1[0], p.a[1] + t * d1[1]]);
    }
    if o1 == 0 && o2 == 0 {
        // Collinear: overlap of positive length?
        let axis = if (p.b[0] - p.a[0]).abs() >= (p.b[1] - p.a[1]).abs() {
            0
        } else {
            1
        };
        let (plo, phi) = (p.a[axis].min(p.b[axis]), p.a[axis].max(p.b[axis]));
        let (qlo, qhi) = (q.a[axis].min(q.b[axis]), q.a[axis].max(q.b[axis]));
        let (lo, hi) = (plo.max(qlo), phi.min(qhi));
        if hi > lo {
            let s = if p.a[axis] == lo {
                p.a
            } else if p.b[axis] == lo {
                p.b
            } else if q.a[axis] == lo {
                q.a
            } else {
                q.b
            };
            return Some(s);
        }
    }
    None
}

/// First pair of edges (by edge index) that cross or overlap within one
/// polygon (a ring crossing itself or another ring of its polygon), and
/// the first such pair between two polygons (overlapping parts), other than
/// neighbours in one ring meeting at their shared corner. `rings[k]` =
/// (ring id, index of its first edge, number of edges); edges are numbered
/// ring after ring.
pub(super) fn first_crossings(
    edges: &[Edge],
    rings: &[(RingId, usize, usize)],
    grid: &EdgeGrid,
) -> (Option<Crossing>, Option<Crossing>) {
    let ring_of = |e: usize| rings.partition_point(|r| r.1 <= e) - 1;
    let mut within: Option<(usize, usize, [f64; 2])> = None;
    let mut between: Option<(usize, usize, [f64; 2])> = None;
    for c in 0..grid.nx * grid.ny {
        let list = grid.cell_edges(c);
        for (s, &i) in list.iter().enumerate() {
            let i = i as usize;
            let ri = ring_of(i);
            let pi = rings[ri].0.poly;
            for &j in &list[s + 1..] {
                let j = j as usize;
                let same_poly = rings[ring_of(j)].0.poly == pi;
                let slot = if same_poly { &mut within } else { &mut between };
                if let Some((bi, bj, _)) = *slot {
                    if (i, j) >= (bi, bj) {
                        continue;
                    }
                }
                // Neighbours in one ring meet at their shared corner; only
                // running back along each other (a spike) is reported.
                if let Some(at) = meet(&edges[i], &edges[j]) {
                    *slot = Some((i, j, at));
                }
            }
        }
    }
    let make = |b: Option<(usize, usize, [f64; 2])>| {
        b.map(|(i, j, at)| Crossing {
            a: rings[ring_of(i)].0,
            b: rings[ring_of(j)].0,
            at,
        })
    };
    (make(within), make(between))
}

/// Even-odd test of (x, y) against one closed ring (strictly inside; on
/// the ring counts as not inside).
pub(super) fn in_ring(ring: &[[f64; 2]], x: f64, y: f64) -> bool {
    let mut odd = false;
    for w in ring.windows(2) {
        let (a, b) = (w[0], w[1]);
        if orient(a, b, [x, y]) == 0
            && x >= a[0].min(b[0])
            && x <= a[0].max(b[0])
            && y >= a[1].min(b[1])
            && y <= a[1].max(b[1])
        {
            return false;
        }
        if (a[1] > y) != (b[1] > y) && x < a[0] + (y - a[1]) * (b[0] - a[0]) / (b[1] - a[1]) {
            odd = !odd;
        }
    }
    odd
}
