//! What does it look like? Descriptive summary of a [`crate::Study`].
//!
//! Counts, intensity, centre, spread, the standard deviational ellipse,
//! nearest-neighbour distances, time span and category counts of the events,
//! all in metres (areas in km² for display).
//!
//! # Definitions (all with denominator n, the number of events)
//! * **Mean centre** (x̄, ȳ): the plain average of the projected
//!   coordinates; for lon/lat input it is also mapped back to lon/lat.
//! * **Standard distance** SD = √( Σ((xᵢ−x̄)² + (yᵢ−ȳ)²) / n ), the root mean
//!   square distance from the mean centre. Some texts divide by n − 2 (to
//!   count the two estimated centre coordinates); with n events our value is
//!   √((n−2)/n) times theirs (common practice, no single source).
//! * **Standard deviational ellipse**: the eigen-decomposition of the
//!   covariance matrix C = (1/n) Σ (pᵢ − p̄)(pᵢ − p̄)ᵀ. The semi-axes are
//!   √λ₁ ≥ √λ₂, i.e. **one standard deviation along each principal axis**
//!   (so SD² = λ₁ + λ₂). `major_axis_angle_deg` is the direction of the major
//!   axis, counter-clockwise from the x axis (east), in [0, 180). Other
//!   conventions exist: some scale both axes by √2 (so the axes relate to the
//!   standard distance) and some use n − 2; neither is used here (common practice, no single source). For a
//!   bivariate normal pattern the one-SD ellipse holds about 1 − e^(−1/2)
//!   ≈ 39.3 % of the events (derived here).
//! * **Nearest-neighbour distances**: over all events, coincident events
//!   count as distance 0 (see [`crate::index`]). Median of an even count is
//!   the mean of the two middle values.
//!
//! Weighted versions (using the weight column) are not computed yet.

use crate::study::{Coincidence, Study};
use crate::window::WindowOrigin;
use serde::Serialize;

/// Rows read, accepted and rejected for one layer.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct LayerCounts {
    pub rows_read: u64,
    pub accepted: usize,
    pub rejected: usize,
}

/// The mean centre.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MeanCentre {
    /// Metres in the study's planar grid.
    pub x_m: f64,
    pub y_m: f64,
    /// Longitude/latitude, when the input was geographic.
    pub lon: Option<f64>,
    pub lat: Option<f64>,
}

/// The standard deviational ellipse (see the module docs for the convention).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Ellipse {
    /// Centre = the mean centre, metres.
    pub centre_x_m: f64,
    pub centre_y_m: f64,
    /// Major-axis direction, degrees counter-clockwise from east, in [0, 180).
    pub major_axis_angle_deg: f64,
    /// One standard deviation along the major axis, metres.
    pub semi_major_m: f64,
    /// One standard deviation along the minor axis, metres.
    pub semi_minor_m: f64,
    /// Outline with 72 vertices (closed: 73 points), metres.
    pub outline_m: Vec<[f64; 2]>,
    /// The same outline in lon/lat, when the input was geographic.
    pub outline_lonlat: Option<Vec<[f64; 2]>>,
}

/// Nearest-neighbour distance statistics, metres.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct NnSummary {
    pub min: f64,
    pub median: f64,
    pub mean: f64,
    pub max: f64,
}

/// First and last event time.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TimeSpan {
    /// ISO 8601: a date (`2025-03-04`) when every time is a whole day, else a
    /// UTC date-time to the second (`2025-03-04T14:05:00Z`).
    pub first: String,
    pub last: String,
    pub span_days: f64,
    /// Events with a usable time (non-finite values are skipped).
    pub n_with_time: usize,
    /// Events known only within a from–to window, and the median window
    /// length in days (`None` without windows). The span above runs from
    /// the earliest start to the latest start.
    pub n_windows: usize,
    pub median_window_days: Option<f64>,
}

/// Events in one category.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CategoryCount {
    pub name: String,
    pub count: usize,
}

/// The descriptive summary shown first after loading.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    pub n_events: usize,
    /// `None` when no control layer was given.
    pub n_controls: Option<usize>,
    pub events: LayerCounts,
    pub controls: Option<LayerCounts>,
    /// One sentence on how coordinates became metres.
    pub projection: String,
    pub window_origin: WindowOrigin,
    pub window_area_km2: f64,
    /// Events per km² of the study area.
    pub intensity_per_km2: f64,
    pub mean_centre: MeanCentre,
    /// Metres, denominator n.
    pub standard_distance_m: f64,
    /// `None` with fewer than 2 events.
    pub ellipse: Option<Ellipse>,
    /// `None` with fewer than 2 events.
    pub nearest_neighbour_m: Option<NnSummary>,
    /// `None` when there is no time column (or no usable time).
    pub time_span: Option<TimeSpan>,
    /// In the order of the category names; empty when there is no category column.
    pub categories: Vec<CategoryCount>,
    pub coincident: Coincidence,
    pub warnings: Vec<String>,
}

/// Mean, covariance (denominator n) of the points.
fn moments(x: &[f64], y: &[f64]) -> (f64, f64, f64, f64, f64) {
    let n = x.len() as f64;
    let mx = x.iter().sum::<f64>() / n;
    let my = y.iter().sum::<f64>() / n;
    let (mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0);
    for (&a, &b) in x.iter().zip(y) {
        let (dx, dy) = (a - mx, b - my);
        sxx += dx * dx;
        syy += dy * dy;
        sxy += dx * dy;
    }
    (mx, my, sxx / n, syy / n, sxy / n)
}

/// Eigenvalues (λ₁ ≥ λ₂) of [[a, b], [b, c]] and the angle of the first
/// eigenvector, radians in [0, π).
fn eigen_sym2(a: f64, b: f64, c: f64) -> (f64, f64, f64) {
    let m = (a + c) / 2.0;
    let r = ((a - c) / 2.0).hypot(b);
    let l1 = m + r;
    // λ₂ = det/λ₁ is more accurate than m − r when λ₂ ≪ λ₁.
    let l2 = if l1 > 0.0 {
        ((a * c - b * b) / l1).max(0.0)
    } else {
        0.0
    };
    let mut t = 0.5 * (2.0 * b).atan2(a - c);
    if t < 0.0 {
        t += std::f64::consts::PI;
    }
    if t >= std::f64::consts::PI {
        t -= std::f64::consts::PI;
    }
    (l1, l2, t)
}

/// Civil date from days since 1970-01-01 (proleptic Gregorian; the
/// days-from-civil inverse published by H. Hinnant, "chrono-Compatible
/// Low-Level Date Algorithms" (from memory)).
fn civil_from_days(z: i64) -> (i64, i64, i64) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + if m <= 2 { 1 } else { 0 };
    (y, m, d)
}

/// ISO 8601 text for a time in days since 1970-01-01T00:00Z.
fn iso(days: f64, with_clock: bool) -> String {
    // ±10⁸ days covers ±270 000 years; beyond that the value is clamped.
    let secs = (days.clamp(-1e8, 1e8) * 86_400.0).round() as i64;
    let (d, s) = (secs.div_euclid(86_400), secs.rem_euclid(86_400));
    let (y, m, dd) = civil_from_days(d);
    if with_clock {
        format!(
            "{y:04}-{m:02}-{dd:02}T{:02}:{:02}:{:02}Z",
            s / 3600,
            s / 60 % 60,
            s % 60
        )
    } else {
        format!("{y:04}-{m:02}-{dd:02}")
    }
}

/// Summarises the events of a study.
pub fn summarise(study: &Study) -> Summary {
    let ev = &study.events;
    let (x, y) = (ev.x(), ev.y());
    let n = ev.len();
    let proj = &study.projection;
    let area_km2 = study.window.area() / 1e6;

    let (mx, my, sxx, syy, sxy) = if n > 0 {
        moments(x, y)
    } else {
        (0.0, 0.0, 0.0, 0.0, 0.0)
    };
    let back = |e: f64, no: f64| proj.is_geographic().then(|| proj.inverse(e, no));
    let centre_ll = back(mx, my);
    let mean_centre = MeanCentre {
        x_m: mx,
        y_m: my,
        lon: centre_ll.map(|p| p.0),
        lat: centre_ll.map(|p| p.1),
    };

    let ellipse = (n >= 2).then(|| {
        let (l1, l2, t) = eigen_sym2(sxx, sxy, syy);
        let (a, b) = (l1.sqrt(), l2.sqrt());
        let (ct, st) = (t.cos(), t.sin());
        let outline_m: Vec<[f64; 2]> = (0..=72)
            .map(|k| {
                let u = 2.0 * std::f64::consts::PI * (k % 72) as f64 / 72.0;
                let (p, q) = (a * u.cos(), b * u.sin());
                [mx + p * ct - q * st, my + p * st + q * ct]
            })
            .collect();
        let outline_lonlat = proj.is_geographic().then(|| {
            outline_m
                .iter()
                .map(|p| {
                    let (lon, lat) = proj.inverse(p[0], p[1]);
                    [lon, lat]
                })
                .collect()
        });
        Ellipse {
            centre_x_m: mx,
            centre_y_m: my,
            major_axis_angle_deg: t.to_degrees(),
            semi_major_m: a,
            semi_minor_m: b,
            outline_m,
            outline_lonlat,
        }
    });

    // Only the distribution is needed: the distances in grid order, the
    // median by selection (linear time), the same values as sorting.
    // The index kept with the events (built at intake for the coincidences).
    let nearest_neighbour_m = ev.index().nn_distances_unordered().map(|mut d| {
        let m = d.len();
        let mean = d.iter().sum::<f64>() / m as f64;
        let (min, max) = d
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| {
                (lo.min(v), hi.max(v))
            });
        let (lower, &mut mid, _) = d.select_nth_unstable_by(m / 2, f64::total_cmp);
        let median = if m % 2 == 1 {
            mid
        } else {
            let below = lower.iter().copied().max_by(f64::total_cmp).unwrap_or(mid);
            (below + mid) / 2.0
        };
        NnSummary {
            min,
            median,
            mean,
            max,
        }
    });

    let time_span = ev.time().and_then(|t| {
        // One pass over the finite times: how many, first, last, and
        // whether any is not on a whole day.
        let (mut n_ok, mut first, mut last, mut clock) =
            (0usize, f64::INFINITY, f64::NEG_INFINITY, false);
        for &v in t.iter().filter(|v| v.is_finite()) {
            n_ok += 1;
            first = first.min(v);
            last = last.max(v);
            clock = clock || ((v * 86_400.0).round() as i64).rem_euclid(86_400) != 0;
        }
        if n_ok == 0 {
            return None;
        }
        Some(TimeSpan {
            first: iso(first, clock),
            last: iso(last, clock),
            span_days: last - first,
            n_with_time: n_ok,
            n_windows: ev.time_windows().0,
            median_window_days: ev.time_windows().1,
        })
    });

    let categories = match ev.category() {
        Some(c) => {
            let names = ev.category_names();
            let mut counts = vec![0usize; names.len()];
            let mut unnamed = 0;
            for &k in c {
                match counts.get_mut(k as usize) {
                    Some(v) => *v += 1,
                    None => unnamed += 1,
                }
            }
            let mut out: Vec<CategoryCount> = names
                .iter()
                .zip(counts)
                .map(|(name, count)| CategoryCount {
                    name: name.clone(),
                    count,
                })
                .collect();
            if unnamed > 0 {
                out.push(CategoryCount {
                    name: "(unnamed)".to_string(),
                    count: unnamed,
                });
            }
            out
        }
        None => Vec::new(),
    };

    let counts = |rows_read: u64, accepted: usize, rejected: usize| LayerCounts {
        rows_read,
        accepted,
        rejected,
    };
    Summary {
        n_events: n,
        n_controls: study.controls.as_ref().map(|c| c.len()),
        events: counts(study.events_rows_read, n, study.event_rejections.len()),
        controls: study.controls.as_ref().map(|c| {
            counts(
                study.controls_rows_read,
                c.len(),
                study.control_rejections.len(),
            )
        }),
        projection: proj.describe(),
        window_origin: study.window.origin(),
        window_area_km2: area_km2,
        intensity_per_km2: if area_km2 > 0.0 {
            n as f64 / area_km2
        } else {
            0.0
        },
        mean_centre,
        standard_distance_m: (sxx + syy).sqrt(),
        ellipse,
        nearest_neighbour_m,
        time_span,
        categories,
        coincident: study.coincident,
        warnings: study.warnings.clone(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::LengthUnit;
    use crate::projection::Projection;
    use crate::study::Pattern;
    use crate::window::Window;

    fn study(x: Vec<f64>, y: Vec<f64>, window: Window) -> Study {
        Study {
            projection: Projection::Planar {
                unit: LengthUnit::Metre,
            },
            window,
            events: Pattern::from_xy(x, y).unwrap(),
            controls: None,
            event_rejections: vec![],
            events_rows_read: 0,
            control_rejections: vec![],
            controls_rows_read: 0,
            coincident: Coincidence::default(),
            warnings: vec![],
        }
    }

    /// Closed form: a k×k lattice with spacing d at ((i+½)d, (j+½)d) has mean
    /// centre (kd/2, kd/2), per-axis variance d²(k²−1)/12 (discrete uniform),
    /// so SD = d·√((k²−1)/6) and a circular ellipse of semi-axes d·√((k²−1)/12);
    /// every NN distance is d (docs/methods.md#clark-evans lattice check).
    #[test]
    fn test_square_lattice_summary() {
        let (k, d) = (20usize, 50.0);
        let (x, y): (Vec<f64>, Vec<f64>) = (0..k * k)
            .map(|i| (((i % k) as f64 + 0.5) * d, ((i / k) as f64 + 0.5) * d))
            .unzip();
        let side = k as f64 * d;
        let s = summarise(&study(
            x,
            y,
            Window::rectangle(0.0, 0.0, side, side).unwrap(),
        ));
        assert_eq!(s.n_events, 400);
        assert!((s.window_area_km2 - 1.0).abs() < 1e-12);
        assert!((s.intensity_per_km2 - 400.0).abs() < 1e-9);
        assert!(
            (s.mean_centre.x_m - 500.0).abs() < 1e-9 && (s.mean_centre.y_m - 500.0).abs() < 1e-9
        );
        let kk = (k * k) as f64;
        let sd = d * ((kk - 1.0) / 6.0).sqrt();
        assert!((s.standard_distance_m - sd).abs() < 1e-9 * sd);
        let e = s.ellipse.unwrap();
        let semi = d * ((kk - 1.0) / 12.0).sqrt();
        assert!((e.semi_major_m - semi).abs() < 1e-9 * semi);
        assert!((e.semi_minor_m - semi).abs() < 1e-9 * semi);
        assert_eq!(e.outline_m.len(), 73);
        assert_eq!(e.outline_m[0], e.outline_m[72]);
        let nn = s.nearest_neighbour_m.unwrap();
        assert_eq!((nn.min, nn.median, nn.mean, nn.max), (d, d, d, d));
        assert!(s.time_span.is_none() && s.categories.is_empty() && s.mean_centre.lon.is_none());
    }

    /// Points on the line y = x: the ellipse points at 45° with a zero minor axis.
    #[test]
    fn test_ellipse_orientation_on_a_line() {
        let x = vec![0.0, 1.0, 2.0, 3.0];
        let s = summarise(&study(
            x.clone(),
            x,
            Window::rectangle(-1.0, -1.0, 4.0, 4.0).unwrap(),
        ));
        let e = s.ellipse.unwrap();
        assert!((e.major_axis_angle_deg - 45.0).abs() < 1e-9);
        assert!(e.semi_minor_m.abs() < 1e-9);
        // var along the line: Σ(√2·(i−1.5))²/4 = 2.5.
        assert!((e.semi_major_m - 2.5f64.sqrt()).abs() < 1e-12);
        // Vertical line: 90°.
        let s = summarise(&study(
            vec![0.0; 3],
            vec![0.0, 1.0, 5.0],
            Window::rectangle(-1.0, -1.0, 6.0, 6.0).unwrap(),
        ));
        assert!((s.ellipse.unwrap().major_axis_angle_deg - 90.0).abs() < 1e-9);
    }

    #[test]
    fn test_single_event() {
        let s = summarise(&study(
            vec![3.0],
            vec![4.0],
            Window::rectangle(0.0, 0.0, 10.0, 10.0).unwrap(),
        ));
        assert_eq!(s.n_events, 1);
        assert_eq!(s.standard_distance_m, 0.0);
        assert!(s.ellipse.is_none() && s.nearest_neighbour_m.is_none());
        assert_eq!((s.mean_centre.x_m, s.mean_centre.y_m), (3.0, 4.0));
    }

    #[test]
    fn test_empty() {
        let s = summarise(&study(
            vec![],
            vec![],
            Window::rectangle(0.0, 0.0, 10.0, 10.0).unwrap(),
        ));
        assert_eq!(s.n_events, 0);
        assert_eq!(s.standard_distance_m, 0.0);
        assert!(s.ellipse.is_none() && s.nearest_neighbour_m.is_none());
        assert_eq!(s.intensity_per_km2, 0.0);
    }

    #[test]
    fn test_iso_dates() {
        assert_eq!(iso(0.0, false), "1970-01-01");
        // Derived: 2000-01-01 is day 30·365 + 7 leap days = 10957, + 31 + 29 → 2000-03-01 is
        // 11017; 2024-01-01 is 54·365 + 13 = 19723, + 31 + 28 → 2024-02-29 is 19782.
        assert_eq!(iso(11017.0, false), "2000-03-01");
        assert_eq!(iso(11016.0, false), "2000-02-29");
        assert_eq!(iso(19782.0, false), "2024-02-29");
        assert_eq!(iso(-1.0, false), "1969-12-31");
        assert_eq!(iso(19782.5 + 1.0 / 1440.0, true), "2024-02-29T12:01:00Z");
        // Huge values are clamped, not a panic: ±10⁸ days.
        assert_eq!(iso(f64::MAX, false), iso(1e8, false));
        assert!(iso(1e8, false).starts_with("275760-"));
    }

    /// Times and categories come through Study::build from a layer.
    #[test]
    fn test_time_span_and_categories() {
        use crate::input::{CoordKind, RawLayer, ResolvedMapping, SourceFormat};
        use crate::study::AreaFallback;
        let layer = RawLayer {
            format: SourceFormat::GeoJson,
            columns: vec![],
            mapping: ResolvedMapping::default(),
            coords: CoordKind::Planar {
                unit: LengthUnit::Metre,
            },
            x: vec![0.0, 10.0, 0.0, 10.0, 5.0],
            y: vec![0.0, 0.0, 10.0, 10.0, 5.0],
            time: Some(vec![19782.0, 19700.0, f64::NAN, 19790.0, 19783.0]),
            // Two windows (3 and 0.5 days); an end equal to its start is an instant.
            time_end: Some(vec![19785.0, f64::NAN, f64::NAN, 19790.0, 19783.5]),
            category: Some(vec![1, 0, 1, 1, 7]),
            category_names: vec!["a".into(), "b".into()],
            weight: None,
            row: vec![1, 2, 3, 4, 5],
            rejections: vec![],
            incomplete: vec![],
            rows_read: 5,
            time_has_clock: false,
            date_order: None,
            encoding: crate::input::text::Encoding::Utf8,
            keep_far_points: false,
        };
        let st = Study::build(&layer, None, None, AreaFallback::BoundingBox).unwrap();
        let s = summarise(&st);
        let t = s.time_span.unwrap();
        assert_eq!(
            (t.first.as_str(), t.last.as_str()),
            ("2023-12-09", "2024-03-08")
        );
        assert_eq!((t.span_days, t.n_with_time), (90.0, 4));
        assert_eq!((t.n_windows, t.median_window_days), (2, Some(1.75)));
        let c: Vec<(&str, usize)> = s
            .categories
            .iter()
            .map(|c| (c.name.as_str(), c.count))
            .collect();
        assert_eq!(c, vec![("a", 1), ("b", 3), ("(unnamed)", 1)]);
        assert_eq!(
            s.events,
            LayerCounts {
                rows_read: 5,
                accepted: 5,
                rejected: 0
            }
        );
        assert_eq!(s.window_origin, WindowOrigin::BoundingBox);
        // The drawn-around-the-points warning, and the event without a time.
        assert_eq!(s.warnings.len(), 2);
        assert!(s.warnings[1].starts_with("1 event(s) have no usable date"));
    }

    #[test]
    fn test_nn_median_even_count() {
        // NN distances: 1, 1, 3, 3 → median 2.
        let s = summarise(&study(
            vec![0.0, 1.0, 10.0, 13.0],
            vec![0.0; 4],
            Window::rectangle(-1.0, -1.0, 20.0, 1.0).unwrap(),
        ));
        let nn = s.nearest_neighbour_m.unwrap();
        assert_eq!((nn.min, nn.median, nn.mean, nn.max), (1.0, 2.0, 2.0, 3.0));
    }
}
