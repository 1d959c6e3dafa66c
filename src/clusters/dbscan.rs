//! DBSCAN: density-based clusters with noise.
//!
//! Ester, Kriegel, Sander & Xu (1996), "A density-based algorithm for
//! discovering clusters in large spatial databases with noise", Proc. KDD-96,
//! AAAI Press, 226–231; revisited by Schubert et al. (2017), ACM TODS 42(3):19.
//!
//! The labels are those of `sklearn.cluster.DBSCAN` (docs/methods.md#dbscan, checked
//! against scikit-learn 1.9.1 in `tests/reference/dbscan_reference.py`):
//! * the neighbourhood of a point holds every point at distance `d ≤ eps`
//!   (tested as `dx² + dy² ≤ eps²`), **the point itself included**;
//! * a point is **core** when its neighbourhood holds at least `min_samples`
//!   points (or, with weights, when their weights sum to at least
//!   `min_samples`);
//! * points are visited in **input order**; at each unlabelled core point a
//!   new cluster is grown depth-first through core points. A border point
//!   reachable from several clusters keeps the label of the first cluster
//!   grown (the one whose lowest-index core point comes first) and is never
//!   relabelled. Cluster ids therefore run 0, 1, 2 ... in the order of each
//!   cluster's lowest core index; noise is −1;
//! * `min_samples = 1` makes every point core (isolated points become
//!   clusters of one).
//!
//! # Complexity
//! Points are indexed in the shared [`crate::index::GridIndex`] with cells of
//! side eps/√2 and handled as distinct locations with multiplicities (see
//! [`dbscan_labels`]): events at one address cost one location, a cell whose
//! points all lie within eps of each other is counted at once, and sums stop
//! at `min_samples`. Memory O(n). Worst case (many distinct points in cells
//! that are not within eps of each other but close) O(n²) distance checks.

use crate::error::AnalysisError;
use crate::index::GridIndex;
use crate::study::Pattern;
use crate::window::{convex_hull, ring_area};
use serde::{Deserialize, Serialize};

/// Options for [`dbscan`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct DbscanOptions {
    /// Neighbourhood radius in metres (`d ≤ eps_m`). Must be set (> 0); the
    /// k-distance plot ([`super::kdist`]) helps choose it.
    pub eps_m: f64,
    /// Points in a neighbourhood, itself included, for a core point.
    pub min_samples: usize,
    /// Use event weights as sample weights (sum compared to `min_samples`).
    pub use_weights: bool,
}

impl Default for DbscanOptions {
    fn default() -> Self {
        DbscanOptions {
            eps_m: 0.0,
            min_samples: 5,
            use_weights: false,
        }
    }
}

impl crate::params::Params for DbscanOptions {
    const NAME: &'static str = "dbscan";
    fn fields() -> Vec<crate::params::Field> {
        use crate::params::{Field, EXTENT_FACTOR};
        vec![
            Field::number(
                "eps_m",
                Some("m"),
                "neighbourhood radius (required; the k-distance plot helps choose it)",
            )
            .scale_length(EXTENT_FACTOR),
            Field::integer(
                "min_samples",
                "events in a neighbourhood, itself included, for a core event",
            )
            .range(1.0, MAX_MIN_SAMPLES as f64),
            Field::boolean("use_weights", "count events by their weight"),
        ]
    }
}

/// Largest `min_samples` accepted by [`dbscan`] and the k-distance plot.
pub const MAX_MIN_SAMPLES: usize = 1000;

/// One row of the cluster table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ClusterRow {
    /// Cluster label (0-based, as in `labels`).
    pub id: i32,
    pub members: usize,
    pub core_members: usize,
    /// Mean of member coordinates, metres.
    pub centre_x: f64,
    pub centre_y: f64,
    /// Area of the members' convex hull, km² (0 for fewer than three
    /// non-collinear members).
    pub hull_area_km2: f64,
    /// Members per km² of hull; `None` when the hull has no area.
    pub density_per_km2: Option<f64>,
    /// The hull as a closed anticlockwise ring, metres.
    pub hull: Vec<[f64; 2]>,
}

/// DBSCAN labels and the cluster table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DbscanResult {
    pub eps_m: f64,
    pub min_samples: usize,
    /// Per event in input order: cluster id, or −1 for noise.
    pub labels: Vec<i32>,
    /// Per event: is it a core point?
    pub core: Vec<bool>,
    pub n_clusters: usize,
    pub noise: usize,
    pub clusters: Vec<ClusterRow>,
}

/// DBSCAN on a pattern (see the module docs).
pub fn dbscan(pattern: &Pattern, o: &DbscanOptions) -> Result<DbscanResult, AnalysisError> {
    // A point without a usable weight counts 0 (see `Pattern`): it adds
    // nothing to any neighbour count but still gets a label.
    let w = if o.use_weights {
        pattern.weights_or_zero()
    } else {
        None
    };
    dbscan_xy(pattern.x(), pattern.y(), w.as_deref(), o)
}

/// DBSCAN on bare coordinates in metres.
pub fn dbscan_xy(
    x: &[f64],
    y: &[f64],
    weights: Option<&[f64]>,
    o: &DbscanOptions,
) -> Result<DbscanResult, AnalysisError> {
    if !(o.eps_m > 0.0 && o.eps_m.is_finite()) {
        return Err(AnalysisError::BadParameter {
            name: "eps".into(),
            detail: "the neighbourhood radius must be a positive number of metres \
                     (the k-distance plot helps choose it)"
                .into(),
        });
    }
    if o.min_samples == 0 {
        return Err(AnalysisError::BadParameter {
            name: "min_samples".into(),
            detail: "must be 1 or more (it counts the point itself)".into(),
        });
    }
    if x.len() != y.len() || weights.is_some_and(|w| w.len() != x.len()) {
        return Err(AnalysisError::BadParameter {
            name: "events".into(),
            detail: "coordinate and weight lists differ in length".into(),
        });
    }
    let (labels, core) = dbscan_labels(x, y, o.eps_m, o.min_samples, weights);
    let n_clusters = labels.iter().copied().max().map_or(0, |m| (m + 1) as usize);
    let noise = labels.iter().filter(|&&l| l < 0).count();
    let mut members: Vec<Vec<usize>> = vec![Vec::new(); n_clusters];
    for (i, &l) in labels.iter().enumerate() {
        if l >= 0 {
            members[l as usize].push(i);
        }
    }
    let clusters = members
        .iter()
        .enumerate()
        .map(|(id, m)| {
            let k = m.len() as f64;
            let pts: Vec<[f64; 2]> = m.iter().map(|&i| [x[i], y[i]]).collect();
            let hull = convex_hull(&pts);
            let area = ring_area(&hull);
            ClusterRow {
                id: id as i32,
                members: m.len(),
                core_members: m.iter().filter(|&&i| core[i]).count(),
                centre_x: m.iter().map(|&i| x[i]).sum::<f64>() / k,
                centre_y: m.iter().map(|&i| y[i]).sum::<f64>() / k,
                hull_area_km2: area / 1e6,
                density_per_km2: (area > 0.0).then(|| k / (area / 1e6)),
                hull,
            }
        })
        .collect();
    Ok(DbscanResult {
        eps_m: o.eps_m,
        min_samples: o.min_samples,
        labels,
        core,
        n_clusters,
        noise,
        clusters,
    })
}

/// The labelling itself: `(labels, is_core)` with scikit-learn's numbering.
///
/// Works on the index's distinct locations (events at one address are one
/// location of multiplicity m, all sharing one neighbourhood, one core
/// status and one label) in cells of side eps/√2, so a cell is usually
/// *tight*: the diagonal of its points' bounding box is at most eps, every
/// pair in it is within eps, and its events count for each other without a
/// distance being computed. Neighbourhood sums stop as soon as they reach
/// `min_samples` (when no weight is negative, partial sums only grow).
/// Clusters are the connected components of core locations (a union–find),
/// numbered in input order of their first core event; a border event takes
/// the lowest-numbered cluster among its core neighbours, which is the
/// cluster that the depth-first growth in input order reaches first.
pub fn dbscan_labels(
    x: &[f64],
    y: &[f64],
    eps: f64,
    min_samples: usize,
    weights: Option<&[f64]>,
) -> (Vec<i32>, Vec<bool>) {
    let n = x.len().min(y.len());
    if n == 0 {
        return (Vec::new(), Vec::new());
    }
    let eps2 = eps * eps;
    let g = GridIndex::with_cell(&x[..n], &y[..n], eps / std::f64::consts::SQRT_2);
    let loc = g.locations();
    let nloc = loc.len();
    let (nx, ny) = g.dims();
    let reach = g.reach(eps);
    let spans: Vec<isize> = (-reach..=reach)
        .map(|oy| g.row_span(eps, reach, oy))
        .collect();
    // Weight of each location: its events' weights summed in input order.
    let lw: Vec<f64> = (0..nloc)
        .map(|l| match weights {
            Some(w) => loc
                .members(l)
                .iter()
                .map(|&s| w[g.id[s as usize] as usize])
                .sum(),
            None => loc.mult(l) as f64,
        })
        .collect();
    let can_stop = weights.is_none_or(|w| w.iter().all(|&v| v >= 0.0));
    let need = min_samples as f64;
    let d2 = |a: usize, b: usize| {
        let dx = loc.x[b] - loc.x[a];
        let dy = loc.y[b] - loc.y[a];
        dx * dx + dy * dy
    };
    // Tight cells and their total weight.
    let mut tight = vec![false; nx * ny];
    let mut cell_w = vec![0.0; nx * ny];
    for c in 0..nx * ny {
        let r = loc.cell(c);
        if r.is_empty() {
            continue;
        }
        let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
        for l in r.clone() {
            x0 = x0.min(loc.x[l]);
            x1 = x1.max(loc.x[l]);
            y0 = y0.min(loc.y[l]);
            y1 = y1.max(loc.y[l]);
            cell_w[c] += lw[l];
        }
        let (w, h) = (x1 - x0, y1 - y0);
        tight[c] = w * w + h * h <= eps2;
    }
    // Runs of locations in the rows of cells that can hold a location
    // within eps of one in cell (cx, cy).
    let block = |cx: usize, cy: usize, f: &mut dyn FnMut(std::ops::Range<usize>) -> bool| {
        let (cx, cy) = (cx as isize, cy as isize);
        for (k, oy) in (-reach..=reach).enumerate() {
            let row = cy + oy;
            if row < 0 || row >= ny as isize {
                continue;
            }
            let lo = (cx - spans[k]).max(0) as usize;
            let hi = (cx + spans[k]).min(nx as isize - 1) as usize;
            let row = row as usize * nx;
            if !f(loc.run(row + lo, row + hi)) {
                return;
            }
        }
    };
    // Core status of each location.
    let mut core = vec![false; nloc];
    let cells = nx * ny;
    for c in 0..cells {
        if c % 1024 == 0 {
            crate::progress::report_in(0.0, 0.6, c, cells);
        }
        let own = loc.cell(c);
        for a in own.clone() {
            let mut s = if tight[c] { cell_w[c] } else { 0.0 };
            if !(can_stop && s >= need) {
                block(c % nx, c / nx, &mut |run| {
                    // A tight cell's own locations are already counted.
                    let (r1, r2) = if tight[c] && run.contains(&own.start) {
                        (run.start..own.start, own.end..run.end)
                    } else {
                        (run, 0..0)
                    };
                    for b in r1.chain(r2) {
                        if d2(a, b) <= eps2 {
                            s += lw[b];
                            if can_stop && s >= need {
                                return false;
                            }
                        }
                    }
                    true
                });
            }
            core[a] = s >= need;
        }
    }
    // Connected components of core locations.
    let mut parent: Vec<u32> = (0..nloc as u32).collect();
    fn find(p: &mut [u32], mut a: usize) -> usize {
        while p[a] as usize != a {
            p[a] = p[p[a] as usize];
            a = p[a] as usize;
        }
        a
    }
    let union = |p: &mut [u32], a: usize, b: usize| {
        let (ra, rb) = (find(p, a), find(p, b));
        if ra != rb {
            p[ra.max(rb)] = ra.min(rb) as u32;
        }
    };
    let first_core = |c: usize| loc.cell(c).find(|&l| core[l]);
    for c in 0..cells {
        if c % 1024 == 0 {
            crate::progress::report_in(0.6, 0.9, c, cells);
        }
        let own = loc.cell(c);
        let Some(first) = first_core(c) else { continue };
        if tight[c] {
            for l in own.clone().filter(|&l| core[l]) {
                union(&mut parent, first, l);
            }
        } else {
            for a in own.clone().filter(|&l| core[l]) {
                for (b, &cb) in core.iter().enumerate().take(own.end).skip(a + 1) {
                    if cb && find(&mut parent, a) != find(&mut parent, b) && d2(a, b) <= eps2 {
                        union(&mut parent, a, b);
                    }
                }
            }
        }
        // Later cells of the block (each unordered pair of cells once).
        let (cx, cy) = (c % nx, c / nx);
        for (k, oy) in (-reach..=reach).enumerate() {
            let row = cy as isize + oy;
            if row < cy as isize || row >= ny as isize {
                continue;
            }
            let lo = (cx as isize - spans[k]).max(0) as usize;
            let hi = (cx as isize + spans[k]).min(nx as isize - 1) as usize;
            for col in lo..=hi {
                let b = row as usize * nx + col;
                if b <= c {
                    continue;
                }
                let Some(bfirst) = first_core(b) else {
                    continue;
                };
                if tight[c] && tight[b] {
                    // One component on each side: any one pair within eps joins them.
                    if find(&mut parent, first) == find(&mut parent, bfirst) {
                        continue;
                    }
                    let joined = own
                        .clone()
                        .filter(|&l| core[l])
                        .any(|a| loc.cell(b).any(|t| core[t] && d2(a, t) <= eps2));
                    if joined {
                        union(&mut parent, first, bfirst);
                    }
                } else {
                    for a in own.clone().filter(|&l| core[l]) {
                        for t in loc.cell(b) {
                            if core[t]
                                && find(&mut parent, a) != find(&mut parent, t)
                                && d2(a, t) <= eps2
                            {
                                union(&mut parent, a, t);
                            }
                        }
                    }
                }
            }
        }
    }
    // Location of each event, input order.
    let mut of_event = vec![0u32; n];
    for (s, &i) in g.id.iter().enumerate() {
        of_event[i as usize] = loc.of_slot[s];
    }
    let loc_of = |i: usize| of_event[i] as usize;
    // Cluster ids in input order of each component's first core event.
    let mut cid = vec![-1i32; nloc];
    let mut next = 0i32;
    for i in 0..n {
        let l = loc_of(i);
        if core[l] {
            let r = find(&mut parent, l);
            if cid[r] < 0 {
                cid[r] = next;
                next += 1;
            }
        }
    }
    let mut label = vec![-1i32; nloc];
    for l in 0..nloc {
        if core[l] {
            label[l] = cid[find(&mut parent, l)];
        }
    }
    // Border locations: the lowest cluster id among core neighbours.
    for c in 0..cells {
        if c % 1024 == 0 {
            crate::progress::report_in(0.9, 1.0, c, cells);
        }
        for a in loc.cell(c) {
            if core[a] {
                continue;
            }
            let mut best = i32::MAX;
            block(c % nx, c / nx, &mut |run| {
                for b in run {
                    if core[b] && label[b] < best && d2(a, b) <= eps2 {
                        best = label[b];
                    }
                }
                true
            });
            if best != i32::MAX {
                label[a] = best;
            }
        }
    }
    let labels = (0..n).map(|i| label[loc_of(i)]).collect();
    let is_core = (0..n).map(|i| core[loc_of(i)]).collect();
    (labels, is_core)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn run(pts: &[(f64, f64)], eps: f64, ms: usize) -> (Vec<i32>, Vec<bool>) {
        let x: Vec<f64> = pts.iter().map(|p| p.0).collect();
        let y: Vec<f64> = pts.iter().map(|p| p.1).collect();
        dbscan_labels(&x, &y, eps, ms, None)
    }

    const A: [(f64, f64); 4] = [(-0.5, 0.0), (-0.5, 0.5), (0.0, 0.5), (0.0, 0.0)];
    const B: [(f64, f64); 4] = [(1.8, 0.0), (1.8, 0.5), (2.3, 0.0), (2.3, 0.5)];
    const P: (f64, f64) = (0.9, 0.0);
    const NOISE: (f64, f64) = (5.0, 5.0);

    #[test]
    fn db10_border_point_goes_to_first_cluster_grown() {
        // docs/methods.md#dbscan fixture DB10 [C: sklearn 1.9.1], eps = 1, min_samples = 4.
        let mut pts: Vec<(f64, f64)> = A.to_vec();
        pts.push(P);
        pts.extend(B);
        pts.push(NOISE);
        let (l, c) = run(&pts, 1.0, 4);
        assert_eq!(l, vec![0, 0, 0, 0, 0, 1, 1, 1, 1, -1]);
        let ci: Vec<usize> = (0..10).filter(|&i| c[i]).collect();
        assert_eq!(ci, vec![0, 1, 2, 3, 5, 6, 7, 8]);

        let mut pts: Vec<(f64, f64)> = B.to_vec();
        pts.push(P);
        pts.extend(A);
        pts.push(NOISE);
        assert_eq!(run(&pts, 1.0, 4).0, vec![0, 0, 0, 0, 0, 1, 1, 1, 1, -1]);

        let mut pts = vec![P];
        pts.extend(A);
        pts.extend(B);
        pts.push(NOISE);
        let (l, c) = run(&pts, 1.0, 4);
        assert_eq!(l, vec![0, 0, 0, 0, 0, 1, 1, 1, 1, -1]);
        assert!(!c[0]);
    }

    #[test]
    fn boundary_is_inclusive() {
        // docs/methods.md#dbscan [C]: two points exactly 1 apart.
        let pts = [(0.0, 0.0), (1.0, 0.0)];
        assert_eq!(run(&pts, 1.0, 2).0, vec![0, 0]);
        assert_eq!(run(&pts, 0.999999, 2).0, vec![-1, -1]);
    }

    #[test]
    fn min_samples_one_makes_singletons() {
        // docs/methods.md#dbscan [C]: every point is core.
        let pts = [(0.0, 0.0), (10.0, 0.0), (0.5, 0.0)];
        assert_eq!(run(&pts, 1.0, 1).0, vec![0, 1, 0]);
    }

    #[test]
    fn empty_and_single_point() {
        assert_eq!(run(&[], 1.0, 2).0, Vec::<i32>::new());
        assert_eq!(run(&[(3.0, 4.0)], 1.0, 2).0, vec![-1]);
        assert!(dbscan_xy(&[], &[], None, &DbscanOptions::default()).is_err());
        let o = DbscanOptions {
            eps_m: 1.0,
            ..Default::default()
        };
        let r = dbscan_xy(&[], &[], None, &o).unwrap();
        assert_eq!((r.n_clusters, r.noise), (0, 0));
    }

    #[test]
    fn matches_brute_force_definition() {
        // Oracle: core status from an O(n²) count, labels from union of
        // core components in input order (the definition in the docs).
        let mut rng = crate::rng::rng_from_seed(11);
        use rand::RngExt;
        let n = 600;
        let x: Vec<f64> = (0..n)
            .map(|_| (rng.random::<f64>() * 64.0).floor() / 4.0)
            .collect();
        let y: Vec<f64> = (0..n)
            .map(|_| (rng.random::<f64>() * 64.0).floor() / 4.0)
            .collect();
        let (eps, ms) = (0.75, 4);
        let (l, c) = dbscan_labels(&x, &y, eps, ms, None);
        let near = |i: usize, j: usize| (x[i] - x[j]).powi(2) + (y[i] - y[j]).powi(2) <= eps * eps;
        for (i, &ci) in c.iter().enumerate() {
            let cnt = (0..n).filter(|&j| near(i, j)).count();
            assert_eq!(ci, cnt >= ms);
        }
        let mut want = vec![-1; n];
        let mut lab = 0;
        for s in 0..n {
            if want[s] != -1 || !c[s] {
                continue;
            }
            let mut st = vec![s];
            want[s] = lab;
            while let Some(i) = st.pop() {
                for j in 0..n {
                    if near(i, j) && want[j] == -1 {
                        want[j] = lab;
                        if c[j] {
                            st.push(j);
                        }
                    }
                }
            }
            lab += 1;
        }
        assert_eq!(l, want);
    }
}
