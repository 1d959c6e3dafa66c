//! Permutations of the event times: the null hypothesis of every
//! space–time test here (no interaction: which time goes with which place
//! is arbitrary; Mantel 1967).
//!
//! Permutation `j` of a run with seed `seed` comes from its own stream
//! ([`stream_rng`]), so it is the same whichever worker computes it and in
//! whatever order: a run split over helper workers adds up to exactly the
//! one-worker run.

use crate::distance::csr::stream_rng;
use rand::RngExt;

/// Permutation `j` of `0..n` for a run with `seed` (Fisher–Yates): event
/// `i` takes the time of event `perm[i]`.
pub fn permutation(n: usize, seed: u64, j: u64) -> Vec<u32> {
    let mut p: Vec<u32> = (0..n as u32).collect();
    let mut rng = stream_rng(seed, j);
    for i in (1..n).rev() {
        let k = rng.random_range(0..=i);
        p.swap(i, k);
    }
    p
}

/// The times of permutations `j0 .. j0 + b`, event-major for loops over
/// pairs: `out[i * b + k]` is the time event `i` takes in permutation
/// `j0 + k`.
pub fn permuted_times_batch(t: &[f64], seed: u64, j0: u64, b: usize) -> Vec<f64> {
    let n = t.len();
    let mut out = vec![0.0; n * b];
    for k in 0..b {
        let p = permutation(n, seed, j0 + k as u64);
        for (i, &src) in p.iter().enumerate() {
            out[i * b + k] = t[src as usize];
        }
    }
    out
}

/// Every permutation of `0..n` (Heap's algorithm), for exact
/// enumeration of a permutation distribution on a small example (the
/// tests check p-values and moments this way). `None` for n > 10.
pub fn all_permutations(n: usize) -> Option<Vec<Vec<usize>>> {
    if n > 10 {
        return None;
    }
    let mut a: Vec<usize> = (0..n).collect();
    let mut c = vec![0usize; n];
    let mut out = vec![a.clone()];
    let mut i = 0;
    while i < n {
        if c[i] < i {
            if i % 2 == 0 {
                a.swap(0, i);
            } else {
                a.swap(c[i], i);
            }
            out.push(a.clone());
            c[i] += 1;
            i = 0;
        } else {
            c[i] = 0;
            i += 1;
        }
    }
    Some(out)
}

#[cfg(test)]
mod tests {
    #[test]
    fn all_permutations_are_distinct_and_complete() {
        let p = super::all_permutations(5).unwrap();
        assert_eq!(p.len(), 120);
        let set: std::collections::HashSet<_> = p.iter().cloned().collect();
        assert_eq!(set.len(), 120);
        assert!(super::all_permutations(11).is_none());
    }

    use super::*;

    #[test]
    fn permutation_is_a_permutation_and_depends_on_j_only() {
        let p = permutation(50, 7, 3);
        let mut s = p.clone();
        s.sort_unstable();
        assert_eq!(s, (0..50).collect::<Vec<u32>>());
        assert_eq!(p, permutation(50, 7, 3));
        assert_ne!(p, permutation(50, 7, 4));
    }

    #[test]
    fn batch_rows_match_single_permutations() {
        let t: Vec<f64> = (0..20).map(|i| i as f64 * 1.5).collect();
        let b = permuted_times_batch(&t, 11, 5, 3);
        for k in 0..3 {
            let p = permutation(20, 11, 5 + k as u64);
            for i in 0..20 {
                assert_eq!(b[i * 3 + k], t[p[i] as usize]);
            }
        }
    }

    #[test]
    fn each_event_takes_each_time_about_equally_often() {
        // Uniformity of Fisher–Yates: over 4000 permutations of 4 items each
        // item lands in each place 1000 times on average; 5 SD = 5·√(4000·¼·¾).
        let mut c = [[0u32; 4]; 4];
        for j in 0..4000 {
            for (i, &v) in permutation(4, 1, j).iter().enumerate() {
                c[i][v as usize] += 1;
            }
        }
        for row in c {
            for v in row {
                assert!(
                    (v as f64 - 1000.0).abs() < 5.0 * (4000.0f64 * 0.25 * 0.75).sqrt(),
                    "{v}"
                );
            }
        }
    }
}
