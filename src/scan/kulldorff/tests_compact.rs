//! The compact circles and their fast chance runs (case–control data)
//! against the general lists: the same windows, the same maxima of every
//! chance run, the same result. The general path is the oracle; it is
//! itself checked against explicit enumeration of every window in
//! `tests.rs` (`replicate_maximum_equals_explicit_maximum`).

use super::*;

/// Invented case–control points: `n` people, `cases` of them cases, on a
/// lattice of `side` × `side` places (so many share a place, and many
/// distances tie), plus some points off the lattice.
fn points(n: usize, cases: usize, side: f64, seed: u64) -> ScanRegions {
    let mut rng = crate::rng::rng_from_seed(seed);
    let mut x = Vec::with_capacity(n);
    let mut y = Vec::with_capacity(n);
    for i in 0..n {
        if i % 5 == 4 {
            x.push(rng.random::<f64>() * side);
            y.push(rng.random::<f64>() * side);
        } else {
            x.push((rng.random::<f64>() * side).floor());
            y.push((rng.random::<f64>() * side).floor());
        }
    }
    distinct_locations(&x[..cases], &y[..cases], &x[cases..], &y[cases..])
}

fn jobs(r: &ScanRegions, o: &ScanOptions) -> (ScanJob, ScanJob) {
    let fast = ScanJob::build(r, ScanModel::Bernoulli, o, true).unwrap();
    let general = ScanJob::build(r, ScanModel::Bernoulli, o, false).unwrap();
    assert!(fast.compact.is_some() && general.compact.is_none());
    (fast, general)
}

#[test]
fn every_chance_run_maximum_equals_the_general_path() {
    for (n, cases, side, share, seed) in [
        (400, 130, 9.0, 0.5, 1u64),
        (700, 350, 20.0, 0.25, 2),
        (300, 40, 5.0, 0.5, 3),
        (900, 600, 30.0, 0.1, 4),
    ] {
        let r = points(n, cases, side, seed);
        // Places shared by several people, and tied distances, are present.
        assert!(r.population.iter().any(|&p| p >= 3.0), "{seed}");
        assert!(r.x.len() < n);
        let o = ScanOptions {
            n_sim: 45,
            seed: 100 + seed,
            max_share: share,
            ..Default::default()
        };
        let (fast, general) = jobs(&r, &o);
        assert_eq!(fast.n_windows(), general.n_windows(), "{seed}");
        assert_eq!(fast.observed_statistic(), general.observed_statistic());
        let want = general.simulate_range(0, 45);
        assert!(want.iter().any(|&v| v != want[0]) && want.iter().all(|&v| v > 0.0));
        // One worker, and the ranges two and three workers would take
        // (pieces not a multiple of the eight runs of a pass).
        assert_eq!(fast.simulate_range(0, 45), want, "{seed}: one worker");
        for cuts in [vec![0, 23, 45], vec![0, 5, 19, 45], vec![0, 1, 2, 45]] {
            let mut got = Vec::new();
            for w in cuts.windows(2) {
                got.extend(fast.simulate_range(w[0], w[1]));
            }
            assert_eq!(got, want, "{seed}: {cuts:?}");
        }
        // With 32-bit ids (more than 32,768 places) the same.
        let mut wide = ScanJob::build(&r, ScanModel::Bernoulli, &o, true).unwrap();
        wide.compact.as_mut().unwrap().widen();
        assert_eq!(wide.simulate_range(0, 45), want, "{seed}: u32 ids");
        // A helper rebuilt from the share uses the compact form too.
        let helper = ScanSimulator::new(&fast.share()).unwrap();
        assert_eq!(helper.simulate_range(7, 31), want[7..31]);
        // The whole result: clusters, radii, LLRs, p-values.
        assert_eq!(fast.finish(), general.finish(), "{seed}");
    }
}

#[test]
fn the_compact_form_is_only_used_where_it_fits() {
    let r = points(200, 60, 8.0, 9);
    let o = ScanOptions {
        n_sim: 9,
        ..Default::default()
    };
    // Against area and against counts the general lists are used.
    let j = ScanJob::from_regions(&r, ScanModel::Poisson, &o).unwrap();
    assert!(j.compact.is_none());
    let j = ScanJob::from_regions(&r, ScanModel::Bernoulli, &o).unwrap();
    assert!(j.compact.is_some());
    // The compact lists hold 2 bytes per entry (fewer than 32,768 places);
    // the general ones 4 + 8 + 8.
    let g = ScanJob::build(&r, ScanModel::Bernoulli, &o, false).unwrap();
    let entries = g.list.len();
    assert!(j.circles_bytes() < 2 * entries + 20 * r.x.len());
    assert!(g.circles_bytes() >= 20 * entries);
    assert!(!CompactCircles::fits(&[1.5, 2.0], 1));
    assert!(!CompactCircles::fits(&[70_000.0], 65_536));
    assert!(CompactCircles::fits(&[70_000.0], 65_535));
}
