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

use super::{analysis_error, decode, decode_with_bytes, input_error, js_error, to_js, Session};
use crate::input::zones::{read_zones, ZoneOptions};
use crate::privacy::aggregate::{AggregateLayout, AggregateOptions};
use crate::privacy::cost::{compare, CostParams, PairShift};
use crate::privacy::export::{
    export, CoordinateOutput, ExportContent, ExportOptions, ExportRequest,
};
use crate::privacy::kanon::{kanon_mask, Against, KAnonParams};
use crate::privacy::report::{report_file, ReportError, ReportFile, ReportOptions, CAUTIONS};
use crate::privacy::shared::{
    aggregate_summary, count_in_cells, count_in_zones, mask_summary, zones_for_study, KInfo,
    MaskState, SharingState, TableState,
};
use crate::privacy::suppress::suppress;
use crate::privacy::{donut_mask, what_leaves, CellShape, DonutParams};
use crate::study::Study;
use js_sys::{Float64Array, Object, Reflect, Uint32Array};
use serde_json::Value;
use wasm_bindgen::prelude::*;

const KEY: &str = "sharing";

// ---------- parameters ----------

// The options of the sharing methods live in the core, with their
// defaults and limits: [`DonutParams`], [`KAnonParams`], [`CostParams`],
// [`AggregateOptions`] and [`ExportRequest`] (see `crate::params`).
type AggArgs = AggregateOptions;
type AggLayout = AggregateLayout;
type ExportArgs = ExportRequest;

/// The session-level `replace` flag of the mask methods.
fn replace_flag(session: &serde_json::Map<String, Value>) -> bool {
    session
        .get("replace")
        .and_then(Value::as_bool)
        .unwrap_or(false)
}

/// Whether the caller gave a `seed` (without one, the mask methods draw
/// one from the platform's cryptographic generator; it is never returned).
fn has_seed(options: &JsValue) -> bool {
    options.dyn_ref::<Object>().is_some_and(|o| {
        Reflect::get(o, &JsValue::from_str("seed"))
            .is_ok_and(|v| !(v.is_undefined() || v.is_null()))
    })
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
    // 53 random bits: the seed range every seed option declares
    // (`crate::params::MAX_SEED`), which the masking functions check.
    Ok(
        ((u64::from(buf.get_index(0)) << 32) | u64::from(buf.get_index(1)))
            & crate::params::MAX_SEED,
    )
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

    /// The options of a mask method, the session-level keys, and whether a
    /// kept mask will be replaced (refused unless `replace: true`). Without
    /// a `seed`, one is drawn from the platform's cryptographic generator
    /// and set with `set_seed`; it is never returned.
    fn mask_options<P: crate::params::Params>(
        &self,
        params: JsValue,
        set_seed: impl FnOnce(&mut P, u64),
    ) -> Result<(P, crate::params::SessionOptions, bool), JsValue> {
        let given_seed = has_seed(&params);
        let (mut p, session) = decode::<P>(params, self.extent_m())?;
        let replaced = state(self).is_some_and(|s| s.mask.is_some());
        if replaced && !replace_flag(&session) {
            return Err(already_masked());
        }
        if !given_seed {
            set_seed(&mut p, secure_seed()?);
        }
        Ok((p, session, replaced))
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
            "masked_points" => {
                let m = st
                    .and_then(|s| s.mask.as_ref())
                    .ok_or_else(|| js_error("nothing_masked", "mask the points first", None))?;
                let s = self.study_ref()?;
                Ok(ExportContent::MaskedPoints {
                    masked: &m.masked,
                    original_x: s.events.x(),
                    original_y: s.events.y(),
                })
            }
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
        let dates = match (args.date_shift_days, args.date_seed) {
            (None, None) => None,
            (None, Some(_)) => {
                return Err(js_error(
                    "bad_options",
                    "date_seed is given but date_shift_days is not: give both to write shifted dates",
                    None,
                ))
            }
            (Some(_), None) => {
                return Err(js_error(
                    "bad_options",
                    "date_shift_days needs date_seed (the seed of the shifts; it is never written into the file)",
                    None,
                ))
            }
            (Some(n), Some(seed)) => {
                let t = s.events.time().ok_or_else(|| {
                    js_error(
                        "nothing_loaded",
                        "date_shift_days: the events have no time column, so there are no dates to write",
                        None,
                    )
                })?;
                Some(
                    crate::privacy::dates::shift_dates(t, s.events.time_end(), n, seed)
                        .map_err(|e| analysis_error(&e))?,
                )
            }
        };
        Ok(ExportOptions {
            format: args.format.unwrap_or_default(),
            coordinates,
            decimals: args.decimals,
            created: created_or_now(args.created.clone()),
            confirm_unmasked: args.confirm_unmasked,
            csv_notes: args.csv_notes.unwrap_or_default(),
            dates,
        })
    }

    fn report_preview(&self, args: &ExportArgs, created: &str) -> Result<ReportFile, JsValue> {
        if args.date_shift_days.is_some() || args.date_seed.is_some() {
            return Err(js_error(
                "bad_options",
                "date_shift_days: the report holds no event dates; shifted dates are written into the point files (masked_points, unmasked_points)",
                None,
            ));
        }
        let study = self.study_ref()?;
        let empty = SharingState::default();
        let risk = if args.report_risk {
            Some(super::risk_surface::last_result(self).ok_or_else(|| {
                js_error(
                    "bad_options",
                    "report_risk: draw the relative-risk surface first (Compared with the population)",
                    None,
                )
            })?)
        } else {
            None
        };
        let opts = ReportOptions {
            title: args.title.as_deref(),
            map_image: args.map_image.as_deref(),
            risk,
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
    #[wasm_bindgen(js_name = maskDonut, unchecked_return_type = "MaskResult")]
    pub fn mask_donut(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "MaskDonutOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (p, _, replaced) = self.mask_options::<DonutParams>(params, |p, seed| p.seed = seed)?;
        let s = self.study_ref()?;
        let masked = donut_mask(s.events.x(), s.events.y(), &s.window, &p)
            .map_err(|e| analysis_error(&e))?;
        self.keep_mask(MaskState { masked, k: None }, replaced)
    }

    /// Masks the events so each reaches a spatial k-anonymity target.
    #[wasm_bindgen(js_name = maskKAnonymity, unchecked_return_type = "MaskResult")]
    pub fn mask_k_anonymity(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "MaskKAnonymityOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (mut p, session, replaced) =
            self.mask_options::<KAnonParams>(params, |p, seed| p.seed = seed)?;
        let against: Option<Against> = match session.get("against") {
            Some(v) => serde_json::from_value(v.clone()).map_err(|e| {
                js_error(
                    "bad_options",
                    &format!(
                        "maskKAnonymity: option \"against\": {}",
                        crate::params::plain_words(&e.to_string())
                    ),
                    None,
                )
            })?,
            None => None,
        };
        let s = self.study_ref()?;
        let against = against.unwrap_or(if s.controls.is_some() {
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
        if against == Against::Population {
            p.density_per_km2 = None;
        }
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
    #[wasm_bindgen(js_name = maskResult, unchecked_return_type = "MaskResult | null")]
    pub fn mask_result(&self) -> Result<JsValue, JsValue> {
        let study = self.study_ref()?;
        match state(self).and_then(|s| s.mask.as_ref()) {
            Some(m) => mask_js(m, study, false),
            None => Ok(JsValue::NULL),
        }
    }

    /// Original vs masked: mean nearest-neighbour distance, Clark–Evans R,
    /// centre shift, standard distance, kernel surface shift.
    #[wasm_bindgen(js_name = maskingCost, unchecked_return_type = "MaskingCost")]
    pub fn masking_cost(
        &self,
        #[wasm_bindgen(unchecked_param_type = "MaskingCostOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (p, _) = decode::<CostParams>(params, self.extent_m())?;
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
        // Events with dates: the near-repeat table and the Knox count before
        // and after masking, over the placed events with a time (windows at
        // their midpoint, as the near-repeat table's defaults take them).
        let nr = crate::spacetime::pairs::NearRepeatOptions::default();
        if let Ok(te) =
            crate::spacetime::TimedEvents::from_study(s, nr.uncertain_times, nr.max_window_days, 2)
        {
            let mut time_of = vec![f64::NAN; s.events.len()];
            for (&i, &ti) in te.index.iter().zip(&te.t) {
                if let Some(v) = time_of.get_mut(i) {
                    *v = ti;
                }
            }
            let (mut ox, mut oy, mut mx, mut my, mut tt) =
                (Vec::new(), Vec::new(), Vec::new(), Vec::new(), Vec::new());
            for (k, &src) in m.masked.source.iter().enumerate() {
                let (Some(&ti), Some(&x), Some(&y), Some(&a), Some(&b)) = (
                    time_of.get(src),
                    s.events.x().get(src),
                    s.events.y().get(src),
                    m.masked.x.get(k),
                    m.masked.y.get(k),
                ) else {
                    continue;
                };
                if ti.is_finite() {
                    ox.push(x);
                    oy.push(y);
                    mx.push(a);
                    my.push(b);
                    tt.push(ti);
                }
            }
            if tt.len() >= 2 {
                c.pairs = PairShift::compute(&ox, &oy, &mx, &my, &tt, p.pair_bands()).ok();
            }
        }
        to_js(&c)
    }

    /// Counts the events per cell or zone, suppresses small counts (with
    /// complementary suppression) and audits the result. Kept for export.
    #[wasm_bindgen(unchecked_return_type = "AggregateResult")]
    pub fn aggregate(
        &mut self,
        #[wasm_bindgen(unchecked_param_type = "AggregateOptions")] params: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (mut a, zones) = decode_with_bytes::<AggArgs>(params, "zones", self.extent_m())?;
        a.zones = zones;
        let s = self.study_ref()?;
        let sp = a.suppression();
        let (agg, pop_source, names) = match a.layout {
            AggLayout::Square | AggLayout::Hexagon => {
                let size = a.cell_size_m;
                let shape = if a.layout == AggLayout::Hexagon {
                    CellShape::Hexagon
                } else {
                    CellShape::Square
                };
                let orientation = a.orientation;
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
    #[wasm_bindgen(js_name = exportPreview, unchecked_return_type = "ExportPreview | ReportPreview")]
    pub fn export_preview(
        &self,
        #[wasm_bindgen(unchecked_param_type = "ExportWhat")] what: &str,
        #[wasm_bindgen(unchecked_param_type = "ExportFileOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (a, _) = decode::<ExportArgs>(options, None)?;
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
        let proj = self.study_ref()?.projection;
        let inverse = move |x: f64, y: f64| proj.inverse(x, y);
        let back: Option<&dyn Fn(f64, f64) -> (f64, f64)> = if proj.is_geographic() {
            Some(&inverse)
        } else {
            None
        };
        to_js(&what_leaves(&content, &opts, back).map_err(|e| analysis_error(&e))?)
    }

    /// Writes a file: `{text, file_name, mime, preview}`.
    #[wasm_bindgen(js_name = exportFile, unchecked_return_type = "ExportedFile | ReportFile")]
    pub fn export_file(
        &self,
        #[wasm_bindgen(unchecked_param_type = "ExportWhat")] what: &str,
        #[wasm_bindgen(unchecked_param_type = "ExportFileOptions")] options: JsValue,
    ) -> Result<JsValue, JsValue> {
        let (a, _) = decode::<ExportArgs>(options, None)?;
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
        // Masked points that are, as written, at their original location
        // make an unmasked file: refused like the unmasked export unless
        // confirmed, then labelled for internal use.
        let preview = what_leaves(&content, &opts, back).map_err(|e| analysis_error(&e))?;
        if preview.points_at_original_location > 0 && !a.confirm_unmasked {
            return Err(js_error(
                "confirm_needed",
                &format!(
                    "{} of {} masked points would be written at their ORIGINAL location at \
                     this precision ({} decimals), so this file is unmasked, internal use \
                     only: mask with a larger shift or write fewer decimals, or pass \
                     confirm_unmasked: true to write it labelled as such",
                    preview.points_at_original_location,
                    preview.rows,
                    opts.decimals()
                ),
                None,
            ));
        }
        let f = export(&content, &opts, back).map_err(|e| analysis_error(&e))?;
        to_js(&f)
    }

    /// The cautions the page shows beside the sharing tools.
    #[wasm_bindgen(js_name = sharingCautions, unchecked_return_type = "string[]")]
    pub fn sharing_cautions(&self) -> Result<JsValue, JsValue> {
        to_js(&CAUTIONS)
    }
}
