//! Exports for "Sharing safely": masking, aggregation with suppression, the
//! cost of masking, file exports and a self-contained HTML report.
//!
//! # JS API (methods of `Session`)
//! * `maskDonut(params)`: ring-shaped random shift (`r_min_m`, `r_max_m`,
//!   `law`, `max_tries`, `seed`, `replace`).
//! * `maskKAnonymity(params)`: shift until at least `target_k` candidate
//!   addresses are as close (`against`: `"population"` (the loaded controls
//!   layer) or `"density"` with `density_per_km2`; plus `r_min_m`, `r_max_m`,
//!   `law`, `area_factor`, `population_contains_events`, `keep_below_target`,
//!   `max_tries`, `seed`, `replace`).
//! * `maskResult()`: the kept masked copy (same shape as the two above), or null.
//! * `maskingCost(params)`: original vs masked summaries side by side.
//! * `aggregate(params)`: counts per square / hexagon cell or per zone of a
//!   GeoJSON file, suppressed and audited; kept for export.
//! * `exportPreview(what, options)`: exactly what a file would contain.
//! * `exportFile(what, options)`: `{text, file_name, mime, preview}`.
//!   `what` is `"masked_points"`, `"aggregates"`, `"report"` or
//!   `"unmasked_points"` (needs `confirm_unmasked: true`; the file carries the
//!   label "unmasked, internal use only").
//!
//! # Mask once
//! The session keeps one masked copy. Masking again needs `replace: true`:
//! releasing several independently masked copies of the same points lets
//! anyone average them back towards the true locations (Cassa, Wieland &
//! Mandl 2008, *Int J Health Geogr* 7:45). Without a `seed` the run draws one
//! from the platform's cryptographic generator (`crypto.getRandomValues`); the
//! seed is never returned and never exported (with it the shifts could be
//! replayed and undone).
//!
//! # Nothing traced back to the original points in what leaves
//! * The study area outline is drawn or written only when it came from a
//!   boundary file: a hull or rectangle around the events has original
//!   points as its corners or on its edges.
//! * The grid origin is snapped down to a multiple of the cell size (in the
//!   study's planar metres), so cell corners do not repeat the smallest x or y
//!   of the events when the study area was drawn around them.
//! * The report holds no coordinates at all: settings, distributions, tables
//!   of counts, and a map picture the page draws from masked / aggregated
//!   layers only.

use super::{analysis_error, from_js, input_error, js_error, to_js, Session};
use crate::input::zones::{read_zones, ZoneOptions};
use crate::privacy::cost::{compare, CostParams};
use crate::privacy::export::{export, CoordinateOutput, ExportContent, ExportOptions};
use crate::privacy::kanon::{kanon_mask, KAnonParams};
use crate::privacy::report::{
    report_file, ReportError, ReportFile, ReportHolds, ReportOptions, CAUTIONS,
};
use crate::privacy::shared::{
    aggregate_summary, count_in_cells, count_in_zones, mask_summary, zones_for_study, KInfo,
    MaskState, SharingState, TableState,
};
use crate::privacy::suppress::{suppress, SuppressionParams};
use crate::privacy::{
    donut_mask, what_leaves, CellShape, DistanceLaw, DonutParams, ExportFormat, HexOrientation,
};
use crate::study::Study;
use js_sys::{Float64Array, Object, Reflect, Uint32Array};
use serde::Deserialize;
use wasm_bindgen::prelude::*;

const KEY: &str = "sharing";

// ---------- parameters ----------

#[derive(Debug, Default, Deserialize)]
#[serde(default, deny_unknown_fields)]
struct DonutArgs {
    r_min_m: Option<f64>,
    r_max_m: Option<f64>,
    law: Option<DistanceLaw>,
    max_tries: Option<u32>,
    seed: Option<u64>,
    replace: bool,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "snake_case")]
enum Against {
    Population,
    Density,
}

#[derive(Debug, Default, Deserialize)]
#[serde(default, deny_unknown_fields)]
struct KArgs {
    target_k: Option<usize>,
    r_min_m: Option<f64>,
    r_max_m: Option<f64>,
    law: Option<DistanceLaw>,
    max_tries: Option<u32>,
    seed: Option<u64>,
    replace: bool,
    against: Option<Against>,
    density_per_km2: Option<f64>,
    area_factor: Option<f64>,
    population_contains_events: Option<bool>,
    keep_below_target: Option<bool>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "snake_case")]
enum AggLayout {
    #[default]
    Square,
    Hexagon,
    Zones,
}

#[derive(Debug, Default, Deserialize)]
#[serde(default, deny_unknown_fields)]
struct AggArgs {
    layout: AggLayout,
    cell_size_m: Option<f64>,
    orientation: Option<HexOrientation>,
    #[serde(with = "serde_bytes_opt")]
    zones: Option<Vec<u8>>,
    zone_name_property: Option<String>,
    zone_population_property: Option<String>,
    zone_group_property: Option<String>,
    min_count: Option<u64>,
    suppress_zeros: Option<bool>,
    publish_row_column_totals: Option<bool>,
    rate_per: Option<f64>,
    rate_min_population: Option<f64>,
    rate_unreliable_below: Option<u64>,
}

/// Zone file bytes arrive as a Uint8Array (or a plain array of numbers).
mod serde_bytes_opt {
    use serde::de::{Deserializer, Error, SeqAccess, Visitor};

    struct V;
    impl<'de> Visitor<'de> for V {
        type Value = Option<Vec<u8>>;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("the bytes of a file (Uint8Array)")
        }
        fn visit_none<E: Error>(self) -> Result<Self::Value, E> {
            Ok(None)
        }
        fn visit_unit<E: Error>(self) -> Result<Self::Value, E> {
            Ok(None)
        }
        fn visit_some<D: Deserializer<'de>>(self, d: D) -> Result<Self::Value, D::Error> {
            d.deserialize_byte_buf(V)
        }
        fn visit_bytes<E: Error>(self, v: &[u8]) -> Result<Self::Value, E> {
            Ok(Some(v.to_vec()))
        }
        fn visit_byte_buf<E: Error>(self, v: Vec<u8>) -> Result<Self::Value, E> {
            Ok(Some(v))
        }
        fn visit_seq<A: SeqAccess<'de>>(self, mut a: A) -> Result<Self::Value, A::Error> {
            let mut out = Vec::new();
            while let Some(b) = a.next_element::<u8>()? {
                out.push(b);
            }
            Ok(Some(out))
        }
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Option<Vec<u8>>, D::Error> {
        d.deserialize_option(V)
    }
}

#[derive(Debug, Default, Deserialize)]
#[serde(default, deny_unknown_fields)]
struct ExportArgs {
    format: Option<ExportFormat>,
    coordinates: Option<CoordinateOutput>,
    decimals: Option<u32>,
    created: Option<String>,
    confirm_unmasked: bool,
    /// Report only: a PNG as a data URL, drawn by the page from masked /
    /// aggregated layers.
    map_image: Option<String>,
    /// Report only: a title line.
    title: Option<String>,
    /// Report only: which shared results it holds when there are both
    /// masked points and counts (required when counts are hidden).
    report_holds: Option<ReportHolds>,
}

fn set(obj: &Object, key: &str, value: &JsValue) -> Result<(), JsValue> {
    Reflect::set(obj, &JsValue::from_str(key), value).map(|_| ())
}

fn mask_js(st: &MaskState, study: &Study, replaced: bool) -> Result<JsValue, JsValue> {
    let m = &st.masked;
    let sum = mask_summary(st, study, replaced);
    let v = to_js(&sum)?;
    let obj: Object = v
        .dyn_into()
        .map_err(|_| js_error("internal", "not an object", None))?;
    let mut xy = Vec::with_capacity(2 * m.x.len());
    for (a, b) in m.x.iter().zip(&m.y) {
        xy.push(*a);
        xy.push(*b);
    }
    set(&obj, "masked", &Float64Array::from(&xy[..]).into())?;
    let src: Vec<u32> = m.source.iter().map(|&i| i as u32).collect();
    set(&obj, "source", &Uint32Array::from(&src[..]).into())?;
    set(
        &obj,
        "displacement_m",
        &Float64Array::from(&m.displacement_m[..]).into(),
    )?;
    match &st.k {
        Some(k) => set(&obj, "k", &Float64Array::from(&k.k[..]).into())?,
        None => set(&obj, "k", &JsValue::NULL)?,
    }
    Ok(obj.into())
}

/// A seed from the platform's cryptographic generator (`crypto.getRandomValues`),
/// present in browsers, workers and Node ≥ 19.
fn secure_seed() -> Result<u64, JsValue> {
    let fail = || {
        js_error(
            "no_random_source",
            "no cryptographic random generator is available to draw the masking seed; \
             give a seed explicitly",
            None,
        )
    };
    let crypto =
        Reflect::get(&js_sys::global(), &JsValue::from_str("crypto")).map_err(|_| fail())?;
    if crypto.is_undefined() || crypto.is_null() {
        return Err(fail());
    }
    let f = Reflect::get(&crypto, &JsValue::from_str("getRandomValues")).map_err(|_| fail())?;
    let f: js_sys::Function = f.dyn_into().map_err(|_| fail())?;
    let buf = Uint32Array::new_with_length(2);
    f.call1(&crypto, &buf).map_err(|_| fail())?;
    Ok((u64::from(buf.get_index(0)) << 32) | u64::from(buf.get_index(1)))
}

fn already_masked() -> JsValue {
    js_error(
        "already_masked",
        "these points are already masked. Masking them again and releasing both copies lets \
         anyone average the copies back towards the true locations (Cassa, Wieland & Mandl \
         2008). Keep the first masked copy, or pass replace: true if the first one was never \
         shared.",
        None,
    )
}

fn created_or_now(c: Option<String>) -> String {
    match c {
        Some(s) if !s.trim().is_empty() => s,
        _ => String::from(js_sys::Date::new_0().to_iso_string()),
    }
}

fn table_js(t: &TableState, total: u64) -> Result<JsValue, JsValue> {
    to_js(&aggregate_summary(t, total))
}

fn report_error(e: ReportError) -> JsValue {
    match e {
        ReportError::Refused { code, message } => js_error(code, &message, None),
        ReportError::Analysis(e) => analysis_error(&e),
    }
}

fn state(s: &Session) -> Option<&SharingState> {
    s.extras
        .get(KEY)
        .and_then(|b| b.downcast_ref::<SharingState>())
}

impl Session {
    /// Runs `f` on the module state (created when missing).
    fn with_sharing(&mut self, f: impl FnOnce(&mut SharingState)) {
        let mut st = self.take_extra::<SharingState>(KEY).unwrap_or_default();
        f(&mut st);
        self.extras.insert(KEY, Box::new(st));
    }

    fn keep_mask(&mut self, st: MaskState, replaced: bool) -> Result<JsValue, JsValue> {
        self.with_sharing(|s| s.mask = Some(st));
        let study = self.study_ref()?;
        match state(self).and_then(|s| s.mask.as_ref()) {
            Some(m) => mask_js(m, study, replaced),
            None => Err(js_error("internal", "masked copy not kept", None)),
        }
    }

    fn content<'a>(&'a self, what: &str, confirm: bool) -> Result<ExportContent<'a>, JsValue> {
        let st = state(self);
        match what {
            "masked_points" => st
                .and_then(|s| s.mask.as_ref())
                .map(|m| ExportContent::MaskedPoints(&m.masked))
                .ok_or_else(|| js_error("nothing_masked", "mask the points first", None)),
            "aggregates" => st
                .and_then(|s| s.table.as_ref())
                .map(|t| ExportContent::Table(&t.table))
                .ok_or_else(|| {
                    js_error(
                        "nothing_aggregated",
                        "count the points per area first",
                        None,
                    )
                }),
            "unmasked_points" => {
                if !confirm {
                    return Err(js_error(
                        "confirm_needed",
                        "this export holds the ORIGINAL locations (unmasked, internal use only); \
                         pass confirm_unmasked: true to write it",
                        None,
                    ));
                }
                let s = self.study_ref()?;
                Ok(ExportContent::UnmaskedInternal {
                    x: s.events.x(),
                    y: s.events.y(),
                })
            }
            other => Err(js_error(
                "bad_options",
                &format!(
                    "unknown export \"{other}\" (use masked_points, aggregates, report or \
                     unmasked_points)"
                ),
                None,
            )),
        }
    }

    fn export_options(&self, args: &ExportArgs) -> Result<ExportOptions, JsValue> {
        let s = self.study_ref()?;
        let coordinates = args.coordinates.unwrap_or(if s.projection.is_geographic() {
            CoordinateOutput::LonLat
        } else {
            CoordinateOutput::Metres
        });
        if coordinates == CoordinateOutput::LonLat && !s.projection.is_geographic() {
            return Err(js_error(
                "bad_options",
                "longitude/latitude output needs events given in longitude/latitude; these \
                 are planar, so choose metres",
                None,
            ));
        }
        Ok(ExportOptions {
            format: args.format.unwrap_or_default(),
            coordinates,
            decimals: args.decimals,
            created: created_or_now(args.created.clone()),
        })
    }

    fn report_preview(&self, args: &ExportArgs, created: &str) -> Result<ReportFile, JsValue> {
        let study = self.study_ref()?;
        let empty = SharingState::default();
        let opts = ReportOptions {
            title: args.title.as_deref(),
            map_image: args.map_image.as_deref(),
        };
        report_file(
            study,
            state(self).unwrap_or(&empty),
            args.report_holds,
            &opts,
            created,
        )
        .map_err(report_error)
    }
}

#[wasm_bindgen]
impl Session {
    /// Masks the events with a ring-shaped random shift (donut geomasking).
    #[wasm_bindgen(js_name = maskDonut)]
    pub fn mask_donut(&mut self, params: JsValue) -> Result<JsValue, JsValue> {
        let a: DonutArgs = from_js(params)?;
        let replaced = state(self).is_some_and(|s| s.mask.is_some());
        if replaced && !a.replace {
            return Err(already_masked());
        }
        let d = DonutParams::default();
        let seed = match a.seed {
            Some(s) => s,
            None => secure_seed()?,
        };
        let p = DonutParams {
            r_min_m: a.r_min_m.unwrap_or(d.r_min_m),
            r_max_m: a.r_max_m.unwrap_or(d.r_max_m),
            law: a.law.unwrap_or(d.law),
            seed,
            max_tries: a.max_tries.unwrap_or(d.max_tries),
        };
        let s = self.study_ref()?;
        let masked = donut_mask(s.events.x(), s.events.y(), &s.window, &p)
            .map_err(|e| analysis_error(&e))?;
        self.keep_mask(MaskState { masked, k: None }, replaced)
    }

    /// Masks the events so each reaches a spatial k-anonymity target.
    #[wasm_bindgen(js_name = maskKAnonymity)]
    pub fn mask_k_anonymity(&mut self, params: JsValue) -> Result<JsValue, JsValue> {
        let a: KArgs = from_js(params)?;
        let replaced = state(self).is_some_and(|s| s.mask.is_some());
        if replaced && !a.replace {
            return Err(already_masked());
        }
        let d = KAnonParams::default();
        let seed = match a.seed {
            Some(s) => s,
            None => secure_seed()?,
        };
        let s = self.study_ref()?;
        let against = a.against.unwrap_or(if s.controls.is_some() {
            Against::Population
        } else {
            Against::Density
        });
        let population = match against {
            Against::Population => match &s.controls {
                Some(c) => Some((c.x(), c.y())),
                None => {
                    return Err(js_error(
                        "nothing_loaded",
                        "k-anonymity against a population needs a population (controls) file; \
                         load one, or give a residential density per km²",
                        None,
                    ))
                }
            },
            Against::Density => None,
        };
        let p = KAnonParams {
            target_k: a.target_k.unwrap_or(d.target_k),
            r_min_m: a.r_min_m.unwrap_or(d.r_min_m),
            r_max_m: a.r_max_m.unwrap_or(d.r_max_m),
            law: a.law.unwrap_or(d.law),
            seed,
            max_tries: a.max_tries.unwrap_or(d.max_tries),
            density_per_km2: match against {
                Against::Density => a.density_per_km2,
                Against::Population => None,
            },
            area_factor: a.area_factor.unwrap_or(d.area_factor),
            population_contains_events: a
                .population_contains_events
                .unwrap_or(d.population_contains_events),
            keep_below_target: a.keep_below_target.unwrap_or(d.keep_below_target),
        };
        let r = kanon_mask(s.events.x(), s.events.y(), population, &s.window, &p)
            .map_err(|e| analysis_error(&e))?;
        let k = KInfo {
            basis: r.basis,
            target_k: r.target_k,
            k: r.k,
            summary: r.k_summary,
            below_target: r.below_target,
        };
        self.keep_mask(
            MaskState {
                masked: r.masked,
                k: Some(k),
            },
            replaced,
        )
    }

    /// The kept masked copy, or null.
    #[wasm_bindgen(js_name = maskResult)]
    pub fn mask_result(&self) -> Result<JsValue, JsValue> {
        let study = self.study_ref()?;
        match state(self).and_then(|s| s.mask.as_ref()) {
            Some(m) => mask_js(m, study, false),
            None => Ok(JsValue::NULL),
        }
    }

    /// Original vs masked: mean nearest-neighbour distance, Clark–Evans R,
    /// centre shift, standard distance, kernel surface shift.
    #[wasm_bindgen(js_name = maskingCost)]
    pub fn masking_cost(&self, params: JsValue) -> Result<JsValue, JsValue> {
        let p: CostParams = from_js(params)?;
        let s = self.study_ref()?;
        let m = state(self)
            .and_then(|st| st.mask.as_ref())
            .ok_or_else(|| js_error("nothing_masked", "mask the points first", None))?;
        let mut c = compare(
            s.events.x(),
            s.events.y(),
            &m.masked.x,
            &m.masked.y,
            &s.window,
            &p,
        )
        .map_err(|e| analysis_error(&e))?;
        // L(r) − r of both patterns on one r grid, so the analyst sees how
        // masking moves the clustering curve.
        c.add_l_curves(&s.events, &m.masked.x, &m.masked.y, &s.window);
        to_js(&c)
    }

    /// Counts the events per cell or zone, suppresses small counts (with
    /// complementary suppression) and audits the result. Kept for export.
    pub fn aggregate(&mut self, params: JsValue) -> Result<JsValue, JsValue> {
        let a: AggArgs = from_js(params)?;
        let s = self.study_ref()?;
        let sd = SuppressionParams::default();
        let sp = SuppressionParams {
            min_count: a.min_count.unwrap_or(sd.min_count),
            suppress_zeros: a.suppress_zeros.unwrap_or(sd.suppress_zeros),
            publish_row_column_totals: a
                .publish_row_column_totals
                .unwrap_or(sd.publish_row_column_totals),
            rate_per: a.rate_per.unwrap_or(sd.rate_per),
            rate_min_population: a.rate_min_population.unwrap_or(sd.rate_min_population),
            rate_unreliable_below: a.rate_unreliable_below.unwrap_or(sd.rate_unreliable_below),
            exact_audit_budget: sd.exact_audit_budget,
        };
        if sp.min_count < 1 {
            return Err(js_error(
                "bad_parameter",
                "the suppression threshold must be at least 1",
                None,
            ));
        }
        if !(sp.rate_per.is_finite() && sp.rate_per > 0.0) {
            return Err(js_error(
                "bad_parameter",
                "rate per must be a number > 0",
                None,
            ));
        }
        let (agg, pop_source, names) = match a.layout {
            AggLayout::Square | AggLayout::Hexagon => {
                let size = a.cell_size_m.unwrap_or(1000.0);
                if !(size.is_finite() && size > 0.0) {
                    return Err(js_error(
                        "bad_parameter",
                        "the cell size must be a number > 0 (metres)",
                        None,
                    ));
                }
                let shape = if a.layout == AggLayout::Hexagon {
                    CellShape::Hexagon
                } else {
                    CellShape::Square
                };
                let orientation = a.orientation.unwrap_or_default();
                let (agg, src) =
                    count_in_cells(s, shape, size, orientation).map_err(|e| analysis_error(&e))?;
                (agg, src, None)
            }
            AggLayout::Zones => {
                let bytes = a.zones.as_deref().ok_or_else(|| {
                    js_error(
                        "bad_options",
                        "counting per zone needs the zones file (GeoJSON polygons)",
                        None,
                    )
                })?;
                let opts = ZoneOptions {
                    name_property: a.zone_name_property.as_deref(),
                    population_property: a.zone_population_property.as_deref(),
                    group_property: a.zone_group_property.as_deref(),
                };
                let raw = read_zones(bytes, &opts).map_err(|e| input_error(&e))?;
                let zones = zones_for_study(raw, s).map_err(|e| input_error(&e))?;
                let (agg, src, names) =
                    count_in_zones(s, &zones).map_err(|e| analysis_error(&e))?;
                (agg, src, Some(names))
            }
        };
        let total = agg.total;
        let table = suppress(&agg, &sp);
        let ts = TableState {
            table,
            population_source: pop_source,
            zone_names: names,
        };
        let out = table_js(&ts, total)?;
        self.with_sharing(|s| s.table = Some(ts));
        Ok(out)
    }

    /// What a file would contain, without writing it.
    #[wasm_bindgen(js_name = exportPreview)]
    pub fn export_preview(&self, what: &str, options: JsValue) -> Result<JsValue, JsValue> {
        let a: ExportArgs = from_js(options)?;
        if what == "report" {
            let created = created_or_now(a.created.clone());
            return to_js(&self.report_preview(&a, &created)?.preview);
        }
        let opts = self.export_options(&a)?;
        // The preview of the unmasked export is allowed without confirmation:
        // it is how the page shows what that file would hold.
        let content = match what {
            "unmasked_points" => self.content(what, true)?,
            _ => self.content(what, a.confirm_unmasked)?,
        };
        to_js(&what_leaves(&content, &opts))
    }

    /// Writes a file: `{text, file_name, mime, preview}`.
    #[wasm_bindgen(js_name = exportFile)]
    pub fn export_file(&self, what: &str, options: JsValue) -> Result<JsValue, JsValue> {
        let a: ExportArgs = from_js(options)?;
        if what == "report" {
            let created = created_or_now(a.created.clone());
            return to_js(&self.report_preview(&a, &created)?);
        }
        let opts = self.export_options(&a)?;
        let content = self.content(what, a.confirm_unmasked)?;
        let s = self.study_ref()?;
        let proj = s.projection;
        let inverse = move |x: f64, y: f64| proj.inverse(x, y);
        let back: Option<&dyn Fn(f64, f64) -> (f64, f64)> = if proj.is_geographic() {
            Some(&inverse)
        } else {
            None
        };
        let f = export(&content, &opts, back).map_err(|e| analysis_error(&e))?;
        to_js(&f)
    }

    /// The cautions the page shows beside the sharing tools.
    #[wasm_bindgen(js_name = sharingCautions)]
    pub fn sharing_cautions(&self) -> Result<JsValue, JsValue> {
        to_js(&CAUTIONS)
    }
}
