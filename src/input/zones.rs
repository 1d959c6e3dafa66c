//! Zones for counting events per area: a GeoJSON file of Polygon /
//! MultiPolygon features, each a zone with a name, and optionally a
//! population and a group, read from its properties.
//!
//! The file is parsed once (with the tree of [`super::geojson`]). The root
//! may be a FeatureCollection (feature *n* is zone *n*, 1-based, the number
//! errors carry as their row), a single Feature or a bare geometry (one
//! zone). Features with null geometry are skipped; points or lines are an
//! error naming the feature. Coordinates are detected as for a study area
//! (lon/lat when every vertex is within the lon/lat ranges).
//!
//! * Name: the property `name_property`, else the first of `name`, `NAME`,
//!   `Name`, `zone`, `id` that holds text or a number, else "zone *n*".
//! * Population: the property `population_property` (an error when a zone
//!   has no number there), else the first of `population`, `pop`, `POP`
//!   holding a number or numeric text (missing is allowed).
//! * Group: the property `group_property`, if given.

use super::geojson::{
    bad_geojson, collect_polygons, features_of, is_geometry_type, parse_json, root_type, Json, Obj,
    GEOMETRY_COLUMN,
};
use super::text::{cut_value, decode};
use super::{CoordKind, LengthUnit};
use crate::error::{InputError, InputErrorKind};

/// Which properties name a zone, give its population and its group.
#[derive(Debug, Clone, Copy, Default)]
pub struct ZoneOptions<'a> {
    pub name_property: Option<&'a str>,
    pub population_property: Option<&'a str>,
    pub group_property: Option<&'a str>,
}

/// One zone as read, in the file's coordinates.
#[derive(Debug, Clone, PartialEq)]
pub struct RawZone {
    pub name: String,
    /// Each polygon: exterior ring first, then holes.
    pub polygons: Vec<Vec<Vec<[f64; 2]>>>,
    pub population: Option<f64>,
    pub group: Option<String>,
}

/// The zones of a file and the kind of its coordinates.
#[derive(Debug, Clone, PartialEq)]
pub struct RawZones {
    pub zones: Vec<RawZone>,
    pub coords: CoordKind,
}

/// Text or a number, trimmed; `None` when blank or another kind.
fn prop_str(props: Option<&Obj>, key: &str) -> Option<String> {
    match props?.get(key)? {
        Json::String(s) if !s.trim().is_empty() => Some(s.trim().to_string()),
        Json::Number(n) => Some(n.to_string()),
        _ => None,
    }
}

/// A number or numeric text.
fn prop_num(v: &Json) -> Option<f64> {
    match v {
        Json::Number(n) => n.as_f64(),
        Json::String(s) => s.trim().parse::<f64>().ok(),
        _ => None,
    }
}

/// Reads a zones file. Errors carry the 1-based feature number as their row.
pub fn read_zones(bytes: &[u8], opts: &ZoneOptions<'_>) -> Result<RawZones, InputError> {
    let root = parse_json(&decode(bytes)?.text)?;
    let (obj, t) = root_type(&root)?;
    let features: Vec<&Json> = match t {
        "FeatureCollection" => features_of(obj)?.iter().collect(),
        "Feature" => vec![&root],
        g if is_geometry_type(g) => vec![],
        other => {
            return Err(bad_geojson(format!(
                "unknown GeoJSON type \"{}\"",
                cut_value(other)
            )))
        }
    };
    let mut zones = Vec::new();
    if features.is_empty() && is_geometry_type(t) {
        // A bare geometry: one zone, no properties.
        let mut polygons = Vec::new();
        collect_polygons(&root, &mut polygons)?;
        if !polygons.is_empty() {
            zones.push(RawZone {
                name: "zone 1".to_string(),
                polygons,
                population: None,
                group: None,
            });
        }
    }
    for (i, f) in features.iter().enumerate() {
        let row = i as u64 + 1;
        let fo = f.as_object();
        let props = fo
            .and_then(|o| o.get("properties"))
            .and_then(Json::as_object);
        let mut polygons = Vec::new();
        collect_polygons(
            fo.and_then(|o| o.get("geometry")).unwrap_or(&Json::Null),
            &mut polygons,
        )
        .map_err(|e| e.at(row, Some(GEOMETRY_COLUMN)))?;
        if polygons.is_empty() {
            continue;
        }
        let name = match opts.name_property {
            Some(k) => prop_str(props, k),
            None => ["name", "NAME", "Name", "zone", "id"]
                .iter()
                .find_map(|k| prop_str(props, k)),
        }
        .unwrap_or_else(|| format!("zone {row}"));
        let population = match opts.population_property {
            Some(k) => {
                let v = props.and_then(|p| p.get(k)).and_then(prop_num);
                if v.is_none() {
                    return Err(InputError::new(InputErrorKind::BadOptions {
                        detail: format!(
                            "zone {row} (\"{name}\") has no number in its property \"{k}\""
                        ),
                    })
                    .at(row, Some(k)));
                }
                v
            }
            None => ["population", "pop", "POP"]
                .iter()
                .find_map(|k| props.and_then(|p| p.get(k)))
                .and_then(prop_num),
        };
        let group = opts.group_property.and_then(|k| prop_str(props, k));
        zones.push(RawZone {
            name,
            polygons,
            population,
            group,
        });
    }
    if zones.is_empty() {
        return Err(bad_geojson("the zones file holds no polygons"));
    }
    let in_range = zones
        .iter()
        .flat_map(|z| z.polygons.iter().flatten().flatten())
        .all(|[x, y]| (-180.0..=180.0).contains(x) && (-90.0..=90.0).contains(y));
    let coords = if in_range {
        CoordKind::LonLat
    } else {
        CoordKind::Planar {
            unit: LengthUnit::Metre,
        }
    };
    Ok(RawZones { zones, coords })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn square(x: f64, y: f64, d: f64) -> String {
        format!(
            "[[[{x},{y}],[{},{y}],[{},{}],[{x},{}],[{x},{y}]]]",
            x + d,
            x + d,
            y + d,
            y + d
        )
    }

    fn fc(features: &[String]) -> Vec<u8> {
        format!(
            "{{\"type\":\"FeatureCollection\",\"features\":[{}]}}",
            features.join(",")
        )
        .into_bytes()
    }

    fn feature(props: &str, geometry: &str) -> String {
        format!("{{\"type\":\"Feature\",\"properties\":{props},\"geometry\":{geometry}}}")
    }

    fn poly(x: f64) -> String {
        format!(
            "{{\"type\":\"Polygon\",\"coordinates\":{}}}",
            square(x, 0.0, 1000.0)
        )
    }

    #[test]
    fn names_populations_and_groups_from_properties() {
        let bytes = fc(&[
            feature(
                r#"{"name":" North ","population":1200,"ward":"A"}"#,
                &poly(0.0),
            ),
            feature(r#"{"id":7,"pop":"300"}"#, &poly(1000.0)),
            feature(r#"{}"#, "null"),
            feature(
                r#"{"zone":"","NAME":"South"}"#,
                &format!(
                    "{{\"type\":\"MultiPolygon\",\"coordinates\":[{},{}]}}",
                    square(2000.0, 0.0, 10.0),
                    square(3000.0, 0.0, 10.0)
                ),
            ),
        ]);
        let z = read_zones(
            &bytes,
            &ZoneOptions {
                group_property: Some("ward"),
                ..Default::default()
            },
        )
        .unwrap();
        assert_eq!(
            z.coords,
            CoordKind::Planar {
                unit: LengthUnit::Metre
            }
        );
        let names: Vec<&str> = z.zones.iter().map(|z| z.name.as_str()).collect();
        assert_eq!(names, ["North", "7", "South"]);
        let pops: Vec<Option<f64>> = z.zones.iter().map(|z| z.population).collect();
        assert_eq!(pops, [Some(1200.0), Some(300.0), None]);
        assert_eq!(z.zones[0].group.as_deref(), Some("A"));
        assert_eq!(z.zones[1].group, None);
        assert_eq!(z.zones[2].polygons.len(), 2);
        assert_eq!(z.zones[0].polygons[0][0].len(), 5);
    }

    #[test]
    fn unnamed_zones_are_numbered_by_feature_and_lonlat_is_detected() {
        let bytes = fc(&[
            feature("{}", "null"),
            feature(
                "{}",
                r#"{"type":"Polygon","coordinates":[[[10,45],[10.1,45],[10.1,45.1],[10,45]]]}"#,
            ),
        ]);
        let z = read_zones(&bytes, &ZoneOptions::default()).unwrap();
        assert_eq!(z.zones.len(), 1);
        assert_eq!(z.zones[0].name, "zone 2");
        assert_eq!(z.coords, CoordKind::LonLat);
        // A bare geometry is one zone.
        let z = read_zones(poly(0.0).as_bytes(), &ZoneOptions::default()).unwrap();
        assert_eq!(z.zones.len(), 1);
    }

    #[test]
    fn errors_carry_the_feature_number() {
        let bytes = fc(&[
            feature(r#"{"name":"a"}"#, &poly(0.0)),
            feature(
                r#"{"name":"b"}"#,
                r#"{"type":"LineString","coordinates":[[0,0],[1,1]]}"#,
            ),
        ]);
        let e = read_zones(&bytes, &ZoneOptions::default()).unwrap_err();
        assert_eq!(e.code(), "bad_geojson");
        let at = e.at.clone().unwrap();
        assert_eq!((at.row, at.column.as_deref()), (2, Some("geometry")));

        let bytes = fc(&[
            feature(r#"{"name":"a","people":10}"#, &poly(0.0)),
            feature(r#"{"name":"b","people":"many"}"#, &poly(1000.0)),
        ]);
        let e = read_zones(
            &bytes,
            &ZoneOptions {
                population_property: Some("people"),
                ..Default::default()
            },
        )
        .unwrap_err();
        assert_eq!(e.code(), "bad_options");
        let at = e.at.clone().unwrap();
        assert_eq!((at.row, at.column.as_deref()), (2, Some("people")));
        assert!(
            e.to_string().contains("zone 2 (\"b\") has no number"),
            "{e}"
        );
    }

    #[test]
    fn files_without_zones_are_refused() {
        let e = read_zones(&fc(&[feature("{}", "null")]), &ZoneOptions::default()).unwrap_err();
        assert_eq!(e.code(), "bad_geojson");
        assert!(e.to_string().contains("no polygons"));
        assert_eq!(
            read_zones(b"[1,2]", &ZoneOptions::default())
                .unwrap_err()
                .code(),
            "bad_geojson"
        );
        assert_eq!(
            read_zones(b"{nope", &ZoneOptions::default())
                .unwrap_err()
                .code(),
            "bad_json"
        );
        assert_eq!(
            read_zones(b"", &ZoneOptions::default()).unwrap_err().code(),
            "empty"
        );
    }
}
