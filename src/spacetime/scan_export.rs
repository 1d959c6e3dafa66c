//! What of a space–time scan may leave the page: its clusters as CSV or
//! GeoJSON, with centres **coarsened** to a grid of at least 100 m.
//!
//! A cluster's centre is an event location, so writing it exactly would
//! publish an original coordinate. Following the sharing rules of
//! [`crate::privacy::export`], centres are snapped to the nearest node of a
//! square grid of `round_m` metres (≥ 100 m) before they are written
//! (back-projected to longitude/latitude when the events were given so),
//! and each written centre is compared, as text, with every event's
//! location written the same way: a file where one coincides is treated
//! as holding original coordinates and refused. `internal: true` writes
//! the exact centres instead, labelled [`UNMASKED_LABEL`] inside the file.
//! The file holds no event, no event number and no seed-free simulation
//! detail: per cluster its rank, centre, radius, dates, counts, ratio, LLR
//! and p-value.

use super::scan::{StScanMode, StScanResult};
use crate::error::AnalysisError;
use crate::params::{Field, Params};
use crate::privacy::export::{
    csv_field, download_name, CoordinateOutput, ExportFile, ExportFormat, ExportPreview,
    NOTES_COLUMN, UNMASKED_LABEL,
};
use serde::{Deserialize, Serialize};
use serde_json::{json, Value};

/// Options of `spaceTimeScanExport`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct StScanExportOptions {
    pub format: ExportFormat,
    /// Default: longitude/latitude when the events were, else metres.
    pub coordinates: Option<CoordinateOutput>,
    /// Grid the centres are snapped to, metres (at least 100).
    pub round_m: f64,
    /// Write the exact centres, labelled "unmasked, internal use only".
    pub internal: bool,
    /// The date to write (the core has no clock).
    pub created: Option<String>,
}

impl Default for StScanExportOptions {
    fn default() -> Self {
        StScanExportOptions {
            format: ExportFormat::Csv,
            coordinates: None,
            round_m: 100.0,
            internal: false,
            created: None,
        }
    }
}

impl Params for StScanExportOptions {
    const NAME: &'static str = "spaceTimeScanExport";
    fn fields() -> Vec<Field> {
        vec![
            Field::choice("format", &["csv", "geo_json"], "file format"),
            Field::choice(
                "coordinates",
                &["metres", "lon_lat"],
                "coordinates written; empty = longitude/latitude when the events were given so",
            )
            .optional(),
            Field::number(
                "round_m",
                Some("m"),
                "cluster centres are snapped to a grid of this many metres before they are written",
            )
            .range(100.0, 100_000.0),
            Field::boolean(
                "internal",
                "write the exact centres (event locations), labelled unmasked, internal use only",
            ),
            Field::text("created", "date written into the file (YYYY-MM-DD …)").optional(),
        ]
    }
}

/// Writes the clusters of `r`. `events`: the coordinates of every event in
/// metres (to check the file against); `to_lonlat`: the back-projection
/// (required for longitude/latitude output).
pub fn export_clusters(
    r: &StScanResult,
    events: (&[f64], &[f64]),
    o: &StScanExportOptions,
    coordinates: CoordinateOutput,
    to_lonlat: Option<&dyn Fn(f64, f64) -> (f64, f64)>,
) -> Result<ExportFile, AnalysisError> {
    o.validate_in(None)?;
    let lonlat = coordinates == CoordinateOutput::LonLat;
    if lonlat && to_lonlat.is_none() {
        return Err(crate::params::bad(
            "coordinates",
            "longitude/latitude output needs events given in longitude/latitude; choose metres",
        ));
    }
    let dec = if lonlat { 6 } else { 1 };
    let write = |x: f64, y: f64| -> (String, String) {
        let (a, b) = match (lonlat, to_lonlat) {
            (true, Some(f)) => f(x, y),
            _ => (x, y),
        };
        (format!("{a:.dec$}"), format!("{b:.dec$}"))
    };
    let snap = |v: f64| (v / o.round_m).round() * o.round_m;
    let centres: Vec<(String, String)> = r
        .clusters
        .iter()
        .map(|c| {
            if o.internal {
                write(c.centre_x, c.centre_y)
            } else {
                write(snap(c.centre_x), snap(c.centre_y))
            }
        })
        .collect();
    let originals: std::collections::HashSet<(String, String)> = events
        .0
        .iter()
        .zip(events.1)
        .map(|(&x, &y)| write(x, y))
        .collect();
    let at_original = centres.iter().filter(|c| originals.contains(*c)).count();
    if at_original > 0 && !o.internal {
        return Err(crate::params::bad(
            "round_m",
            format!(
                "{at_original} coarsened cluster centres fall exactly on an event location as \
                 written: use a larger grid (round_m), or write the exact centres labelled for \
                 internal use only (internal: true)"
            ),
        ));
    }
    let names = if lonlat {
        ["longitude", "latitude"]
    } else {
        ["x_m", "y_m"]
    };
    let prospective = r.mode == StScanMode::Prospective;
    let mut fields: Vec<String> = vec!["rank".into(), names[0].into(), names[1].into()];
    for f in [
        "radius_m",
        "start_date",
        "end_date",
        "days",
        "observed",
        "expected",
        "ratio",
        "llr",
        "p_value",
    ] {
        fields.push(f.into());
    }
    if prospective {
        fields.push("recurrence_days".into());
    }
    let mut cautions = vec![
        "A cluster in space and time is not a cause.".to_string(),
        "Disclosure rules apply: a small count with its place and dates can identify people; suppress or merge small clusters as your rules say before publishing.".to_string(),
    ];
    if o.internal {
        cautions.insert(0, "The centres are event locations, written exactly: do not share this file outside the organisation.".into());
    } else {
        cautions.push(format!(
            "Centres are snapped to a {} m grid: a circle drawn around a written centre does not hold exactly the events counted.",
            crate::params::num(o.round_m)
        ));
    }
    let created = o.created.clone().unwrap_or_default();
    let mut notes: Vec<(String, String)> = vec![];
    if o.internal {
        notes.push(("label".into(), UNMASKED_LABEL.into()));
    }
    notes.extend([
        ("tool".into(), format!("Cloister {}", env!("CARGO_PKG_VERSION"))),
        ("created".into(), created.clone()),
        (
            "content".into(),
            "space-time permutation scan clusters (Kulldorff et al. 2005)".into(),
        ),
        (
            "coordinates".into(),
            if o.internal {
                "cluster centres exactly (event locations)".into()
            } else {
                format!(
                    "cluster centres snapped to a {} m grid",
                    crate::params::num(o.round_m)
                )
            },
        ),
        (
            "settings".into(),
            format!(
                "mode {}; largest circle {} % of events{}; longest interval {} days; {} permutations; data {} to {}",
                if prospective { "prospective" } else { "retrospective" },
                crate::params::num(r.max_share * 100.0),
                r.max_radius_m
                    .map(|v| format!(" and {} m", crate::params::num(v)))
                    .unwrap_or_default(),
                r.max_days_used,
                r.n_sim,
                r.first_date,
                r.last_date
            ),
        ),
    ]);
    for c in &cautions {
        notes.push(("caution".into(), c.clone()));
    }
    let rows: Vec<Vec<String>> = r
        .clusters
        .iter()
        .zip(&centres)
        .map(|(c, (a, b))| {
            let mut v = vec![
                (c.rank + 1).to_string(),
                a.clone(),
                b.clone(),
                format!("{:.0}", c.radius_m),
                c.start_date.clone(),
                c.end_date.clone(),
                c.days.to_string(),
                c.observed.to_string(),
                format!("{:.3}", c.expected),
                format!("{:.3}", c.ratio),
                format!("{:.4}", c.llr),
                format!("{:.4}", c.p_value),
            ];
            if prospective {
                v.push(
                    c.recurrence_days
                        .map_or(String::new(), |d| format!("{d:.1}")),
                );
            }
            v
        })
        .collect();
    let (text, mime, ext, notes_at) = match o.format {
        ExportFormat::Csv => {
            let mut out = String::new();
            let head: Vec<String> = fields.iter().map(|f| csv_field(f)).collect();
            out.push_str(&head.join(","));
            out.push(',');
            out.push_str(NOTES_COLUMN);
            out.push('\n');
            let note_text: Vec<String> = notes.iter().map(|(k, v)| format!("{k}: {v}")).collect();
            let n_rows = rows.len().max(1);
            for k in 0..n_rows {
                let mut line: Vec<String> = match rows.get(k) {
                    Some(r) => r.iter().map(|v| csv_field(v)).collect(),
                    None => vec![String::new(); fields.len()],
                };
                let note = if k + 1 < n_rows {
                    note_text.get(k).cloned().unwrap_or_default()
                } else {
                    note_text
                        .get(k..)
                        .map(|v| v.join(" | "))
                        .unwrap_or_default()
                };
                line.push(csv_field(&note));
                out.push_str(&line.join(","));
                out.push('\n');
            }
            (out, "text/csv", "csv", "the last column of the CSV")
        }
        ExportFormat::GeoJson => {
            let feats: Vec<Value> = r
                .clusters
                .iter()
                .zip(&rows)
                .zip(&centres)
                .map(|((_, row), (a, b))| {
                    let mut props = serde_json::Map::new();
                    for (f, v) in fields.iter().zip(row).skip(3) {
                        let val = v.parse::<f64>().map(|n| json!(n)).unwrap_or(json!(v));
                        props.insert(f.clone(), val);
                    }
                    props.insert("rank".into(), json!(row[0].parse::<u64>().unwrap_or(0)));
                    json!({
                        "type": "Feature",
                        "geometry": {"type": "Point", "coordinates": [
                            a.parse::<f64>().unwrap_or(0.0), b.parse::<f64>().unwrap_or(0.0)]},
                        "properties": props,
                    })
                })
                .collect();
            let meta: serde_json::Map<String, Value> = notes
                .iter()
                .filter(|(k, _)| k != "caution")
                .map(|(k, v)| (k.clone(), json!(v)))
                .chain(std::iter::once(("cautions".to_string(), json!(cautions))))
                .collect();
            let v = json!({"type": "FeatureCollection", "metadata": meta, "features": feats});
            (
                serde_json::to_string_pretty(&v).unwrap_or_default(),
                "application/geo+json",
                "geojson",
                "the GeoJSON's metadata member",
            )
        }
    };
    let what = if o.internal {
        "spacetime-clusters-UNMASKED-internal-only"
    } else {
        "spacetime-clusters"
    };
    Ok(ExportFile {
        text,
        file_name: download_name(what, &created, ext),
        mime: mime.into(),
        preview: ExportPreview {
            content: "space-time clusters".into(),
            format: o.format,
            fields,
            rows: r.clusters.len(),
            metadata_keys: notes.iter().map(|n| n.0.clone()).collect(),
            notes_at: notes_at.into(),
            contains_original_coordinates: o.internal,
            points_at_original_location: at_original,
            label: o.internal.then(|| UNMASKED_LABEL.to_string()),
            points_left_out: 0,
            cautions,
        },
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spacetime::scan::{StScanJob, StScanOptions};
    use crate::spacetime::TimedEvents;

    fn result() -> (StScanResult, TimedEvents) {
        // 30 events at one place on days 0–2 among 90 spread over 30 days.
        let (mut x, mut y, mut t) = (vec![], vec![], vec![]);
        for i in 0..90 {
            x.push(1234.5 + (i % 9) as f64 * 377.3);
            y.push(5678.9 + (i / 9) as f64 * 251.7);
            t.push((i * 7 % 30) as f64);
        }
        for i in 0..30 {
            x.push(2011.1);
            y.push(6129.3);
            t.push((i % 3) as f64);
        }
        let ev = TimedEvents::from_xyt(x, y, t).unwrap();
        let o = StScanOptions {
            n_sim: 19,
            ..Default::default()
        };
        (StScanJob::new(&ev, &o).unwrap().finish(), ev)
    }

    #[test]
    fn centres_are_coarsened_and_never_an_event_location() {
        let (r, ev) = result();
        assert!(r.clusters.len() >= 2);
        for format in [ExportFormat::Csv, ExportFormat::GeoJson] {
            let o = StScanExportOptions {
                format,
                ..Default::default()
            };
            let f =
                export_clusters(&r, (&ev.x, &ev.y), &o, CoordinateOutput::Metres, None).unwrap();
            assert!(!f.preview.contains_original_coordinates);
            assert!(
                f.text.contains("2000.0") && f.text.contains("6100.0"),
                "{}",
                f.text
            );
            for (x, y) in ev.x.iter().zip(&ev.y) {
                assert!(!f.text.contains(&format!("{x:.1}")), "{x}");
                assert!(!f.text.contains(&format!("{y:.1}")), "{y}");
            }
            assert!(!f.text.contains(UNMASKED_LABEL));
        }
        // The exact centres only when asked, and labelled.
        let o = StScanExportOptions {
            internal: true,
            ..Default::default()
        };
        let f = export_clusters(&r, (&ev.x, &ev.y), &o, CoordinateOutput::Metres, None).unwrap();
        assert!(f.text.contains("2011.1") && f.text.contains(UNMASKED_LABEL));
        assert!(f.file_name.contains("UNMASKED"));
    }

    #[test]
    fn a_centre_on_an_event_after_snapping_is_refused() {
        let (r, mut ev) = result();
        // An event exactly at the snapped centre of the top cluster.
        ev.x.push((r.clusters[0].centre_x / 100.0).round() * 100.0);
        ev.y.push((r.clusters[0].centre_y / 100.0).round() * 100.0);
        let e = export_clusters(
            &r,
            (&ev.x, &ev.y),
            &StScanExportOptions::default(),
            CoordinateOutput::Metres,
            None,
        );
        assert!(e.is_err());
        let small = StScanExportOptions {
            round_m: 50.0,
            ..Default::default()
        };
        assert!(
            export_clusters(&r, (&ev.x, &ev.y), &small, CoordinateOutput::Metres, None).is_err()
        );
    }
}
