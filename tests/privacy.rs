//! Outside checks of the privacy module: published designs and check values
//! (Hampton et al. 2010; docs/methods.md#privacy), and reference values written by the
//! committed scripts in tests/reference/ (scipy.stats.kstwo / kstest,
//! scipy.spatial.cKDTree, scipy.optimize.linprog).

mod common;
use cloister::privacy::aggregate::{aggregate_grid, AggregateParams};
use cloister::privacy::donut::{design_cdf, design_mean, design_median, ks_statistic};
use cloister::privacy::export::{
    export, what_leaves, CoordinateOutput, CsvNotes, ExportContent, ExportOptions,
};
use cloister::privacy::kanon::r_min_for_k;
use cloister::privacy::suppress::{audit, audit_view, suppress, SuppressionParams};
use cloister::privacy::{
    compare, donut_mask, kanon_mask, CostParams, DistanceLaw, DonutParams, ExportFormat,
    KAnonParams, UnplacedReason,
};
use cloister::rng::rng_from_seed;
use cloister::window::{Window, WindowOrigin};
use rand::RngExt;
use serde_json::Value;

fn reference(name: &str) -> Value {
    let path = format!("{}/tests/reference/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

/// A 10 km square with a 4 km square hole in the middle, and `n` seeded
/// uniform points in it (rejection sampling).
fn holed_area(n: usize, seed: u64) -> (Window, Vec<f64>, Vec<f64>) {
    let area = Window::rectangle_with_hole(
        [0.0, 0.0, 10_000.0, 10_000.0],
        [3000.0, 3000.0, 7000.0, 7000.0],
    )
    .unwrap();
    let mut rng = rng_from_seed(seed);
    let (mut x, mut y) = (vec![], vec![]);
    while x.len() < n {
        let (a, b) = (
            rng.random::<f64>() * 10_000.0,
            rng.random::<f64>() * 10_000.0,
        );
        if area.contains(a, b) {
            x.push(a);
            y.push(b);
        }
    }
    (area, x, y)
}

fn in_hole(x: f64, y: f64) -> bool {
    x > 3000.0 && x < 7000.0 && y > 3000.0 && y < 7000.0
}

#[test]
fn donut_every_point_in_ring_inside_area_and_out_of_hole() {
    // Hampton et al. (2010): displacement at least r_min and less than r_max,
    // uniform direction. Checked on coordinates, not on the reported distances.
    let (area, x, y) = holed_area(5000, 11);
    for law in [DistanceLaw::AreaUniform, DistanceLaw::DistanceUniform] {
        let p = DonutParams {
            r_min_m: 100.0,
            r_max_m: 500.0,
            law,
            seed: 99,
            max_tries: 1000,
        };
        let m = donut_mask(&x, &y, &area, &p).unwrap();
        assert!(m.unplaced.is_empty(), "{:?}", m.unplaced.first());
        assert_eq!(m.x.len(), x.len());
        let mut near_hole = 0;
        for k in 0..m.x.len() {
            let i = m.source[k];
            let d = (m.x[k] - x[i]).hypot(m.y[k] - y[i]);
            assert!(
                (100.0 - 1e-9..500.0 + 1e-9).contains(&d),
                "point {i}: moved {d} m"
            );
            assert!((d - m.displacement_m[k]).abs() < 1e-6);
            assert!(area.contains(m.x[k], m.y[k]));
            assert!(!in_hole(m.x[k], m.y[k]), "point {i} masked into the hole");
            assert!((0.0..=10_000.0).contains(&m.x[k]) && (0.0..=10_000.0).contains(&m.y[k]));
            if (x[i] - 5000.0).abs().max((y[i] - 5000.0).abs()) < 2500.0 {
                near_hole += 1;
            }
        }
        // The hole really was in reach of many points (the check is not vacuous).
        assert!(near_hole > 100);
        let s = m.displacement.unwrap();
        assert!(s.min >= 100.0 && s.max < 500.0 && s.q1 <= s.median && s.median <= s.q3);
    }
}

#[test]
fn donut_with_the_study_window_type() {
    // Same property with the crate's Window (polygon with a hole) as the area.
    let (area, _, _) = holed_area(1, 1);
    let w = Window::from_polygons(area.polygons().to_vec(), WindowOrigin::File).unwrap();
    let mut rng = rng_from_seed(12);
    let (x, y) = w.sample_uniform(3000, &mut rng);
    let p = DonutParams {
        r_min_m: 200.0,
        r_max_m: 900.0,
        seed: 4,
        ..Default::default()
    };
    let m = donut_mask(&x, &y, &w, &p).unwrap();
    assert!(m.unplaced.is_empty());
    for k in 0..m.x.len() {
        let i = m.source[k];
        let d = (m.x[k] - x[i]).hypot(m.y[k] - y[i]);
        assert!((200.0 - 1e-9..900.0 + 1e-9).contains(&d));
        assert!(w.contains(m.x[k], m.y[k]));
        assert!(!in_hole(m.x[k], m.y[k]));
    }
}

#[test]
fn donut_displacements_follow_the_design_ks_test() {
    // 2000 seeded displacements far from any edge (no redraws) against the exact
    // CDF of the design; critical value for n = 2000, alpha = 0.001 from
    // scipy.stats.kstwo (tests/reference/donut_reference.py).
    let r = reference("donut_reference.json");
    let crit = r["ks_critical"].as_f64().unwrap();
    assert!((0.04..0.05).contains(&crit));
    let area = Window::rectangle(0.0, 0.0, 100_000.0, 100_000.0).unwrap();
    let n = r["n"].as_u64().unwrap() as usize;
    let x = vec![50_000.0; n];
    let y = vec![50_000.0; n];
    for (law, other) in [
        (DistanceLaw::AreaUniform, DistanceLaw::DistanceUniform),
        (DistanceLaw::DistanceUniform, DistanceLaw::AreaUniform),
    ] {
        let p = DonutParams {
            law,
            seed: 2010,
            ..Default::default()
        };
        let m = donut_mask(&x, &y, &area, &p).unwrap();
        let d: Vec<f64> = (0..n)
            .map(|k| (m.x[k] - 50_000.0).hypot(m.y[k] - 50_000.0))
            .collect();
        let ks = ks_statistic(&d, |t| design_cdf(law, 100.0, 500.0, t));
        assert!(ks < crit, "{law:?}: D = {ks} ≥ {crit}");
        // The test has power: the other design is rejected.
        let ks_other = ks_statistic(&d, |t| design_cdf(other, 100.0, 500.0, t));
        assert!(ks_other > crit, "{law:?} vs {other:?}: D = {ks_other}");
        // Directions are uniform too: KS of the angle against U[0, 2π).
        let a: Vec<f64> = (0..n)
            .map(|k| {
                (m.y[k] - 50_000.0)
                    .atan2(m.x[k] - 50_000.0)
                    .rem_euclid(std::f64::consts::TAU)
            })
            .collect();
        let ks_a = ks_statistic(&a, |t| (t / std::f64::consts::TAU).clamp(0.0, 1.0));
        assert!(ks_a < crit, "direction D = {ks_a}");
    }
}

#[test]
fn ks_statistic_matches_scipy_kstest() {
    // Same fixed samples through scipy.stats.kstest (donut_reference.py).
    let r = reference("donut_reference.json");
    for s in r["ks_samples"].as_array().unwrap() {
        let law = match s["law"].as_str().unwrap() {
            "area_uniform" => DistanceLaw::AreaUniform,
            _ => DistanceLaw::DistanceUniform,
        };
        let d = ks_statistic(&floats(&s["sample"]), |t| design_cdf(law, 100.0, 500.0, t));
        let want = s["d"].as_f64().unwrap();
        assert!(
            (d - want).abs() < 1e-12,
            "{law:?} {}: {d} vs scipy {want}",
            s["kind"]
        );
    }
}

#[test]
fn design_and_r_min_check_values() {
    // docs/methods.md#privacy [C] and scipy quadrature (donut_reference.py): means 300.000
    // vs 344.444, medians 300 vs 360.555 for (100, 500) m (Hampton et al. 2010
    // design); r_min = √(k/(πD)) = 126.16 m for D = 1000/km², k = 50; tripled
    // area (Allshouse et al. 2010) 218.51 m.
    let r = reference("donut_reference.json");
    for (law, key) in [
        (DistanceLaw::AreaUniform, "area_uniform"),
        (DistanceLaw::DistanceUniform, "distance_uniform"),
    ] {
        let m = r["design"][key]["mean"].as_f64().unwrap();
        let md = r["design"][key]["median"].as_f64().unwrap();
        assert!((design_mean(law, 100.0, 500.0) - m).abs() < 1e-9);
        assert!((design_median(law, 100.0, 500.0) - md).abs() < 1e-9);
    }
    assert!((design_mean(DistanceLaw::AreaUniform, 100.0, 500.0) - 344.444).abs() < 5e-4);
    assert!((design_median(DistanceLaw::AreaUniform, 100.0, 500.0) - 360.555).abs() < 5e-4);
    let rm = &r["r_min"];
    assert!((r_min_for_k(50.0, 1000.0) - rm["r_min_m"].as_f64().unwrap()).abs() < 1e-9);
    assert!((r_min_for_k(50.0, 1000.0) - 126.16).abs() < 0.005);
    assert!((r_min_for_k(150.0, 1000.0) - 218.51).abs() < 0.005);
    assert!(
        (r_min_for_k(150.0, 1000.0) - rm["r_min_tripled_area_m"].as_f64().unwrap()).abs() < 1e-9
    );
}

#[test]
fn kanon_reference_set_reaches_target_or_says_exactly_why_not() {
    // Reference set from tests/reference/kanon_reference.py (cKDTree counts).
    // Spatial k: docs/methods.md#privacy operational definition; layer without the events'
    // own addresses, so k = 1 + #{h : ‖h − x′‖ ≤ ‖x − x′‖}.
    let r = reference("kanon_reference.json");
    let rings = common::rings(&r["window"]);
    let area = Window::from_polygons(vec![rings], WindowOrigin::File).unwrap();
    let (ex, ey) = (floats(&r["events_x"]), floats(&r["events_y"]));
    let (px, py) = (floats(&r["population_x"]), floats(&r["population_y"]));
    let target = r["target_k"].as_u64().unwrap() as usize;
    let r_max = r["r_max_m"].as_f64().unwrap();
    let p = KAnonParams {
        target_k: target,
        r_max_m: r_max,
        seed: 443,
        ..Default::default()
    };
    let rep = kanon_mask(&ex, &ey, Some((&px, &py)), &area, &p).unwrap();
    let provable: Vec<usize> = r["provably_unreachable"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_u64().unwrap() as usize)
        .collect();
    assert!(!provable.is_empty());
    let n2 = r["n_within_2rmax"].as_array().unwrap();
    let best = r["best_k_on_grid"].as_array().unwrap();
    // 1. Exactly the provably unreachable events carry that reason, with
    //    scipy's counts.
    let mut too_few = vec![];
    for u in &rep.masked.unplaced {
        if let UnplacedReason::TooFewPopulationNearby { found, needed, .. } = u.reason {
            assert_eq!(found, n2[u.index].as_u64().unwrap() as usize + 1);
            assert_eq!(needed, target);
            too_few.push(u.index);
        }
    }
    assert_eq!(too_few, provable);
    // 2. Every event with a witness location found by the Python grid search
    //    is placed.
    for (i, b) in best.iter().enumerate() {
        if b.as_u64().unwrap() as usize >= target {
            assert!(
                rep.masked.source.contains(&i),
                "event {i} reachable but not placed"
            );
        }
    }
    // 3. Every event is either placed or listed, never both.
    assert_eq!(rep.masked.x.len() + rep.masked.unplaced.len(), ex.len());
    // 4. Each placed point's k, recounted by brute force, reaches the target,
    //    lies within r_max, inside the area and out of the lake.
    for (k, &i) in rep.masked.source.iter().enumerate() {
        let (mx, my) = (rep.masked.x[k], rep.masked.y[k]);
        let d = (mx - ex[i]).hypot(my - ey[i]);
        // Same distance expression as crate::index: (dx² + dy²).sqrt() ≤ d.
        let d_true = ((mx - ex[i]).powi(2) + (my - ey[i]).powi(2)).sqrt();
        // k-anonymity mode may use the full r_max when the target needs it
        // (ring [r_lo, r_max], module docs).
        assert!(d <= r_max + 1e-9);
        let count = px
            .iter()
            .zip(&py)
            .filter(|(a, b)| ((*a - mx).powi(2) + (*b - my).powi(2)).sqrt() <= d_true)
            .count();
        assert!(count + 1 >= target, "event {i}: k = {}", count + 1);
        assert_eq!(rep.k[k] as usize, count + 1);
        assert!(area.contains(mx, my));
        assert!(!(mx > 5000.0 && mx < 6500.0 && my > 1000.0 && my < 2500.0));
    }
    let s = rep.k_summary.unwrap();
    assert!(s.min >= target as f64);
    assert_eq!(s.share_below_target, 0.0);
    // 5. Keeping points below target lists them with their best k instead.
    let keep = KAnonParams {
        keep_below_target: true,
        ..p
    };
    let rep2 = kanon_mask(&ex, &ey, Some((&px, &py)), &area, &keep).unwrap();
    for b in &rep2.below_target {
        assert!(matches!(b.reason, UnplacedReason::TargetNotReached { .. }));
    }
}

#[test]
fn audit_ranges_match_linear_programming() {
    // tests/reference/suppression_reference.py: exact feasible ranges of each
    // hidden count from scipy.optimize.linprog, cross-checked by brute force.
    let r = reference("suppression_reference.json");
    for case in r["cases"].as_array().unwrap() {
        let name = case["name"].as_str().unwrap();
        let shown: Vec<Option<u64>> = case["shown"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_u64())
            .collect();
        let lines: Vec<(Vec<usize>, Option<u64>)> = case["lines"]
            .as_array()
            .unwrap()
            .iter()
            .map(|l| {
                (
                    l["cells"]
                        .as_array()
                        .unwrap()
                        .iter()
                        .map(|c| c.as_u64().unwrap() as usize)
                        .collect(),
                    l["total"].as_u64(),
                )
            })
            .collect();
        let lower = case["lower"].as_u64().unwrap();
        let a = audit_view(&shown, &lines, lower, 10_000_000);
        let exact = a
            .exact
            .as_ref()
            .unwrap_or_else(|| panic!("{name}: {:?}", a.exact_skipped));
        let want = case["ranges"].as_array().unwrap();
        assert_eq!(exact.len(), want.len(), "{name}");
        for (got, w) in exact.iter().zip(want) {
            assert_eq!(got.cell as u64, w["cell"].as_u64().unwrap(), "{name}");
            assert_eq!(
                got.lo,
                w["lo"].as_u64().unwrap(),
                "{name} cell {}",
                got.cell
            );
            assert_eq!(got.hi, w["hi"].as_u64(), "{name} cell {}", got.cell);
        }
        let mut rec = a.exact_recoverable.clone();
        rec.sort();
        let want_rec: Vec<usize> = case["recovered"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_u64().unwrap() as usize)
            .collect();
        assert_eq!(rec, want_rec, "{name}");
        assert_eq!(a.safe, want_rec.is_empty(), "{name}: {a:?}");
    }
}

/// Independent brute force: every whole-number assignment of the hidden
/// cells (each ≥ lower) consistent with the published totals; returns, per
/// hidden cell, the set of values seen. `None` if it would take too long.
fn brute_force(
    shown: &[Option<u64>],
    lines: &[(Vec<usize>, Option<u64>)],
    lower: u64,
) -> Option<Vec<(usize, std::collections::BTreeSet<u64>)>> {
    let hidden: Vec<usize> = (0..shown.len()).filter(|&c| shown[c].is_none()).collect();
    let eqs: Vec<(Vec<usize>, i64)> = lines
        .iter()
        .filter_map(|(cells, t)| {
            let t = (*t)? as i64;
            let h: Vec<usize> = cells
                .iter()
                .filter_map(|c| hidden.iter().position(|h| h == c))
                .collect();
            let s: i64 = cells.iter().filter_map(|&c| shown[c]).sum::<u64>() as i64;
            (!h.is_empty()).then_some((h, t - s))
        })
        .collect();
    // Upper bound of each hidden cell: the smallest residual of a line through it.
    let ub: Vec<i64> = (0..hidden.len())
        .map(|k| {
            eqs.iter()
                .filter(|(h, _)| h.contains(&k))
                .map(|e| e.1)
                .min()
                // In no published line: unconstrained; two values stand for "any".
                .unwrap_or(lower as i64 + 1)
        })
        .collect();
    let mut seen = vec![std::collections::BTreeSet::new(); hidden.len()];
    let mut val = vec![0i64; hidden.len()];
    let mut steps = 0u64;
    fn go(
        k: usize,
        val: &mut Vec<i64>,
        ub: &[i64],
        lower: i64,
        eqs: &[(Vec<usize>, i64)],
        seen: &mut Vec<std::collections::BTreeSet<u64>>,
        steps: &mut u64,
    ) -> bool {
        *steps += 1;
        if *steps > 2_000_000 {
            return false;
        }
        if k == val.len() {
            if eqs
                .iter()
                .all(|(h, r)| h.iter().map(|&j| val[j]).sum::<i64>() == *r)
            {
                for (j, v) in val.iter().enumerate() {
                    seen[j].insert(*v as u64);
                }
            }
            return true;
        }
        for v in lower..=ub[k].max(lower) {
            val[k] = v;
            // prune: a line whose assigned part already exceeds its residual
            // (stop: larger v only adds), or a completed line that misses it.
            let mut over = false;
            let mut miss = false;
            for (h, r) in eqs.iter().filter(|(h, _)| h.contains(&k)) {
                let s = h.iter().filter(|&&j| j <= k).map(|&j| val[j]).sum::<i64>();
                over |= s > *r;
                miss |= h.iter().all(|&j| j <= k) && s != *r;
            }
            if over {
                break;
            }
            if miss {
                continue;
            }
            if !go(k + 1, val, ub, lower, eqs, seen, steps) {
                return false;
            }
        }
        true
    }
    if !go(0, &mut val, &ub, lower as i64, &eqs, &mut seen, &mut steps) {
        return None;
    }
    Some(hidden.into_iter().zip(seen).collect())
}

/// Events placed at the centres of a grid of 1 km cells with these counts
/// (row 0 at the bottom).
fn grid_table(counts: &[&[u64]]) -> cloister::privacy::aggregate::Aggregation {
    let rows = counts.len();
    let cols = counts[0].len();
    let area = Window::rectangle(0.0, 0.0, cols as f64 * 1000.0, rows as f64 * 1000.0).unwrap();
    let (mut x, mut y) = (vec![], vec![]);
    for (r, row) in counts.iter().enumerate() {
        for (c, &n) in row.iter().enumerate() {
            for _ in 0..n {
                x.push(c as f64 * 1000.0 + 500.0);
                y.push(r as f64 * 1000.0 + 500.0);
            }
        }
    }
    let verts = area.polygons()[0][0].clone();
    let a = aggregate_grid(&x, &y, &area, &verts, None, &AggregateParams::default()).unwrap();
    assert_eq!(a.cells.len(), rows * cols);
    a
}

fn check_table_safe(counts: &[&[u64]], p: &SuppressionParams) -> bool {
    let agg = grid_table(counts);
    let t = suppress(&agg, p);
    // No shown count in 1..min_count−1.
    for c in &t.cells {
        if let Some(v) = c.count {
            assert!(v == 0 || v >= p.min_count, "shown {v} in {}", c.id);
        }
    }
    // Every cell with a small count is hidden; shown counts are the truth.
    for (c, raw) in t.cells.iter().zip(&agg.cells) {
        if raw.count > 0 && raw.count < p.min_count {
            assert!(c.suppressed);
        }
        if let Some(v) = c.count {
            assert_eq!(v, raw.count);
        }
    }
    assert!(t.audit.safe, "{counts:?}: {:?}", t.audit);
    assert_eq!(audit(&t), t.audit);
    let shown: Vec<Option<u64>> = t.cells.iter().map(|c| c.count).collect();
    let lines: Vec<(Vec<usize>, Option<u64>)> =
        t.lines.iter().map(|l| (l.cells.clone(), l.total)).collect();
    let Some(bf) = brute_force(&shown, &lines, 1) else {
        return false;
    };
    for (cell, vals) in bf {
        assert!(
            vals.len() >= 2,
            "{counts:?}: hidden cell {cell} recoverable as {vals:?}"
        );
        let constrained = lines.iter().any(|(c, t)| t.is_some() && c.contains(&cell));
        if constrained {
            assert!(vals.contains(&agg.cells[cell].count));
        }
    }
    true
}

#[test]
fn suppression_leaves_nothing_recoverable_on_built_grid() {
    // A grid built to need complementary suppression: small counts side by
    // side, a row with a lone small count, a column of ones. Brute force over
    // every consistent assignment (independent of the audit code).
    let p = SuppressionParams::default();
    assert!(check_table_safe(
        &[
            &[1, 7, 0, 12],
            &[2, 9, 6, 3],
            &[1, 0, 11, 5],
            &[14, 4, 6, 9]
        ],
        &p
    ));
    assert!(check_table_safe(&[&[1, 1, 20], &[9, 9, 9]], &p));
    assert!(check_table_safe(
        &[&[3, 10, 12], &[8, 20, 9], &[7, 6, 30]],
        &p
    ));
}

#[test]
fn suppression_random_small_grids() {
    // 200 seeded random 2×2 … 4×4 grids with many small counts.
    let mut rng = rng_from_seed(5);
    let mut checked = 0;
    for _ in 0..200 {
        let rows = 2 + (rng.random::<f64>() * 3.0) as usize;
        let cols = 2 + (rng.random::<f64>() * 3.0) as usize;
        let grid: Vec<Vec<u64>> = (0..rows)
            .map(|_| {
                (0..cols)
                    .map(|_| {
                        let u: f64 = rng.random();
                        if u < 0.2 {
                            0
                        } else if u < 0.6 {
                            1 + (rng.random::<f64>() * 4.0) as u64
                        } else {
                            5 + (rng.random::<f64>() * 10.0) as u64
                        }
                    })
                    .collect()
            })
            .collect();
        let refs: Vec<&[u64]> = grid.iter().map(|r| r.as_slice()).collect();
        if check_table_safe(&refs, &SuppressionParams::default()) {
            checked += 1;
        }
    }
    assert!(
        checked >= 190,
        "brute force finished on only {checked} grids"
    );
}

/// Every number in `text` (CSV fields, JSON numbers), rewritten with
/// `decimals` decimals, in order of appearance.
fn numbers(text: &str, decimals: usize) -> Vec<String> {
    let mut out = vec![];
    let mut cur = String::new();
    for ch in text.chars().chain([' ']) {
        if ch.is_ascii_digit() || ch == '.' || ch == '-' {
            cur.push(ch);
        } else if !cur.is_empty() {
            if let Ok(v) = cur.parse::<f64>() {
                out.push(format!("{v:.decimals$}"));
            }
            cur.clear();
        }
    }
    out
}

#[test]
fn exports_contain_no_original_coordinate() {
    // Originals at 2 decimals (their input precision) in metres, 6 in degrees;
    // exports written at the same precision. Each original location (its
    // coordinate pair, formatted at that precision) is searched among adjacent
    // numbers of every file; single coordinates are not searched on their own,
    // since another point's x or y may match one by chance.
    let mut rng = rng_from_seed(77);
    let n = 300;
    let x: Vec<f64> = (0..n)
        .map(|_| ((500_000.0 + rng.random::<f64>() * 9000.0) * 100.0).round() / 100.0)
        .collect();
    let y: Vec<f64> = (0..n)
        .map(|_| ((4_000_000.0 + rng.random::<f64>() * 9000.0) * 100.0).round() / 100.0)
        .collect();
    let area = Window::rectangle(499_000.0, 3_999_000.0, 510_000.0, 4_010_000.0).unwrap();
    let m = donut_mask(&x, &y, &area, &DonutParams::default()).unwrap();
    let to_ll = |a: f64, b: f64| {
        (
            9.0 + (a - 500_000.0) / 78_000.0,
            45.0 + (b - 4e6) / 111_000.0,
        )
    };
    let originals_m: Vec<(String, String)> = x
        .iter()
        .zip(&y)
        .map(|(&a, &b)| (format!("{a:.2}"), format!("{b:.2}")))
        .collect();
    let originals_ll: Vec<(String, String)> = x
        .iter()
        .zip(&y)
        .map(|(&a, &b)| {
            let (lo, la) = to_ll(a, b);
            (format!("{lo:.6}"), format!("{la:.6}"))
        })
        .collect();
    let agg = aggregate_grid(
        &x,
        &y,
        &area,
        &area.polygons()[0][0],
        None,
        &AggregateParams::default(),
    )
    .unwrap();
    let table = suppress(&agg, &SuppressionParams::default());
    let found = |text: &str, d: usize, originals: &[(String, String)]| -> usize {
        let nums = numbers(text, d);
        let pairs: std::collections::HashSet<(&str, &str)> = nums
            .windows(2)
            .map(|w| (w[0].as_str(), w[1].as_str()))
            .collect();
        originals
            .iter()
            .filter(|(a, b)| pairs.contains(&(a.as_str(), b.as_str())))
            .count()
    };
    for format in [ExportFormat::Csv, ExportFormat::GeoJson] {
        for (coords, decimals, originals) in [
            (CoordinateOutput::Metres, 2usize, &originals_m),
            (CoordinateOutput::LonLat, 6, &originals_ll),
        ] {
            let opts = ExportOptions {
                format,
                coordinates: coords,
                decimals: Some(decimals as u32),
                created: "2030-01-02".into(),
                confirm_unmasked: false,
                csv_notes: CsvNotes::LastColumn,
                dates: None,
            };
            for content in [
                ExportContent::MaskedPoints {
                    masked: &m,
                    original_x: &x,
                    original_y: &y,
                },
                ExportContent::Table(&table),
            ] {
                let f = export(&content, &opts, Some(&to_ll)).unwrap();
                assert!(!f.preview.contains_original_coordinates);
                assert!(f.text.contains("2030-01-02") && f.text.contains(cloister::VERSION));
                assert!(!f.text.contains("unmasked"));
                assert!(!f.text.to_lowercase().contains("seed"));
                assert_eq!(
                    found(&f.text, decimals, originals),
                    0,
                    "{format:?} {coords:?}"
                );
            }
            // The explicit unmasked export holds every one, with its label inside
            // (so the search above can find what it looks for).
            let u = export(
                &ExportContent::UnmaskedInternal { x: &x, y: &y },
                &opts,
                Some(&to_ll),
            )
            .unwrap();
            assert!(u.preview.contains_original_coordinates);
            assert!(u.text.contains("unmasked, internal use only"));
            assert_eq!(
                found(&u.text, decimals, originals),
                n,
                "{format:?} {coords:?}"
            );
        }
    }
    // The masked file carries masked points, all of them: each masked pair is found.
    let f = export(
        &ExportContent::MaskedPoints {
            masked: &m,
            original_x: &x,
            original_y: &y,
        },
        &ExportOptions {
            decimals: Some(2),
            ..Default::default()
        },
        None,
    )
    .unwrap();
    let masked: Vec<(String, String)> =
        m.x.iter()
            .zip(&m.y)
            .map(|(a, b)| (format!("{a:.2}"), format!("{b:.2}")))
            .collect();
    assert_eq!(found(&f.text, 2, &masked), m.x.len());
}

#[test]
fn what_leaves_matches_the_file() {
    let (area, x, y) = holed_area(200, 3);
    let m = donut_mask(&x, &y, &area, &DonutParams::default()).unwrap();
    let opts = ExportOptions::default();
    let f = export(
        &ExportContent::MaskedPoints {
            masked: &m,
            original_x: &x,
            original_y: &y,
        },
        &opts,
        None,
    )
    .unwrap();
    // The header is the first line (a spreadsheet shows the data as a
    // table), the notes are the last column, every key is in it.
    let data: Vec<&str> = f.text.lines().collect();
    assert_eq!(data[0].split(',').collect::<Vec<_>>(), f.preview.fields);
    assert_eq!(f.preview.fields.last().unwrap(), "about_this_file");
    assert_eq!(data.len() - 1, f.preview.rows);
    let notes: Vec<String> = data[1..]
        .iter()
        .map(|l| csv_fields(l).pop().unwrap())
        .collect();
    for k in &f.preview.metadata_keys {
        assert!(
            notes.iter().any(|n| n.starts_with(&format!("{k}: "))),
            "{k}"
        );
    }
    assert!(!f.preview.contains_original_coordinates && f.preview.label.is_none());
    assert_eq!(f.preview.points_left_out, m.unplaced.len());
    let gj = ExportOptions {
        format: ExportFormat::GeoJson,
        ..opts.clone()
    };
    for content in [
        ExportContent::MaskedPoints {
            masked: &m,
            original_x: &x,
            original_y: &y,
        },
        ExportContent::UnmaskedInternal { x: &x, y: &y },
    ] {
        let g = export(&content, &gj, None).unwrap();
        let v: Value = serde_json::from_str(&g.text).unwrap();
        assert_eq!(v["type"], "FeatureCollection");
        assert_eq!(v["features"].as_array().unwrap().len(), g.preview.rows);
        let meta = v["metadata"].as_object().unwrap();
        let mut keys: Vec<&String> = meta.keys().collect();
        keys.sort();
        let mut want: Vec<&String> = g.preview.metadata_keys.iter().collect();
        want.sort();
        assert_eq!(keys, want);
        assert!(!meta.contains_key("seed"));
        assert_eq!(
            v["label"].as_str() == Some("unmasked, internal use only"),
            g.preview.contains_original_coordinates
        );
    }
    let agg = aggregate_grid(&x, &y, &area, &[], None, &AggregateParams::default()).unwrap();
    let t = suppress(&agg, &SuppressionParams::default());
    let f = export(&ExportContent::Table(&t), &opts, None).unwrap();
    let data: Vec<&str> = f.text.lines().collect();
    assert_eq!(data.len() - 1, f.preview.rows);
    assert_eq!(data[0].split(',').collect::<Vec<_>>(), f.preview.fields);
    let g = export(
        &ExportContent::Table(&t),
        &ExportOptions {
            format: ExportFormat::GeoJson,
            ..opts.clone()
        },
        None,
    )
    .unwrap();
    let v: Value = serde_json::from_str(&g.text).unwrap();
    assert_eq!(v["features"].as_array().unwrap().len(), g.preview.rows);
    for feat in v["features"].as_array().unwrap() {
        let p = &feat["properties"];
        assert_eq!(p["count"].is_null(), p["suppressed"].as_bool().unwrap());
    }
    // Lon/lat without a back-projection is an error, not a panic.
    let ll = ExportOptions {
        coordinates: CoordinateOutput::LonLat,
        ..opts
    };
    assert!(export(
        &ExportContent::MaskedPoints {
            masked: &m,
            original_x: &x,
            original_y: &y,
        },
        &ll,
        None
    )
    .is_err());
}

#[test]
fn masking_weakens_tight_clusters() {
    // Clustered points (clusters of SD 20 m) masked by 100–500 m: the
    // Clark–Evans ratio (Clark & Evans 1954) moves up towards 1 and the mean
    // NN distance grows; the centre moves by far less than r_max.
    let mut rng = rng_from_seed(9);
    let area = Window::rectangle(0.0, 0.0, 20_000.0, 20_000.0).unwrap();
    let (mut x, mut y) = (vec![], vec![]);
    for _ in 0..20 {
        let (cx, cy) = (
            2000.0 + rng.random::<f64>() * 16_000.0,
            2000.0 + rng.random::<f64>() * 16_000.0,
        );
        for _ in 0..10 {
            let (u, v): (f64, f64) = (rng.random(), rng.random());
            let rr = 20.0 * (-2.0 * (1.0 - u).ln()).sqrt();
            x.push(cx + rr * (std::f64::consts::TAU * v).cos());
            y.push(cy + rr * (std::f64::consts::TAU * v).sin());
        }
    }
    let m = donut_mask(&x, &y, &area, &DonutParams::default()).unwrap();
    let c = compare(&x, &y, &m.x, &m.y, &area, &CostParams::default()).unwrap();
    assert!(c.original.clark_evans_r.unwrap() < 0.5);
    assert!(c.clark_evans_change.unwrap() > 0.2);
    assert!(c.mean_nn_change_m.unwrap() > 0.0);
    assert!(c.centre_shift_m.unwrap() < 100.0);
    let s = c.surface.unwrap();
    assert!(s.max_abs_diff_rel > 0.0 && s.mean_abs_diff_rel < s.max_abs_diff_rel);
}

#[test]
fn zones_rates_and_group_totals() {
    use cloister::privacy::aggregate::{aggregate_zones, Zone};
    // Invented zones; counts (population): group a: 3 (50), 12 (500), 25 (2000);
    // group b: 7 (800), 2 (1200), 40 (90); no group: 15 (1000).
    let spec: [(u64, f64, Option<&str>); 7] = [
        (3, 50.0, Some("a")),
        (12, 500.0, Some("a")),
        (25, 2000.0, Some("a")),
        (7, 800.0, Some("b")),
        (2, 1200.0, Some("b")),
        (40, 90.0, Some("b")),
        (15, 1000.0, None),
    ];
    let mut zones = vec![];
    let (mut x, mut y) = (vec![], vec![]);
    for (i, (n, pop, g)) in spec.iter().enumerate() {
        let x0 = i as f64 * 100.0;
        zones.push(Zone {
            name: format!("zone {}", i + 1),
            polygons: Window::rectangle(x0, 0.0, x0 + 100.0, 100.0)
                .unwrap()
                .polygons()
                .to_vec(),
            population: Some(*pop),
            group: g.map(str::to_string),
        });
        for _ in 0..*n {
            x.push(x0 + 50.0);
            y.push(50.0);
        }
    }
    let agg = aggregate_zones(&x, &y, &zones, None).unwrap();
    assert_eq!(agg.lines.len(), 3); // groups a, b and the grand total
    let t = suppress(&agg, &SuppressionParams::default());
    let counts: Vec<Option<u64>> = t.cells.iter().map(|c| c.count).collect();
    // Primary: 3 and 2; complements: the smallest shown nonzero in each group.
    assert_eq!(
        counts,
        [None, None, Some(25), None, None, Some(40), Some(15)],
        "{:?}",
        t.cells.iter().map(|c| c.hidden).collect::<Vec<_>>()
    );
    assert!(t.audit.safe);
    assert!(t
        .audit
        .exact
        .as_ref()
        .unwrap()
        .iter()
        .all(|r| r.hi != Some(r.lo)));
    // Rates per 1000 (common practice thresholds, docs/methods.md#privacy [CP]): shown only
    // for shown counts with population ≥ 100; unreliable below 20 events.
    let rates: Vec<Option<f64>> = t.cells.iter().map(|c| c.rate).collect();
    assert_eq!(
        rates,
        [None, None, Some(12.5), None, None, None, Some(15.0)]
    );
    assert!(!t.cells[2].rate_unreliable && t.cells[6].rate_unreliable);
    // Group and grand totals are published.
    let totals: Vec<Option<u64>> = t.lines.iter().map(|l| l.total).collect();
    assert_eq!(totals, [Some(40), Some(49), Some(104)]);
}

#[test]
fn hexagon_counts_suppressed_safely() {
    use cloister::privacy::aggregate::{CellShape, HexOrientation, LineKind};
    let (area, x, y) = holed_area(400, 21);
    for orientation in [HexOrientation::PointyTop, HexOrientation::FlatTop] {
        let p = AggregateParams {
            shape: CellShape::Hexagon,
            cell_size_m: 1500.0,
            orientation,
            origin: None,
        };
        let agg = aggregate_grid(&x, &y, &area, &area.polygons()[0][0], None, &p).unwrap();
        assert_eq!(agg.cells.iter().map(|c| c.count).sum::<u64>(), 400);
        assert_eq!(agg.outside, 0);
        let t = suppress(&agg, &SuppressionParams::default());
        assert!(t.audit.safe, "{orientation:?}: {:?}", t.audit);
        for l in t.lines.iter().filter(|l| l.total.is_some()) {
            let hidden = l.cells.iter().filter(|&&c| t.cells[c].suppressed).count();
            assert_ne!(hidden, 1, "{}", l.name);
        }
        assert!(t.lines.iter().any(|l| l.kind == LineKind::Row));
    }
}

#[test]
fn a_mask_smaller_than_the_floor_is_refused() {
    // Item "a 1 cm donut": r_max_m below the documented floor of 50 m
    // (docs/methods.md#privacy, common practice) is refused, by the options'
    // check and by the masking functions themselves.
    use cloister::params::Params;
    use cloister::privacy::donut::MIN_LARGEST_SHIFT_M;
    assert_eq!(MIN_LARGEST_SHIFT_M, 50.0);
    let tiny = DonutParams {
        r_min_m: 0.0,
        r_max_m: 0.01,
        ..Default::default()
    };
    let e = tiny.validate().unwrap_err().to_string();
    assert!(e.contains("r_max_m") && e.contains("50 m"), "{e}");
    let (area, x, y) = holed_area(50, 4);
    let e = donut_mask(&x, &y, &area, &tiny).unwrap_err().to_string();
    assert!(e.contains("r_max_m"), "{e}");
    let k = KAnonParams {
        r_max_m: 49.9,
        ..Default::default()
    };
    assert!(k.validate().unwrap_err().to_string().contains("r_max_m"));
    // The floor itself is accepted.
    let at_floor = DonutParams {
        r_min_m: 0.0,
        r_max_m: 50.0,
        ..Default::default()
    };
    assert!(donut_mask(&x, &y, &area, &at_floor).is_ok());
}

/// Masked points `m` moved back to within `shift` metres of their originals
/// (what a 1 cm donut made before the floor existed).
fn nearly_unmoved(
    m: &cloister::privacy::MaskedPoints,
    x: &[f64],
    y: &[f64],
    shift: f64,
) -> cloister::privacy::MaskedPoints {
    let mut t = m.clone();
    for (i, &s) in m.source.iter().enumerate() {
        let a = i as f64 * 0.7;
        t.x[i] = x[s] + shift * a.cos();
        t.y[i] = y[s] + shift * a.sin();
    }
    t
}

#[test]
fn masked_points_written_at_their_original_location_are_an_unmasked_file() {
    // Whatever the shift, the export writes each masked point and its
    // original the way the file does and compares the text; if any coincide
    // the preview says the file holds original coordinates, and the export
    // is refused unless confirmed, then labelled for internal use only.
    let (area, x, y) = holed_area(300, 5);
    let m = donut_mask(&x, &y, &area, &DonutParams::default()).unwrap();
    let close = nearly_unmoved(&m, &x, &y, 0.01);
    let content = ExportContent::MaskedPoints {
        masked: &close,
        original_x: &x,
        original_y: &y,
    };
    for format in [ExportFormat::Csv, ExportFormat::GeoJson] {
        let opts = ExportOptions {
            format,
            ..Default::default()
        };
        // Count the coincidences independently: CSV writes `{:.1}`.
        let expected = close
            .source
            .iter()
            .enumerate()
            .filter(|&(i, &s)| {
                format!("{:.1}", close.x[i]) == format!("{:.1}", x[s])
                    && format!("{:.1}", close.y[i]) == format!("{:.1}", y[s])
            })
            .count();
        assert!(
            expected > close.x.len() / 2,
            "most 1 cm shifts vanish at 0.1 m"
        );
        let p = what_leaves(&content, &opts, None).unwrap();
        assert!(p.contains_original_coordinates, "{format:?}");
        assert_eq!(p.label.as_deref(), Some("unmasked, internal use only"));
        if format == ExportFormat::Csv {
            assert_eq!(p.points_at_original_location, expected);
        } else {
            assert!(p.points_at_original_location > 0);
        }
        let e = export(&content, &opts, None).unwrap_err().to_string();
        assert!(
            e.contains("confirm_unmasked") && e.contains("ORIGINAL"),
            "{e}"
        );
        let ok = ExportOptions {
            confirm_unmasked: true,
            ..opts.clone()
        };
        let f = export(&content, &ok, None).unwrap();
        assert!(f.text.contains("unmasked, internal use only"), "{format:?}");
        assert!(f.file_name.contains("UNMASKED-internal-only"));
        // The text indeed holds the originals it was labelled for.
        let originals: Vec<(String, String)> = close
            .source
            .iter()
            .map(|&s| (format!("{:.1}", x[s]), format!("{:.1}", y[s])))
            .collect();
        let nums = numbers(&f.text, 1);
        let pairs: std::collections::HashSet<(&str, &str)> = nums
            .windows(2)
            .map(|w| (w[0].as_str(), w[1].as_str()))
            .collect();
        let seen = originals
            .iter()
            .filter(|(a, b)| pairs.contains(&(a.as_str(), b.as_str())))
            .count();
        if format == ExportFormat::Csv {
            assert!(seen >= expected, "{seen} < {expected}");
        } else {
            assert!(seen > 0, "GeoJSON: {seen}");
        }
    }
    // Fewer decimals than the shift also put points back: a real 100–500 m
    // donut written as lon/lat with 2 decimals (about 1 km) is unmasked.
    let to_ll = |a: f64, b: f64| (9.0 + a / 78_000.0, 45.0 + b / 111_000.0);
    let real = ExportContent::MaskedPoints {
        masked: &m,
        original_x: &x,
        original_y: &y,
    };
    let coarse = ExportOptions {
        coordinates: CoordinateOutput::LonLat,
        decimals: Some(2),
        ..Default::default()
    };
    let p = what_leaves(&real, &coarse, Some(&to_ll)).unwrap();
    assert!(p.points_at_original_location > 0 && p.contains_original_coordinates);
    assert!(export(&real, &coarse, Some(&to_ll)).is_err());
    // At the default precision the same mask is not.
    let p = what_leaves(&real, &ExportOptions::default(), None).unwrap();
    assert_eq!(p.points_at_original_location, 0);
    assert!(!p.contains_original_coordinates && p.label.is_none());
}

/// The demo town (demo-data/) as a study: events, boundary, population.
fn demo_study() -> cloister::study::Study {
    use cloister::input::{read_area, read_points, ReadOptions};
    let cases = read_points(
        include_bytes!("../demo-data/cases.csv"),
        &ReadOptions::default(),
    )
    .unwrap();
    let pop = read_points(
        include_bytes!("../demo-data/population.csv"),
        &ReadOptions::default(),
    )
    .unwrap();
    let area = read_area(include_bytes!("../demo-data/town-boundary.geojson"), None).unwrap();
    cloister::study::Study::build(
        &cases,
        Some(&area),
        Some(&pop),
        cloister::study::AreaFallback::ConvexHull,
    )
    .unwrap()
}

#[test]
fn a_table_that_hides_everything_says_so() {
    // The reported case: the demo town in 500 m squares with row and column
    // totals on (the defaults otherwise) showed no cell while the audit read
    // safe. The table now counts what it shows and warns plainly.
    use cloister::privacy::aggregate::AggregateOptions;
    use cloister::privacy::shared::count_in_cells;
    use cloister::privacy::{CellShape, HexOrientation};
    let s = demo_study();
    let p = AggregateOptions {
        cell_size_m: 500.0,
        ..Default::default()
    };
    assert!(p.publish_row_column_totals, "totals on by default");
    let (agg, _) = count_in_cells(&s, CellShape::Square, 500.0, HexOrientation::PointyTop).unwrap();
    let t = suppress(&agg, &p.suppression());
    let sh = t.shown;
    // Independent count from the cells themselves.
    let with_events_shown = t
        .cells
        .iter()
        .filter(|c| c.count.is_some_and(|v| v > 0))
        .count();
    assert_eq!(sh.cells_with_events_shown, with_events_shown);
    let hidden = t
        .cells
        .iter()
        .filter(|c| c.suppressed && (c.in_area || c.hidden.is_some()))
        .count();
    assert_eq!(
        sh.cells_hidden_primary + sh.cells_hidden_complementary,
        hidden
    );
    assert_eq!(sh.events_in_cells + agg.outside, s.events.len() as u64);
    eprintln!("500 m squares, totals on: {sh:?}");
    // Measured: 113 of 335 cells with events shown (958 of 1500 events).
    assert!(sh.mostly_hidden && !sh.nothing_shown);
    let w = &t.warnings[0];
    if sh.nothing_shown {
        assert!(w.starts_with("Nothing is shown"), "{w}");
    } else {
        assert!(w.starts_with("Most of the table is hidden"), "{w}");
    }
    assert!(
        w.contains("larger cells") && w.contains("row and column totals"),
        "{w}"
    );
    let off = AggregateOptions {
        publish_row_column_totals: false,
        ..p.clone()
    };
    // A table that shows most of its events carries no such warning: 2 km
    // squares without totals.
    let (big, _) =
        count_in_cells(&s, CellShape::Square, 2000.0, HexOrientation::PointyTop).unwrap();
    let t3 = suppress(&big, &off.suppression());
    eprintln!("2000 m squares, totals off: {:?}", t3.shown);
    assert!(!t3.shown.mostly_hidden);
    assert!(!t3
        .warnings
        .iter()
        .any(|w| w.contains("hidden:") || w.starts_with("Nothing")));
}

#[test]
fn a_table_that_shows_nothing_says_it_plainly() {
    // Sparse events, 1 to 4 per 100 m square: every count is small, so every
    // cell is hidden. The audit finds nothing recoverable (nothing is shown),
    // and the table says it shows nothing, with what to change.
    use cloister::privacy::aggregate::{aggregate_grid, AggregateParams};
    let area = Window::rectangle(0.0, 0.0, 1000.0, 1000.0).unwrap();
    let (mut x, mut y) = (vec![], vec![]);
    for i in 0..10 {
        for j in 0..10 {
            for k in 0..(1 + (i + j) % 4) {
                x.push(i as f64 * 100.0 + 20.0 + 10.0 * k as f64);
                y.push(j as f64 * 100.0 + 50.0);
            }
        }
    }
    let agg = aggregate_grid(
        &x,
        &y,
        &area,
        &[],
        None,
        &AggregateParams {
            cell_size_m: 100.0,
            origin: Some([0.0, 0.0]),
            ..Default::default()
        },
    )
    .unwrap();
    let t = suppress(&agg, &SuppressionParams::default());
    assert!(t.audit.safe);
    assert_eq!(t.shown.cells_with_events, 100);
    assert_eq!(t.shown.cells_with_events_shown, 0);
    assert_eq!(t.shown.events_in_cells, x.len() as u64);
    assert_eq!(t.shown.share_of_events_shown, Some(0.0));
    assert!(t.shown.nothing_shown && t.shown.mostly_hidden);
    assert!(
        t.warnings[0].starts_with("Nothing is shown"),
        "{:?}",
        t.warnings
    );
    assert!(t.warnings[0].contains("larger cells"));
    // No events at all: shares are undefined (None), not NaN, and no warning.
    let none = aggregate_grid(&[], &[], &area, &[], None, &AggregateParams::default()).unwrap();
    let t0 = suppress(&none, &SuppressionParams::default());
    assert_eq!(t0.shown.share_of_events_shown, None);
    assert!(!t0.shown.nothing_shown && !t0.shown.mostly_hidden);
    let j = serde_json::to_string(&t0.shown).unwrap();
    assert!(
        !j.contains("NaN") && j.contains("\"share_of_events_shown\":null"),
        "{j}"
    );
}

/// Parses one CSV line with quoted fields (RFC 4180 quoting), for the
/// checks below: an independent reader, not the writer's own code.
fn csv_fields(line: &str) -> Vec<String> {
    let mut out = vec![String::new()];
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match (c, quoted) {
            ('"', true) if chars.peek() == Some(&'"') => {
                chars.next();
                out.last_mut().unwrap().push('"');
            }
            ('"', _) => quoted = !quoted,
            (',', false) => out.push(String::new()),
            (c, _) => out.last_mut().unwrap().push(c),
        }
    }
    out
}

#[test]
fn csv_notes_go_in_a_last_column_or_in_top_lines() {
    // Before: every CSV began with "# key: value" lines, which spreadsheets
    // show as data rows above the header.
    let (area, x, y) = holed_area(200, 3);
    let m = donut_mask(&x, &y, &area, &DonutParams::default()).unwrap();
    let content = ExportContent::MaskedPoints {
        masked: &m,
        original_x: &x,
        original_y: &y,
    };
    let f = export(&content, &ExportOptions::default(), None).unwrap();
    let lines: Vec<&str> = f.text.lines().collect();
    assert!(!f.text.starts_with('#'), "{}", &f.text[..60]);
    assert_eq!(lines[0], "x_m,y_m,about_this_file");
    // Rectangular: every row has the header's three fields.
    let rows: Vec<Vec<String>> = lines[1..].iter().map(|l| csv_fields(l)).collect();
    assert!(
        rows.iter().all(|r| r.len() == 3),
        "a row is not 3 fields wide"
    );
    // One note per row, in the order of the keys, then empty.
    let keys = &f.preview.metadata_keys;
    assert!(keys.len() < rows.len());
    for (i, k) in keys.iter().enumerate() {
        assert!(
            rows[i][2].starts_with(&format!("{k}: ")),
            "row {i}: {:?}",
            rows[i]
        );
    }
    assert!(rows[keys.len()..].iter().all(|r| r[2].is_empty()));
    assert_eq!(rows[0][2], "tool: Cloister");
    // The coordinates are the same as in the top-lines form, row by row.
    let top = export(
        &content,
        &ExportOptions {
            csv_notes: CsvNotes::TopLines,
            ..Default::default()
        },
        None,
    )
    .unwrap();
    assert!(
        top.text.starts_with("# tool: Cloister\n"),
        "{}",
        &top.text[..40]
    );
    let top_rows: Vec<&str> = top.text.lines().filter(|l| !l.starts_with("# ")).collect();
    assert_eq!(top_rows[0], "x_m,y_m");
    assert_eq!(top_rows.len(), lines.len());
    for (a, b) in top_rows[1..].iter().zip(&rows) {
        assert_eq!(*a, format!("{},{}", b[0], b[1]));
    }
    for k in keys {
        assert!(
            top.text.lines().any(|l| l.starts_with(&format!("# {k}: "))),
            "{k}"
        );
    }
    assert_eq!(top.preview.fields, ["x_m", "y_m"]);
    // The unmasked export: the label is the first note, in capitals.
    let u = export(
        &ExportContent::UnmaskedInternal { x: &x, y: &y },
        &ExportOptions::default(),
        None,
    )
    .unwrap();
    let first = csv_fields(u.text.lines().nth(1).unwrap());
    assert_eq!(first[2], "UNMASKED, INTERNAL USE ONLY");
    // Fewer rows than notes: the rest joined in the last row, nothing lost.
    let few = donut_mask(&x[..2], &y[..2], &area, &DonutParams::default()).unwrap();
    let f2 = export(
        &ExportContent::MaskedPoints {
            masked: &few,
            original_x: &x[..2],
            original_y: &y[..2],
        },
        &ExportOptions::default(),
        None,
    )
    .unwrap();
    let r2: Vec<Vec<String>> = f2.text.lines().skip(1).map(csv_fields).collect();
    assert_eq!(r2.len(), few.x.len());
    let all_notes: String = r2
        .iter()
        .map(|r| r[2].clone())
        .collect::<Vec<_>>()
        .join(" | ");
    for k in &f2.preview.metadata_keys {
        assert!(
            all_notes.contains(&format!("{k}: ")),
            "{k} lost: {all_notes}"
        );
    }
}
