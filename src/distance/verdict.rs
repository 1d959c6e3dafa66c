//! The plain-language answer to "is it clustered, and at what distances?".
//!
//! The decision is the MAD global test at level α; the distances are those
//! where the observed curve lies strictly outside the matching global band
//! (so the words and the picture agree). Above the band means clustered
//! for K, L, g and G, and regular for F and J; below the band the reverse.
//! The DCLF test is reported beside it and mentioned when it disagrees.

use super::envelope::{GlobalTest, SummaryFunction};
use serde::Serialize;

/// Overall outcome.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Outcome {
    Clustered,
    Regular,
    /// Clustered at some distances and regular at others.
    Mixed,
    ConsistentWithCsr,
}

/// Direction of a departure from CSR.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Departure {
    Clustered,
    Regular,
}

/// A run of consecutive grid distances outside the global band.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DistanceRange {
    pub from_m: f64,
    pub to_m: f64,
    pub departure: Departure,
}

/// The answer, in words and as data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    pub outcome: Outcome,
    pub ranges: Vec<DistanceRange>,
    /// One or two sentences for the page.
    pub text: String,
    /// What the result does not say.
    pub caveats: Vec<String>,
}

/// A distance as the page's tables write it: no trailing zeros ("0 m", not
/// "0.000 m").
pub(crate) fn fmt_m(v: f64) -> String {
    let text = if v >= 100.0 {
        format!("{v:.0}")
    } else if v >= 1.0 {
        format!("{v:.1}")
    } else {
        format!("{v:.3}")
    };
    let text = if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    };
    format!("{text} m")
}

pub(crate) fn fmt_p(p: f64) -> String {
    if p < 0.001 {
        format!("{p:.4}")
    } else {
        format!("{p:.3}")
    }
}

/// "a", "a and b", "a, b and c".
pub(crate) fn plain_list(parts: &[String]) -> String {
    match parts {
        [] => String::new(),
        [one] => one.clone(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
    }
}

/// The runs of consecutive tested distances where `observed` leaves the
/// band [`lo`, `hi`]: above it is `Clustered` when `above_means_clustered`,
/// else `Regular` (and below the other way round).
pub(crate) fn departures(
    r: &[f64],
    observed: &[f64],
    lo: &[f64],
    hi: &[f64],
    in_test: &[bool],
    above_means_clustered: bool,
) -> Vec<DistanceRange> {
    let (above, below) = if above_means_clustered {
        (Departure::Clustered, Departure::Regular)
    } else {
        (Departure::Regular, Departure::Clustered)
    };
    let mut ranges: Vec<DistanceRange> = Vec::new();
    let mut last: Option<(usize, Departure)> = None;
    for k in 0..r.len() {
        let dep = if !in_test[k] {
            None
        } else if observed[k] > hi[k] {
            Some(above)
        } else if observed[k] < lo[k] {
            Some(below)
        } else {
            None
        };
        match (dep, last) {
            (Some(d), Some((prev, pd))) if prev + 1 == k && pd == d => {
                if let Some(x) = ranges.last_mut() {
                    x.to_m = r[k];
                }
            }
            (Some(d), _) => ranges.push(DistanceRange {
                from_m: r[k],
                to_m: r[k],
                departure: d,
            }),
            _ => {}
        }
        last = dep.map(|d| (k, d));
    }
    ranges
}

/// The ranges of one kind in plain words: "45 m to 1.1 km and about 1.2 km".
pub(crate) fn range_list(ranges: &[DistanceRange], d: Departure) -> String {
    let parts = ranges
        .iter()
        .filter(|x| x.departure == d)
        .map(|x| {
            if x.from_m == x.to_m {
                format!("about {}", fmt_m(x.from_m))
            } else {
                format!("{} to {}", fmt_m(x.from_m), fmt_m(x.to_m))
            }
        })
        .collect::<Vec<_>>();
    plain_list(&parts)
}

#[allow(clippy::too_many_arguments)]
pub(crate) fn verdict_for(
    f: SummaryFunction,
    r: &[f64],
    observed: &[f64],
    lo: &[f64],
    hi: &[f64],
    in_test: &[bool],
    mad: &GlobalTest,
    dclf: &GlobalTest,
    alpha: f64,
    m: usize,
) -> Verdict {
    let ranges = departures(r, observed, lo, hi, in_test, f.above_means_clustered());
    let clustered = ranges.iter().any(|x| x.departure == Departure::Clustered);
    let regular = ranges.iter().any(|x| x.departure == Departure::Regular);
    let outcome = match (mad.rejects, clustered, regular) {
        (false, _, _) => Outcome::ConsistentWithCsr,
        (true, true, true) => Outcome::Mixed,
        (true, false, true) => Outcome::Regular,
        _ => Outcome::Clustered,
    };
    let list = |d: Departure| range_list(&ranges, d);
    let label = f.label();
    let mut text = match outcome {
        Outcome::ConsistentWithCsr => format!(
            "Consistent with complete spatial randomness: {label} stays inside the global {:.0}% band (maximum-deviation test p = {}, {m} simulations).",
            100.0 * (1.0 - alpha),
            fmt_p(mad.p_value)
        ),
        Outcome::Clustered => format!(
            "Clustered: events are closer together than complete spatial randomness predicts, at distances {} (maximum-deviation test p = {}, {m} simulations).",
            list(Departure::Clustered),
            fmt_p(mad.p_value)
        ),
        Outcome::Regular => format!(
            "Regular: events are more evenly spaced than complete spatial randomness predicts, at distances {} (maximum-deviation test p = {}, {m} simulations).",
            list(Departure::Regular),
            fmt_p(mad.p_value)
        ),
        Outcome::Mixed => format!(
            "Not random: clustered at distances {} and regular at {} (maximum-deviation test p = {}, {m} simulations).",
            list(Departure::Clustered),
            list(Departure::Regular),
            fmt_p(mad.p_value)
        ),
    };
    text.push_str(&format!(
        " The integrated-deviation (DCLF) test gives p = {}",
        fmt_p(dclf.p_value)
    ));
    if dclf.rejects != mad.rejects {
        text.push_str(if dclf.rejects {
            ", which does reject at this level: the departure is spread over many distances rather than large at one."
        } else {
            ", which does not reject at this level: treat the result as borderline."
        });
    } else {
        text.push('.');
    }
    let caveats = vec![
        "The pointwise band (lightest shading) is not a test: a curve crossing it at some distance is expected by chance when many distances are looked at.".to_string(),
        "Complete spatial randomness assumes every place in the study area was equally likely to have an event. Where the population at risk is uneven, apparent clustering may just follow the population; comparing with controls answers that.".to_string(),
        "Distances outside the band show where the departure is largest; they are not separate tests at each distance.".to_string(),
    ];
    Verdict {
        outcome,
        ranges,
        text,
        caveats,
    }
}

#[cfg(test)]
mod tests {
    use super::{fmt_m, plain_list};

    #[test]
    fn test_plain_list() {
        let s = |v: &[&str]| v.iter().map(|x| x.to_string()).collect::<Vec<_>>();
        assert_eq!(plain_list(&s(&[])), "");
        assert_eq!(plain_list(&s(&["45 m to 1.1 km"])), "45 m to 1.1 km");
        assert_eq!(
            plain_list(&s(&["45 m to 1.1 km", "about 1.2 km"])),
            "45 m to 1.1 km and about 1.2 km"
        );
        assert_eq!(plain_list(&s(&["a", "b", "c"])), "a, b and c");
    }

    #[test]
    fn distances_written_without_trailing_zeros() {
        assert_eq!(fmt_m(0.0), "0 m");
        assert_eq!(fmt_m(0.25), "0.25 m");
        assert_eq!(fmt_m(12.0), "12 m");
        assert_eq!(fmt_m(12.34), "12.3 m");
        assert_eq!(fmt_m(250.4), "250 m");
    }
}
