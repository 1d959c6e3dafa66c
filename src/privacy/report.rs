//! The sharing report: one self-contained HTML file with the page's
//! Content-Security-Policy, no scripts and no links out, holding settings,
//! distributions, tables of counts and a map picture the page drew from the
//! shared layers, never a coordinate. Also what a report may contain
//! ([`choose_report_contents`]) and the [`CAUTIONS`] shown with every
//! sharing tool.

use super::aggregate::{Layout, LineKind};
use super::cost::{compare, CostParams};
use super::export::{cautions as export_cautions, ExportContent};
use super::kanon::KBasis;
use super::shared::{MaskState, SharingState, TableState};
use super::{CellShape, DistanceLaw, MaskMethod, Spread};
use crate::error::AnalysisError;
use crate::study::Study;
use serde::Serialize;
use serde_json::Value;
use std::fmt;

/// The Content-Security-Policy of the page, repeated in the report so that
/// it, too, can fetch nothing.
pub const REPORT_CSP: &str = "default-src 'none'; script-src 'unsafe-inline' 'wasm-unsafe-eval' blob:; worker-src blob:; style-src 'unsafe-inline'; img-src data: blob:; connect-src 'none'";

/// Cautions written into the report and shown in the page.
pub const CAUTIONS: [&str; 5] = [
    "Dot maps can identify people: published maps of case locations have been turned back \
     into home addresses, and lowering the map resolution did not prevent it (Brownstein, \
     Cassa & Mandl 2006, N Engl J Med 355:1741–1742). Share only masked points or suppressed \
     counts, never the original locations.",
    "Masking changes the statistics: nearest-neighbour distances, clustering at distances up \
     to about twice the largest shift, the intensity surface and any space-time closeness \
     below that distance differ from those of the true locations (see the cost table).",
    "Mask once: several independently masked copies of the same points can be averaged back \
     towards the true locations (Cassa, Wieland & Mandl 2008, Int J Health Geogr 7:45). Keep \
     this masked copy for every later release.",
    "Local data-protection law, your organisation's disclosure-control policy and the data \
     owner's rules prevail over any default in this tool; the threshold of 5 for small counts \
     is common practice, not a rule from any single source.",
    "Do not release masked points together with counts that have hidden cells for the same \
     events: counting the masked points per area gives the hidden counts back, roughly. A \
     report holds one or the other whenever counts are hidden.",
];

/// Why a report could not be made.
#[derive(Debug, Clone, PartialEq)]
pub enum ReportError {
    /// What was asked cannot go into a report; `code` is machine-readable
    /// (`choose_report_contents`, `nothing_to_report`, `bad_options`).
    Refused { code: &'static str, message: String },
    /// The cost-of-masking summaries failed.
    Analysis(AnalysisError),
}

impl ReportError {
    fn refused(code: &'static str, message: &str) -> ReportError {
        ReportError::Refused {
            code,
            message: message.to_string(),
        }
    }
}

impl fmt::Display for ReportError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReportError::Refused { message, .. } => f.write_str(message),
            ReportError::Analysis(e) => e.fmt(f),
        }
    }
}

impl std::error::Error for ReportError {}

/// What a report holds when both masked points and counts exist (one
/// home: the export request's option, [`super::export::ReportHolds`]).
pub use super::export::ReportHolds;

/// The shared results one report is made from.
pub struct ReportView<'a> {
    pub mask: Option<&'a MaskState>,
    pub table: Option<&'a TableState>,
}

/// Chooses what goes into the report. Masked points and counts with
/// hidden cells never go together: counting the masked points per area
/// would give the hidden counts back.
pub fn choose_report_contents(
    st: &SharingState,
    holds: Option<ReportHolds>,
) -> Result<ReportView<'_>, ReportError> {
    let (mask, table) = (st.mask.as_ref(), st.table.as_ref());
    let hidden = table.is_some_and(|t| t.table.cells.iter().any(|c| c.suppressed));
    let both = mask.is_some() && table.is_some();
    let refuse = || {
        ReportError::refused(
            "choose_report_contents",
            "the report would hold masked points and counts with hidden cells: counting the \
             masked points per area would give the hidden counts back. Choose one: \
             report_holds \"masked_points\" or \"counts\"",
        )
    };
    match holds {
        None | Some(ReportHolds::Both) if both && hidden => Err(refuse()),
        None | Some(ReportHolds::Both) => Ok(ReportView { mask, table }),
        Some(ReportHolds::MaskedPoints) if mask.is_none() => Err(ReportError::refused(
            "nothing_to_report",
            "there are no masked points to report: mask the points first",
        )),
        Some(ReportHolds::MaskedPoints) => Ok(ReportView { mask, table: None }),
        Some(ReportHolds::Counts) if table.is_none() => Err(ReportError::refused(
            "nothing_to_report",
            "there are no counts to report: count the events per area first",
        )),
        Some(ReportHolds::Counts) => Ok(ReportView { mask: None, table }),
    }
}

/// Escapes text for HTML.
fn esc(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            _ => o.push(c),
        }
    }
    o
}

fn num(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return "—".into();
    }
    format!("{v:.digits$}")
}

fn metres(v: Option<f64>) -> String {
    v.map_or("—".into(), |v| format!("{} m", num(v, 1)))
}

fn law_words(l: DistanceLaw) -> &'static str {
    match l {
        DistanceLaw::AreaUniform => "even over the ring's area",
        DistanceLaw::DistanceUniform => "even over distance",
    }
}

fn kv(rows: &[(String, String)]) -> String {
    let mut s = String::from("<table class=\"kv\"><tbody>");
    for (k, v) in rows {
        s.push_str(&format!(
            "<tr><th scope=\"row\">{}</th><td>{}</td></tr>",
            esc(k),
            esc(v)
        ));
    }
    s.push_str("</tbody></table>");
    s
}

fn settings_rows(m: &MaskMethod) -> Vec<(String, String)> {
    let mut r = Vec::new();
    match m {
        MaskMethod::Donut(d) => {
            r.push((
                "Method".into(),
                "random shift within a ring (donut geomasking, Hampton et al. 2010)".into(),
            ));
            r.push(("Smallest shift".into(), metres(Some(d.r_min_m))));
            r.push(("Largest shift".into(), metres(Some(d.r_max_m))));
            r.push(("Distance drawn".into(), law_words(d.law).into()));
            r.push(("Tries per point".into(), d.max_tries.to_string()));
            r.push(("Design mean shift".into(), metres(Some(d.design_mean_m))));
            r.push((
                "Design median shift".into(),
                metres(Some(d.design_median_m)),
            ));
        }
        MaskMethod::KAnonymity(k) => {
            r.push((
                "Method".into(),
                "shift until at least k addresses are as close (spatial k-anonymity)".into(),
            ));
            r.push(("Target k".into(), k.target_k.to_string()));
            r.push((
                "k measured against".into(),
                match k.basis {
                    KBasis::PopulationLayer => format!(
                        "a population layer of {} points",
                        k.population_points.unwrap_or(0)
                    ),
                    KBasis::UniformDensity => format!(
                        "a uniform residential density of {} per km² (expected, not counted)",
                        k.density_per_km2.map_or("—".into(), |d| num(d, 1))
                    ),
                },
            ));
            r.push(("Smallest shift asked".into(), metres(Some(k.r_min_m))));
            if let Some(u) = k.r_min_used_m {
                r.push(("Smallest shift used".into(), metres(Some(u))));
            }
            r.push(("Largest shift".into(), metres(Some(k.r_max_m))));
            r.push(("Distance drawn".into(), law_words(k.law).into()));
            r.push(("Area factor".into(), num(k.area_factor, 2)));
            r.push(("Tries per point".into(), k.max_tries.to_string()));
            r.push((
                "Points short of the target".into(),
                if k.keep_below_target {
                    "kept at their best location and counted below"
                } else {
                    "left out"
                }
                .into(),
            ));
        }
    }
    r.push((
        "Seed".into(),
        "not recorded (with it the shifts could be replayed and undone)".into(),
    ));
    r
}

fn spread_row(label: &str, s: &Option<Spread>, unit: &str, digits: usize) -> String {
    match s {
        Some(s) => format!(
            "<tr><th scope=\"row\">{}</th><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
            esc(label),
            num(s.min, digits) + unit,
            num(s.q1, digits) + unit,
            num(s.median, digits) + unit,
            num(s.q3, digits) + unit,
            num(s.max, digits) + unit
        ),
        None => format!("<tr><th scope=\"row\">{}</th><td colspan=\"5\">no points</td></tr>", esc(label)),
    }
}

/// Points below which the original pattern's summaries are not printed
/// (with so few points an average distance is nearly a location).
const REPORT_MIN_ORIGINAL: usize = 5;

/// Report-only options.
#[derive(Debug, Clone, Copy, Default)]
pub struct ReportOptions<'a> {
    /// A title line ("Shared results" when absent or blank).
    pub title: Option<&'a str>,
    /// A PNG as a data URL, drawn by the page from masked / aggregated layers.
    pub map_image: Option<&'a str>,
    /// The relative-risk surface drawn last, summarised without locations.
    pub risk: Option<&'a crate::risk::RiskSurfaceResult>,
}

/// The relative-risk surface in words and numbers, never in places: its
/// settings, the global test and how much of the area its pointwise lines
/// enclose. Left out (and said so) when the surface's disclosure check
/// found events its bumps could point at.
fn risk_section(rr: &crate::risk::RiskSurfaceResult, sections: &mut Vec<String>) -> String {
    let mut out = String::from("<section><h2>Relative risk compared with the population</h2>");
    if let Some(w) = rr.privacy.as_ref().and_then(|p| p.warning.as_ref()) {
        sections.push("relative-risk summary left out (disclosure check)".into());
        out.push_str(&format!(
            "<p>The relative-risk surface is not summarised here: {} Draw it with a larger \
             bandwidth before sharing anything about it.</p></section>",
            esc(w)
        ));
        return out;
    }
    sections.push("relative-risk summary".into());
    out.push_str(
        "<p>Kernel estimate of the ratio of the case density to the population density, both \
         smoothed with one bandwidth (Bithell 1990; Kelsall &amp; Diggle 1995). Lines of raised \
         and lowered risk are pointwise: about 5 % of the area is expected inside them by \
         chance alone. The global test asks whether the risk varies at all.</p>",
    );
    let population = if rr.weighted {
        format!(
            "{} points with counts ({} people)",
            rr.n_control_points,
            num(rr.controls_total, 0)
        )
    } else {
        format!("{} controls", rr.n_control_points)
    };
    out.push_str(&kv(&[
        ("Cases".into(), rr.n_cases.to_string()),
        ("Population".into(), population),
        (
            "Bandwidth".into(),
            format!("{} m ({})", num(rr.bandwidth_m, 0), esc(rr.method_text)),
        ),
        (
            "Global test of constant risk".into(),
            format!(
                "p = {} ({} random labellings)",
                num(rr.t_p_value, 3),
                rr.n_sim
            ),
        ),
        (
            "Share of the area with raised risk (pointwise)".into(),
            format!("{} %", num(100.0 * rr.raised_share, 1)),
        ),
        (
            "Share of the area with lowered risk (pointwise)".into(),
            format!("{} %", num(100.0 * rr.lowered_share, 1)),
        ),
        (
            "Share of the area with too few controls to say".into(),
            format!("{} %", num(100.0 * rr.masked_share, 1)),
        ),
    ]));
    out.push_str("<p class=\"note\">A raised risk is not a cause: controls from another population, or placed differently, give raised or lowered risk by themselves.</p></section>");
    out
}

/// The report's HTML and the names of its sections.
pub fn report_html(
    study: &Study,
    st: &ReportView<'_>,
    args: &ReportOptions<'_>,
    created: &str,
) -> Result<(String, Vec<String>), ReportError> {
    let mut sections = Vec::new();
    let mut body = String::new();
    let title = args
        .title
        .filter(|t| !t.trim().is_empty())
        .unwrap_or("Shared results")
        .to_string();
    body.push_str(&format!("<h1>{}</h1>", esc(&title)));
    body.push_str(&format!(
        "<p class=\"meta\">Made with Cloister version {} on {}. This report holds no original \
         locations and no coordinates: only settings, distributions, counts and a map drawn \
         from masked or aggregated layers.</p>",
        esc(crate::VERSION),
        esc(created)
    ));
    if let Some(img) = args.map_image {
        let ok = img.len() < 30_000_000
            && img.strip_prefix("data:image/png;base64,").is_some_and(|b| {
                !b.is_empty()
                    && b.bytes()
                        .all(|c| c.is_ascii_alphanumeric() || c == b'+' || c == b'/' || c == b'=')
            });
        if !ok {
            return Err(ReportError::refused(
                "bad_options",
                "map_image must be a PNG data URL (data:image/png;base64,…)",
            ));
        }
        sections.push("map picture".to_string());
        body.push_str(&format!(
            "<figure><img alt=\"Map of the shared layers\" src=\"{img}\"><figcaption>Map drawn \
             from the shared layers only (masked points and/or counts per area); original \
             points are not in it. The study area outline appears only when it came from a \
             boundary file.</figcaption></figure>"
        ));
    }
    if let Some(rr) = args.risk {
        body.push_str(&risk_section(rr, &mut sections));
    }
    if let Some(ms) = st.mask {
        let m = &ms.masked;
        sections.push("masking settings and results".into());
        body.push_str("<section><h2>Masked points</h2>");
        body.push_str(&format!(
            "<p>{} of {} points were masked and may be shared; {} could not be masked as asked \
             and are left out of every export.</p>",
            m.x.len(),
            m.n_input,
            m.unplaced.len()
        ));
        body.push_str("<h3>Settings</h3>");
        body.push_str(&kv(&settings_rows(&m.method)));
        body.push_str(if ms.k.is_some() {
            "<h3>Achieved shift and k</h3>"
        } else {
            "<h3>Achieved shift</h3>"
        });
        body.push_str("<table><thead><tr><th></th><th>min</th><th>lower quartile</th><th>median</th><th>upper quartile</th><th>max</th></tr></thead><tbody>");
        body.push_str(&spread_row("Shift", &m.displacement, " m", 1));
        body.push_str("</tbody></table>");
        if let Some(k) = &ms.k {
            if let Some(s) = &k.summary {
                body.push_str(&kv(&[
                    ("Target k".into(), k.target_k.to_string()),
                    ("Smallest k".into(), num(s.min, 1)),
                    ("5th percentile of k".into(), num(s.p05, 1)),
                    ("Median k".into(), num(s.median, 1)),
                    (
                        "Share of shared points below the target".into(),
                        format!("{} %", num(100.0 * s.share_below_target, 1)),
                    ),
                ]));
            }
        }
        if !m.unplaced.is_empty() {
            let mut by: Vec<(String, usize)> = Vec::new();
            for u in &m.unplaced {
                let code = serde_json::to_value(&u.reason)
                    .ok()
                    .and_then(|v| v.get("code").and_then(Value::as_str).map(str::to_string))
                    .unwrap_or_default();
                let words = match code.as_str() {
                    "no_place_inside_area" => "no shifted place fell inside the study area",
                    "too_few_population_nearby" => "too few addresses nearby to reach the target",
                    "target_not_reached" => "the target was not reached within the tries",
                    _ => "other",
                };
                match by.iter_mut().find(|(w, _)| w == words) {
                    Some(e) => e.1 += 1,
                    None => by.push((words.to_string(), 1)),
                }
            }
            body.push_str("<h3>Points left out</h3><ul>");
            for (w, n) in by {
                body.push_str(&format!("<li>{n}: {}</li>", esc(&w)));
            }
            body.push_str("</ul>");
        }
        for n in &m.notes {
            body.push_str(&format!("<p class=\"note\">{}</p>", esc(n)));
        }
        // Cost of masking.
        let cost = compare(
            study.events.x(),
            study.events.y(),
            &m.x,
            &m.y,
            &study.window,
            &CostParams::default(),
        )
        .map_err(ReportError::Analysis)?;
        let show_orig = m.n_input >= REPORT_MIN_ORIGINAL;
        let o = |v: Option<f64>, d: usize, unit: &str| {
            if show_orig {
                v.map_or("—".to_string(), |v| num(v, d) + unit)
            } else {
                "withheld".to_string()
            }
        };
        let mk = |v: Option<f64>, d: usize, unit: &str| {
            v.map_or("—".to_string(), |v| num(v, d) + unit)
        };
        body.push_str("<h3>What masking costs the analysis</h3><table><thead><tr><th>Summary</th><th>original points</th><th>masked points</th></tr></thead><tbody>");
        body.push_str(&format!(
            "<tr><th scope=\"row\">Points</th><td>{}</td><td>{}</td></tr>",
            cost.original.n, cost.masked.n
        ));
        body.push_str(&format!(
            "<tr><th scope=\"row\">Mean nearest-neighbour distance</th><td>{}</td><td>{}</td></tr>",
            o(cost.original.mean_nn_m, 1, " m"),
            mk(cost.masked.mean_nn_m, 1, " m")
        ));
        body.push_str(&format!(
            "<tr><th scope=\"row\">Clark–Evans R</th><td>{}</td><td>{}</td></tr>",
            o(cost.original.clark_evans_r, 3, ""),
            mk(cost.masked.clark_evans_r, 3, "")
        ));
        body.push_str(&format!(
            "<tr><th scope=\"row\">Standard distance</th><td>{}</td><td>{}</td></tr>",
            o(cost.original.standard_distance_m, 1, " m"),
            mk(cost.masked.standard_distance_m, 1, " m")
        ));
        body.push_str(&format!(
            "<tr><th scope=\"row\">Shift of the mean centre</th><td colspan=\"2\">{}</td></tr>",
            mk(cost.centre_shift_m, 1, " m")
        ));
        if let Some(s) = &cost.surface {
            body.push_str(&format!(
                "<tr><th scope=\"row\">Kernel intensity surface (bandwidth {}): largest / mean change, share of the original peak</th><td colspan=\"2\">{} % / {} %</td></tr>",
                metres(Some(s.bandwidth_m)),
                num(100.0 * s.max_abs_diff_rel, 1),
                num(100.0 * s.mean_abs_diff_rel, 1)
            ));
        }
        body.push_str("</tbody></table>");
        if !show_orig {
            body.push_str("<p class=\"note\">With fewer than 5 points the original pattern's summaries are withheld: they would come close to giving locations away.</p>");
        }
        body.push_str("<p class=\"note\">Mean nearest-neighbour distance and Clark–Evans R = observed mean / (0.5/√(n/area)) after Clark &amp; Evans (1954), without edge correction; the kernel surfaces use one Gaussian bandwidth for both patterns.</p>");
        body.push_str("</section>");
    }
    if let Some(ts) = st.table {
        let t = &ts.table;
        sections.push("counts per area with suppression and audit".into());
        body.push_str("<section><h2>Counts per area</h2>");
        let layout = match &t.layout {
            Layout::Grid {
                shape,
                cell_size_m,
                rows,
                cols,
                ..
            } => match shape {
                CellShape::Square => format!(
                    "square cells of {} m side, {rows} rows × {cols} columns",
                    num(*cell_size_m, 0)
                ),
                CellShape::Hexagon => format!(
                    "hexagons of {} m side, {rows} rows × {cols} columns",
                    num(*cell_size_m, 0)
                ),
            },
            Layout::Zones { zones } => format!("{zones} zones from a file"),
        };
        let min = t.params.min_count.max(1);
        let mut rows = vec![
            ("Areas".to_string(), layout),
            (
                "Counts hidden".to_string(),
                if min > 1 {
                    format!(
                        "1 to {} (threshold {min}; the default 5 is common practice, no single source)",
                        min - 1
                    )
                } else {
                    "none".into()
                },
            ),
            (
                "Zeros".to_string(),
                if t.params.suppress_zeros {
                    "hidden"
                } else {
                    "shown"
                }
                .into(),
            ),
            (
                "Cells hidden in all".to_string(),
                (t.n_primary + t.n_complementary).to_string(),
            ),
            (
                "Of these, hidden so that no hidden count follows from the totals".to_string(),
                t.n_complementary.to_string(),
            ),
            ("Totals withheld".to_string(), t.totals_withheld.to_string()),
            (
                "Audit".to_string(),
                if t.audit.safe {
                    format!(
                        "no hidden count can be recovered from the published totals (checked: single totals, linear combinations, bounds{})",
                        if t.audit.exact.is_some() {
                            ", exhaustive whole-number search"
                        } else {
                            "; the exhaustive search was skipped, table too large"
                        }
                    )
                } else {
                    "a hidden count may be recoverable: do not publish this table".to_string()
                },
            ),
        ];
        if let Some(src) = ts.population_source {
            rows.push((
                "Rates".to_string(),
                format!(
                    "per {} of the population ({src}); shown only for shown counts and a population of at least {}; flagged unreliable below a count of {}",
                    num(t.params.rate_per, 0),
                    num(t.params.rate_min_population, 0),
                    t.params.rate_unreliable_below
                ),
            ));
        }
        body.push_str(&kv(&rows));
        for w in &t.warnings {
            body.push_str(&format!("<p class=\"note\">{}</p>", esc(w)));
        }
        let zones = ts.zone_names.is_some();
        let with_pop = ts.population_source.is_some();
        let mut listed = 0;
        let mut items = String::new();
        for c in &t.cells {
            if !zones && !c.suppressed && c.count.is_none_or(|v| v == 0) {
                continue;
            }
            listed += 1;
            let mut line = format!(
                "<li><span>{}</span> <b>{}</b>",
                esc(&c.id),
                c.count.map_or("hidden".to_string(), |v| v.to_string())
            );
            if with_pop {
                line.push_str(&format!(
                    " <small>pop. {}, rate {}</small>",
                    c.population.map_or("—".into(), |p| num(p, 0)),
                    c.rate.map_or("—".into(), |r| {
                        num(r, 2)
                            + if c.rate_unreliable {
                                " (unreliable)"
                            } else {
                                ""
                            }
                    })
                ));
            }
            line.push_str("</li>");
            items.push_str(&line);
        }
        body.push_str(&format!(
            "<h3>Count per area</h3><ul class=\"cells{}\">{items}</ul>",
            if with_pop { " wide" } else { "" }
        ));
        if !zones {
            body.push_str(&format!(
                "<p class=\"note\">{listed} areas listed; areas not listed have a count of 0. \
                 Ids are r&lt;row&gt;c&lt;column&gt; of the grid; \"hidden\" marks a suppressed count.</p>"
            ));
        }
        body.push_str("<h3>Published totals</h3><ul class=\"cells\">");
        for l in &t.lines {
            let name = match l.kind {
                LineKind::Grand => "all areas".to_string(),
                _ => l.name.clone(),
            };
            body.push_str(&format!(
                "<li><span>{}</span> <b>{}</b></li>",
                esc(&name),
                l.total.map_or("withheld".to_string(), |v| v.to_string())
            ));
        }
        body.push_str(&format!(
            "<li><span>outside every area</span> <b>{}</b></li></ul>",
            t.outside.map_or("hidden".to_string(), |v| v.to_string())
        ));
        body.push_str("</section>");
    }
    if st.mask.is_none() && st.table.is_none() {
        return Err(ReportError::refused(
            "nothing_to_report",
            "mask the points or count them per area first: the report holds only masked or \
             aggregated results",
        ));
    }
    sections.push("cautions".into());
    body.push_str("<section><h2>Cautions</h2><ul>");
    let mut cautions: Vec<String> = CAUTIONS.iter().map(|s| s.to_string()).collect();
    if let Some(ms) = st.mask {
        // The report holds no coordinates: only the cautions of the content.
        cautions.extend(export_cautions(&ExportContent::MaskedPoints {
            masked: &ms.masked,
            original_x: study.events.x(),
            original_y: study.events.y(),
        }));
    }
    if let Some(ts) = st.table {
        cautions.extend(export_cautions(&ExportContent::Table(&ts.table)));
    }
    cautions.dedup();
    for c in &cautions {
        body.push_str(&format!("<li>{}</li>", esc(c)));
    }
    body.push_str("</ul></section>");
    let html = format!(
        "<!doctype html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta http-equiv=\"Content-Security-Policy\" content=\"{REPORT_CSP}\">\n\
         <meta name=\"referrer\" content=\"no-referrer\">\n\
         <title>{}</title>\n<style>{REPORT_CSS}</style>\n</head>\n<body>\n{body}\n\
         <footer>Cloister {} · {} · opens offline; print it to PDF from the browser.</footer>\n</body>\n</html>\n",
        esc(&title),
        esc(crate::VERSION),
        esc(created)
    );
    Ok((html, sections))
}

const REPORT_CSS: &str = "body{font-family:system-ui,\"DejaVu Sans\",sans-serif;color:#1c2430;max-width:60rem;margin:1.5rem auto;padding:0 1rem;line-height:1.4;font-size:14px}\
h1{font-size:1.5rem;margin:0 0 .3rem}h2{font-size:1.15rem;border-bottom:2px solid #1f5d7a;padding-bottom:.15rem;margin-top:1.6rem}h3{font-size:1rem;margin:1rem 0 .3rem}\
table{border-collapse:collapse;margin:.3rem 0;font-size:.9rem}th,td{border:1px solid #c9d0d8;padding:.15rem .45rem;text-align:left;vertical-align:top}thead th{background:#f2f4f6}\
table.kv th{background:#f7f8f9;font-weight:600;max-width:22rem}td{font-variant-numeric:tabular-nums}\
figure{margin:1rem 0}figure img{max-width:100%;border:1px solid #c9d0d8}figcaption{font-size:.85rem;color:#4d5866}\
.meta,.note,footer{color:#4d5866;font-size:.85rem}footer{margin-top:2rem;border-top:1px solid #c9d0d8;padding-top:.4rem}\
ul.cells{columns:7 7.5rem;list-style:none;padding:0;margin:.3rem 0;font-size:.85rem;font-variant-numeric:tabular-nums}ul.cells.wide{columns:3 16rem}ul.cells li{break-inside:avoid;padding:.05rem 0}ul.cells span{color:#4d5866}ul.cells small{color:#4d5866}\
@media print{body{margin:0;max-width:none;font-size:11px}section{break-inside:auto}table,figure{break-inside:avoid}h2{break-after:avoid}}";

#[derive(Serialize)]
pub struct ReportPreview {
    pub content: &'static str,
    pub format: &'static str,
    pub fields: Vec<String>,
    pub rows: usize,
    pub metadata_keys: Vec<String>,
    pub notes_at: &'static str,
    pub contains_original_coordinates: bool,
    pub label: Option<String>,
    pub points_left_out: usize,
    pub cautions: Vec<String>,
}

#[derive(Serialize)]
pub struct ReportFile {
    pub text: String,
    pub file_name: String,
    pub mime: String,
    pub preview: ReportPreview,
}

/// The report as a file, with the preview of what it holds: `created` is
/// the date written into it. Fails as [`choose_report_contents`] and
/// [`report_html`] do.
pub fn report_file(
    study: &Study,
    shared: &SharingState,
    holds: Option<ReportHolds>,
    args: &ReportOptions<'_>,
    created: &str,
) -> Result<ReportFile, ReportError> {
    let st = choose_report_contents(shared, holds)?;
    let (html, sections) = report_html(study, &st, args, created)?;
    let mut cautions: Vec<String> = CAUTIONS.iter().map(|s| s.to_string()).collect();
    if let Some(m) = st.mask {
        cautions.extend(m.masked.notes.iter().cloned());
    }
    if let Some(t) = st.table {
        cautions.extend(t.table.warnings.iter().cloned());
    }
    let rows = st.table.map_or(0, |t| t.table.cells.len());
    Ok(ReportFile {
        text: html,
        file_name: super::export::download_name("sharing-report", created, "html"),
        mime: "text/html".into(),
        preview: ReportPreview {
            content: "report",
            format: "html",
            fields: sections,
            rows,
            metadata_keys: ["tool", "version", "created"]
                .into_iter()
                .map(String::from)
                .chain(st.mask.map(|_| "masking settings (no seed)".to_string()))
                .collect(),
            notes_at: "the report's opening lines",
            contains_original_coordinates: false,
            label: None,
            points_left_out: st.mask.map_or(0, |m| m.masked.unplaced.len()),
            cautions,
        },
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::privacy::shared::{count_in_cells, test_study, MaskState, TableState};
    use crate::privacy::{donut_mask, suppress, DonutParams, HexOrientation, SuppressionParams};

    /// A study with a masked copy and a table of counts, some hidden.
    fn shared(study: &Study) -> SharingState {
        let masked = donut_mask(
            study.events.x(),
            study.events.y(),
            &study.window,
            &DonutParams {
                seed: 987_654_321,
                ..Default::default()
            },
        )
        .unwrap();
        let (agg, src) =
            count_in_cells(study, CellShape::Square, 500.0, HexOrientation::default()).unwrap();
        let table = suppress(&agg, &SuppressionParams::default());
        assert!(
            table.cells.iter().any(|c| c.suppressed),
            "some counts hidden"
        );
        SharingState {
            mask: Some(MaskState { masked, k: None }),
            table: Some(TableState {
                table,
                population_source: src,
                zone_names: None,
            }),
        }
    }

    fn code(e: ReportError) -> &'static str {
        match e {
            ReportError::Refused { code, .. } => code,
            ReportError::Analysis(e) => panic!("analysis error {e}"),
        }
    }

    #[test]
    fn masked_points_and_hidden_counts_never_share_a_report() {
        let s = test_study(300);
        let st = shared(&s);
        for holds in [None, Some(ReportHolds::Both)] {
            let e = choose_report_contents(&st, holds).err().unwrap();
            assert_eq!(code(e), "choose_report_contents");
        }
        let v = choose_report_contents(&st, Some(ReportHolds::MaskedPoints)).unwrap();
        assert!(v.mask.is_some() && v.table.is_none());
        let v = choose_report_contents(&st, Some(ReportHolds::Counts)).unwrap();
        assert!(v.mask.is_none() && v.table.is_some());
        // Nothing to report, or not what was asked for.
        let empty = SharingState::default();
        let e = choose_report_contents(&empty, Some(ReportHolds::Counts))
            .err()
            .unwrap();
        assert_eq!(code(e), "nothing_to_report");
        let e = choose_report_contents(&empty, Some(ReportHolds::MaskedPoints))
            .err()
            .unwrap();
        assert_eq!(code(e), "nothing_to_report");
        let v = choose_report_contents(&empty, None).unwrap();
        let e = report_html(&s, &v, &ReportOptions::default(), "2026-01-01").unwrap_err();
        assert_eq!(code(e), "nothing_to_report");
        // Counts with nothing hidden may go with the masked points.
        let mut open = shared(&s);
        if let Some(t) = open.table.as_mut() {
            t.table.cells.iter_mut().for_each(|c| c.suppressed = false);
        }
        let v = choose_report_contents(&open, None).unwrap();
        assert!(v.mask.is_some() && v.table.is_some());
    }

    #[test]
    fn report_is_self_contained_escaped_and_cautious() {
        let s = test_study(300);
        let st = shared(&s);
        let png = "data:image/png;base64,iVBORw0KGgo=";
        let f = report_file(
            &s,
            &st,
            Some(ReportHolds::MaskedPoints),
            &ReportOptions {
                title: Some("Test <b>&</b>"),
                map_image: Some(png),
                risk: None,
            },
            "2026-01-02T03:04:05Z",
        )
        .unwrap();
        let html = &f.text;
        assert!(html.starts_with("<!doctype html>"));
        let csp = format!("<meta http-equiv=\"Content-Security-Policy\" content=\"{REPORT_CSP}\">");
        assert!(html.contains(&csp));
        assert!(html.find("Content-Security-Policy").unwrap() < html.find("<style").unwrap());
        assert!(!html.to_lowercase().contains("<script"));
        assert!(!html.contains("http://") && !html.contains("https://"));
        assert!(html.contains("<title>Test &lt;b&gt;&amp;&lt;/b&gt;</title>"));
        assert!(html.contains(png));
        assert!(!html.contains("987654321"), "no seed");
        assert!(html.contains("not recorded"));
        for c in CAUTIONS {
            assert!(html.contains(&esc(c)), "caution missing: {c}");
        }
        assert!(html.contains("Clark–Evans R") && !html.contains("Counts hidden"));
        assert_eq!(f.file_name, "cloister-sharing-report-2026-01-02.html");
        assert_eq!(f.mime, "text/html");
        assert_eq!(
            f.preview.fields,
            ["map picture", "masking settings and results", "cautions"]
        );
        assert!(!f.preview.contains_original_coordinates);
        assert!(f
            .preview
            .metadata_keys
            .iter()
            .any(|k| k.contains("no seed")));
        // No coordinate of an event appears in the report.
        for (x, y) in s.events.x().iter().zip(s.events.y()) {
            assert!(!html.contains(&format!("{x:.1}")) || !html.contains(&format!("{y:.1}")));
        }

        let counts = report_file(
            &s,
            &st,
            Some(ReportHolds::Counts),
            &ReportOptions::default(),
            "2026-01-02",
        )
        .unwrap();
        assert!(counts.text.contains("<h1>Shared results</h1>"));
        assert!(counts.text.contains("Counts hidden") && counts.text.contains("Audit"));
        assert!(!counts.text.contains("Clark–Evans R"));
        assert_eq!(
            counts.preview.rows,
            st.table.as_ref().unwrap().table.cells.len()
        );
    }

    #[test]
    fn map_picture_must_be_a_png_data_url() {
        let s = test_study(300);
        let st = shared(&s);
        for bad in [
            "data:text/html,<script>",
            "data:image/png;base64,",
            "data:image/png;base64,a\"b",
        ] {
            let e = report_file(
                &s,
                &st,
                Some(ReportHolds::Counts),
                &ReportOptions {
                    title: None,
                    map_image: Some(bad),
                    risk: None,
                },
                "2026-01-02",
            )
            .err()
            .unwrap();
            assert_eq!(code(e), "bad_options", "{bad}");
        }
    }

    #[test]
    fn few_points_withhold_the_original_summaries() {
        let s = test_study(4);
        let masked = donut_mask(
            s.events.x(),
            s.events.y(),
            &s.window,
            &DonutParams {
                seed: 1,
                ..Default::default()
            },
        )
        .unwrap();
        let st = SharingState {
            mask: Some(MaskState { masked, k: None }),
            table: None,
        };
        let f = report_file(&s, &st, None, &ReportOptions::default(), "x").unwrap();
        assert!(f.text.contains("withheld"));
        assert!(f.text.contains("fewer than 5 points"));
    }
}
