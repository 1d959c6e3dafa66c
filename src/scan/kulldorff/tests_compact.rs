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

/// The compact job (with the bound, or with `bound` false the slots and
/// fold) and the general one.
fn jobs(r: &ScanRegions, o: &ScanOptions, bound: bool) -> (ScanJob, ScanJob) {
    let mut fast = ScanJob::build(r, ScanModel::Bernoulli, o, true).unwrap();
    let general = ScanJob::build(r, ScanModel::Bernoulli, o, false).unwrap();
    let c = fast.compact.as_mut().unwrap();
    assert!(c.bounded, "these data are small enough for the bound");
    if !bound {
        c.unbound();
    }
    assert!(general.compact.is_none());
    (fast, general)
}

#[test]
fn every_chance_run_maximum_equals_the_general_path() {
    every_maximum_equals_the_general_path(true);
}

#[test]
fn every_chance_run_maximum_equals_the_general_path_without_the_bound() {
    every_maximum_equals_the_general_path(false);
}

fn every_maximum_equals_the_general_path(bound: bool) {
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
        let (fast, general) = jobs(&r, &o, bound);
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
        if !bound {
            wide.compact.as_mut().unwrap().unbound();
        }
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
    // The compact lists hold 2 bytes per entry (fewer than 32,768 places)
    // and 8 bytes per block of at least 8 entries for the bound; the
    // general ones 4 + 8 + 8.
    let g = ScanJob::build(&r, ScanModel::Bernoulli, &o, false).unwrap();
    let entries = g.list.len();
    assert!(j.circles_bytes() < 3 * entries + 28 * r.x.len());
    assert!(g.circles_bytes() >= 20 * entries);
    assert!(!CompactCircles::fits(&[1.5, 2.0], 1));
    assert!(!CompactCircles::fits(&[70_000.0], 65_536));
    assert!(CompactCircles::fits(&[70_000.0], 65_535));
}

#[test]
fn the_bound_passes_over_most_blocks() {
    // 1,500 invented points, a third of them cases; 16 chance runs (two
    // passes of eight) with the bound, the maxima as without it.
    let r = points(1500, 500, 60.0, 11);
    let o = ScanOptions {
        n_sim: 16,
        seed: 5,
        ..Default::default()
    };
    let (fast, general) = jobs(&r, &o, true);
    let c = fast.compact.as_ref().unwrap();
    let (cc, total) = (fast.total_cases as f64, fast.total_pop);
    let mut lanes = Lanes::new(c);
    let n = r.x.len();
    let (mut cases, mut individuals, mut picks) =
        (vec![0u32; n], fast.individuals.clone(), Vec::new());
    let mut got = Vec::new();
    for j0 in [0, 8] {
        for l in 0..LANES {
            let mut rng = replicate_rng(o.seed, j0 + l);
            fast.simulate(&mut rng, &mut cases, &mut individuals, &mut picks);
            lanes.set(l, &cases);
        }
        got.extend(lanes.maxima(
            c,
            |k, p| fast.llr(f64::from(k), f64::from(p)),
            |k, p| bernoulli_raised(f64::from(k), f64::from(p), cc, total),
            1e-9 + 1e-11 * total,
        ));
    }
    assert_eq!(got, general.simulate_range(0, 16));
    let [blocks, redone, scored, tables] = lanes.tally;
    eprintln!("blocks {blocks}, redone {redone}, windows scored {scored}, tables {tables}");
    // Most blocks are passed over, and far fewer windows are scored than
    // the 16 runs have (each run has every window).
    assert!(redone * 4 < blocks, "{redone} of {blocks} blocks redone");
    assert!(
        scored * 4 < 16 * fast.n_windows() as u64,
        "{scored} windows scored"
    );
    assert!(tables > 0);
}
