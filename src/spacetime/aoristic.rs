//! Aoristic weights: how much of an event known only within a time window
//! falls in each time bin.
//!
//! **Reference.** Ratcliffe, J. H. (2000). Aoristic analysis: the spatial
//! interpretation of unspecific temporal events. *International Journal of
//! Geographical Information Science* 14(7), 669–679.
//! doi:10.1080/136588100424963
//!
//! An event known to lie somewhere in the window [s, e] (s < e) gives each
//! bin [a, b) the share |[s, e] ∩ [a, b)| / (e − s) of one event: the window
//! is spread evenly over its length. An instant (s = e, or no end) falls
//! whole in the bin that holds it. When the bins cover the window, the
//! shares of one event add up to one; the share outside every bin is
//! returned separately ([`Spread::outside`]) so nothing is lost silently.
//!
//! Bins are half-open, [a, b), except the last, which holds its right edge
//! too (so the latest event is counted).
//!
//! ```
//! use cloister::spacetime::aoristic::spread;
//! // Two days of bins, an event known only to lie between 0.5 and 1.5:
//! let s = spread(0.5, 1.5, &[0.0, 1.0, 2.0]);
//! assert_eq!(s.shares, vec![(0, 0.5), (1, 0.5)]);
//! assert_eq!(s.outside, 0.0);
//! ```

/// The shares of one event among the bins.
#[derive(Debug, Clone, PartialEq)]
pub struct Spread {
    /// (bin index, share), bins in increasing order, shares > 0.
    pub shares: Vec<(usize, f64)>,
    /// The share of the event outside every bin (0 when the bins cover it).
    pub outside: f64,
}

/// Index of the bin holding the instant `t`: bins `[edges[k], edges[k+1])`,
/// the last one closed. `None` outside the bins or for a non-finite `t`.
pub fn bin_of(t: f64, edges: &[f64]) -> Option<usize> {
    let m = edges.len().checked_sub(1).filter(|&m| m > 0)?;
    if !t.is_finite() || t < edges[0] || t > edges[m] {
        return None;
    }
    // First edge greater than t, minus one; t == last edge goes in the last bin.
    let k = edges.partition_point(|&a| a <= t);
    Some(k.saturating_sub(1).min(m - 1))
}

/// The aoristic shares of an event with start `s` and end `e` (days, or any
/// unit the edges use). `e` not finite or equal to `s`: an instant at `s`;
/// `s` not finite: an instant at `e`; both not finite: no share at all
/// (`outside` = 1). A window given backwards is read forwards.
/// `edges` must increase; with fewer than two edges every event is outside.
pub fn spread(s: f64, e: f64, edges: &[f64]) -> Spread {
    let instant = |t: f64| match bin_of(t, edges) {
        Some(k) => Spread {
            shares: vec![(k, 1.0)],
            outside: 0.0,
        },
        None => Spread {
            shares: Vec::new(),
            outside: 1.0,
        },
    };
    match (s.is_finite(), e.is_finite()) {
        (false, false) => return instant(f64::NAN),
        (true, false) => return instant(s),
        (false, true) => return instant(e),
        (true, true) if s == e => return instant(s),
        _ => {}
    }
    let (s, e) = if s < e { (s, e) } else { (e, s) };
    let len = e - s;
    let mut shares = Vec::new();
    let mut inside = 0.0;
    // The first bin that can overlap: the last edge at or before s.
    let k0 = edges.partition_point(|&a| a <= s).saturating_sub(1);
    for (k, w) in edges.windows(2).enumerate().skip(k0) {
        let (a, b) = (w[0], w[1]);
        if b <= s {
            continue;
        }
        if a >= e {
            break;
        }
        let part = (e.min(b) - s.max(a)).max(0.0);
        if part > 0.0 {
            let share = part / len;
            shares.push((k, share));
            inside += share;
        }
    }
    Spread {
        shares,
        outside: (1.0 - inside).max(0.0),
    }
}

/// Aoristic counts per bin for many events: `(whole, window)`, where
/// `whole[k]` counts instants in bin k and `window[k]` adds the shares of
/// events known only within a window. `end` may be shorter or absent (no
/// windows). Returns also the total share left outside the bins.
pub fn counts(start: &[f64], end: Option<&[f64]>, edges: &[f64]) -> (Vec<f64>, Vec<f64>, f64) {
    let m = edges.len().saturating_sub(1);
    let mut whole = vec![0.0; m];
    let mut window = vec![0.0; m];
    let mut outside = 0.0;
    for (i, &s) in start.iter().enumerate() {
        let e = end.and_then(|e| e.get(i).copied()).unwrap_or(f64::NAN);
        let is_window = s.is_finite() && e.is_finite() && s != e;
        if !s.is_finite() && !e.is_finite() {
            continue; // no time at all: not an event of the time line
        }
        let sp = spread(s, e, edges);
        outside += sp.outside;
        let into = if is_window { &mut window } else { &mut whole };
        for (k, w) in sp.shares {
            if let Some(v) = into.get_mut(k) {
                *v += w;
            }
        }
    }
    (whole, window, outside)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn total(s: &Spread) -> f64 {
        s.shares.iter().map(|p| p.1).sum::<f64>() + s.outside
    }

    #[test]
    fn instants_fall_whole_in_their_bin() {
        let edges = [0.0, 7.0, 14.0, 21.0];
        assert_eq!(spread(3.0, f64::NAN, &edges).shares, vec![(0, 1.0)]);
        assert_eq!(spread(7.0, 7.0, &edges).shares, vec![(1, 1.0)]); // left edge belongs to the bin
        assert_eq!(spread(21.0, f64::NAN, &edges).shares, vec![(2, 1.0)]); // last bin is closed
        assert_eq!(spread(f64::NAN, 15.0, &edges).shares, vec![(2, 1.0)]);
        let out = spread(22.0, f64::NAN, &edges);
        assert!(out.shares.is_empty() && out.outside == 1.0);
        assert_eq!(bin_of(-0.1, &edges), None);
        assert_eq!(bin_of(0.0, &[0.0]), None);
    }

    #[test]
    fn windows_spread_by_overlap() {
        // Ratcliffe's rule: a window of 10 days from day 5 over weekly bins:
        // 2 days in the first bin, 7 in the second, 1 in the third.
        let edges = [0.0, 7.0, 14.0, 21.0];
        let s = spread(5.0, 15.0, &edges);
        assert_eq!(s.shares.len(), 3);
        for ((k, w), (k2, w2)) in s.shares.iter().zip([(0, 0.2), (1, 0.7), (2, 0.1)]) {
            assert_eq!(*k, k2);
            assert!((w - w2).abs() < 1e-12, "{w} vs {w2}");
        }
        assert!(s.outside.abs() < 1e-12);
        // Backwards is read forwards.
        assert_eq!(spread(15.0, 5.0, &edges), s);
        // Within one bin: all of it there.
        assert_eq!(spread(1.0, 2.5, &edges).shares, vec![(0, 1.0)]);
        // Partly outside: the rest is reported, never dropped silently.
        let p = spread(18.0, 28.0, &edges);
        assert_eq!(p.shares.len(), 1);
        assert!((p.shares[0].1 - 0.3).abs() < 1e-12 && (p.outside - 0.7).abs() < 1e-12);
    }

    #[test]
    fn weights_sum_to_one_per_event() {
        // Uneven bins (months of 31, 28, 31, 30 days) and random windows.
        let edges = [0.0, 31.0, 59.0, 90.0, 120.0];
        let mut rng = crate::rng::rng_from_seed(7);
        use rand::RngExt;
        for _ in 0..2000 {
            let a: f64 = rng.random_range(0.0..120.0);
            let b: f64 = rng.random_range(0.0..120.0);
            let s = spread(a, b, &edges);
            assert!((total(&s) - 1.0).abs() < 1e-12, "{a} {b}: {s:?}");
            assert!(
                s.outside < 1e-12,
                "{a} {b}: inside the bins, nothing outside"
            );
        }
        let (whole, window, outside) = counts(
            &[1.0, 40.0, 10.0, f64::NAN, f64::NAN],
            Some(&[f64::NAN, 40.0, 70.0, 100.0, f64::NAN]),
            &edges,
        );
        assert_eq!(whole, vec![1.0, 1.0, 0.0, 1.0]);
        let w: f64 = window.iter().sum();
        assert!((w - 1.0).abs() < 1e-12);
        // 10..70: 21 of 60 days in January, 28 in February, 11 in March.
        assert!((window[0] - 21.0 / 60.0).abs() < 1e-12);
        assert!((window[1] - 28.0 / 60.0).abs() < 1e-12);
        assert!((window[2] - 11.0 / 60.0).abs() < 1e-12);
        assert_eq!(outside, 0.0);
    }
}
