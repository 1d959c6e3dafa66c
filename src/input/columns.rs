//! Detects column roles from header names.
//!
//! Header names are compared after [`normalize`]: lower case, accents and
//! other marks taken off Latin letters (`Länge` → `lange`, `Fälle` →
//! `falle`, `Szerokość` → `szerokosc`; `ß` → `ss`, `æ` → `ae`, `ø` → `o`),
//! anything in brackets dropped (so `Easting (m)` matches `easting`), and
//! only letters and digits kept (so `Lon_DD`, `lon dd` and `lon-dd` all
//! become `londd`).
//!
//! **Languages.** Besides English, the lists hold the usual header words of
//! German, French, Spanish, Italian, Portuguese, Dutch, Polish, Swedish,
//! Danish and Norwegian for each role (e.g. `Breite`/`Länge`, `latitud`,
//! `Meldedatum`, `fecha`, `Kategorie`, `Anzahl`). Words that often name an
//! identifier (`Nummer`, `numero`, `nombre`) are left out of the weight
//! names on purpose: a record number read as a weight would be wrong
//! silently. A coordinate column is only detected as one of a pair, so a
//! word that can also mean "length" or "width" (`Länge`, `lengte`, `breedte`)
//! is used only when its partner is there too.
//!
//! Each role has a list of accepted names, tried in list order: the first name
//! that some header matches wins, and within one name the leftmost header.
//! A column is never given two roles.
//!
//! A user-given name in [`ColumnMapping`] overrides detection. It must match
//! a header exactly, or else after normalisation; otherwise the read fails
//! with `MissingColumns` listing the columns that exist. An empty name for
//! time, category or weight means "no such column" (detection off).
//!
//! **Coordinate kind** (when the caller does not say): lon/lat if the x and y
//! column names are longitude / latitude names, otherwise planar metres. The
//! values are not used to guess.

use super::{ColumnMapping, CoordKind, LengthUnit};
use crate::error::{InputError, InputErrorKind};

/// Planar x names (after [`normalize`]): x, easting, east and variants.
pub const X_NAMES: &[&str] = &[
    "x",
    "easting",
    "eastings",
    "east",
    "xcoord",
    "xcoordinate",
    "coordx",
    // de
    "rechtswert",
    "ostwert",
    "xkoordinate",
    // fr, es, it, pt
    "coordonneex",
    "coordenadax",
    "coordinatax",
    // nl, pl, sv/da/no
    "xcoordinaat",
    "wspolrzednax",
    "xkoordinat",
];

/// Planar y names (after [`normalize`]): y, northing, north and variants.
pub const Y_NAMES: &[&str] = &[
    "y",
    "northing",
    "northings",
    "north",
    "ycoord",
    "ycoordinate",
    "coordy",
    // de
    "hochwert",
    "nordwert",
    "ykoordinate",
    // fr, es, it, pt
    "coordonneey",
    "coordenaday",
    "coordinatay",
    // nl, pl, sv/da/no
    "ycoordinaat",
    "wspolrzednay",
    "ykoordinat",
];

/// Longitude names (after [`normalize`]). `decimallongitude` is the Darwin Core term.
pub const LON_NAMES: &[&str] = &[
    "lon",
    "lng",
    "long",
    "longitude",
    "londd",
    "lngdd",
    "longdd",
    "decimallongitude",
    // de (Länge, Laenge, Längengrad, geogr. Länge)
    "lange",
    "laenge",
    "langengrad",
    "laengengrad",
    "geogrlange",
    // es, sv (longitud), it
    "longitud",
    "longitudine",
    // nl
    "lengtegraad",
    "lengte",
    // pl (długość, długość geograficzna)
    "dlugosc",
    "dlugoscgeograficzna",
    // sv (längd, längdgrad), da (længdegrad, længde), no (lengdegrad, lengde)
    "langd",
    "langdgrad",
    "laengdegrad",
    "laengde",
    "lengdegrad",
    "lengde",
];

/// Latitude names (after [`normalize`]). `decimallatitude` is the Darwin Core term.
pub const LAT_NAMES: &[&str] = &[
    "lat",
    "latitude",
    "latdd",
    "decimallatitude",
    // de (Breite, Breitengrad, geogr. Breite)
    "breite",
    "breitengrad",
    "geogrbreite",
    // es, sv (latitud), it
    "latitud",
    "latitudine",
    // nl
    "breedtegraad",
    "breedte",
    // pl (szerokość, szerokość geograficzna)
    "szerokosc",
    "szerokoscgeograficzna",
    // sv (bredd, breddgrad), da/no (breddegrad, bredde)
    "bredd",
    "breddgrad",
    "breddegrad",
    "bredde",
];

/// Time names (after [`normalize`]), most specific first: a combined
/// date-time column is preferred to a date, and a date to a bare "time".
pub const TIME_NAMES: &[&str] = &[
    "datetime",
    "timestamp",
    "date",
    "eventdate",
    "onset",
    "onsetdate",
    "dateonset",
    "reported",
    "reportdate",
    "reporteddate",
    "datereported",
    "time",
    // de: Datum, Meldedatum, Erkrankungsdatum, Tatzeit, Zeitpunkt, Zeit, Uhrzeit
    "datumzeit",
    "zeitstempel",
    "datum",
    "meldedatum",
    "erkrankungsdatum",
    "tatdatum",
    "tatzeit",
    "zeitpunkt",
    "zeit",
    "uhrzeit",
    // fr: date et heure, date de déclaration, heure
    "dateheure",
    "datedeclaration",
    "datededeclaration",
    "heure",
    // es / pt: fecha, fecha y hora, data e hora, hora
    "fechahora",
    "fechayhora",
    "fecha",
    "fechadenotificacion",
    "datahora",
    "dataehora",
    "hora",
    // it: data, data e ora, ora
    "dataora",
    "data",
    "datasegnalazione",
    "ora",
    // nl: datum (above), meldingsdatum, tijdstip, tijd
    "meldingsdatum",
    "tijdstip",
    "tijd",
    // pl: data (above), data zgłoszenia, czas
    "datazgloszenia",
    "czas",
    // sv/da/no: datum (above), dato, tidpunkt, tidspunkt, tid
    "dato",
    "tidpunkt",
    "tidspunkt",
    "tid",
];

/// Names of the start of a time window (after [`normalize`]): used as the
/// time column only when no time name matched and a column of
/// [`TIME_UNTIL_NAMES`] is there too (so a bare "from" or "start" alone is
/// never read as a date).
pub const TIME_FROM_NAMES: &[&str] = &[
    "datefrom",
    "fromdate",
    "timefrom",
    "fromtime",
    "startdate",
    "datestart",
    "starttime",
    "from",
    "start",
    // de: Datum von, von, Beginn, Tatzeit von
    "datumvon",
    "vondatum",
    "tatzeitvon",
    "von",
    "beginn",
    "startdatum",
    // fr: date de début, du
    "datedebut",
    "datededebut",
    "debut",
    // es / pt: fecha desde, fecha inicio, desde, data início
    "fechadesde",
    "fechainicio",
    "fechadeinicio",
    "desde",
    "datainicio",
    "datadeinicio",
    // it: data inizio, dal
    "datainizio",
    "inizio",
    // nl: datum van, begindatum, vanaf
    "datumvan",
    "begindatum",
    "vanaf",
    // pl: data od, od
    "dataod",
    "od",
    // sv / da / no: datum från, från, startdato, fra
    "datumfran",
    "fran",
    "startdato",
    "datofra",
    "fra",
];

/// Names of the end of a time window (after [`normalize`]), the "time
/// until" role: detected only when a time column is found too, and only
/// from these specific words (an ordinary "end" or "close" column is not
/// among them).
pub const TIME_UNTIL_NAMES: &[&str] = &[
    "dateto",
    "todate",
    "timeto",
    "totime",
    "dateuntil",
    "untildate",
    "enddate",
    "dateend",
    "endtime",
    "to",
    "until",
    // de: Datum bis, bis, Enddatum, Tatzeit bis
    "datumbis",
    "bisdatum",
    "tatzeitbis",
    "bis",
    "enddatum",
    // fr: date de fin, date fin, jusqu'au
    "datefin",
    "datedefin",
    "jusquau",
    // es / pt: fecha hasta, fecha fin, hasta, data fim, até
    "fechahasta",
    "fechafin",
    "fechadefin",
    "hasta",
    "datafim",
    "datadefim",
    // it: data fine, fino al
    "datafine",
    "finoal",
    // nl: datum tot, einddatum, tot
    "datumtot",
    "einddatum",
    "tot",
    // pl: data do
    "datado",
    // sv / da / no: datum till, till, slutdatum, slutdato, sluttdato, dato til
    "datumtill",
    "till",
    "slutdatum",
    "slutdato",
    "sluttdato",
    "datotil",
];

/// Category names (after [`normalize`]).
pub const CATEGORY_NAMES: &[&str] = &[
    "category",
    "type",
    "class",
    "group",
    "kind",
    "cat",
    "species",
    // de
    "kategorie",
    "typ",
    "art",
    "klasse",
    "gruppe",
    // fr
    "categorie",
    "classe",
    "groupe",
    // es / it / pt
    "categoria",
    "tipo",
    "clase",
    "grupo",
    "gruppo",
    // nl
    "soort",
    "groep",
    // pl
    "kategoria",
    "rodzaj",
    "klasa",
    "grupa",
    // sv / da / no
    "kategori",
    "klass",
    "grupp",
];

/// Weight names (after [`normalize`]).
pub const WEIGHT_NAMES: &[&str] = &[
    "weight",
    "count",
    "n",
    "cases",
    "ncases",
    "wt",
    // de
    "gewicht",
    "anzahl",
    "falle",
    "faelle",
    "fallzahl",
    // fr
    "poids",
    "cas",
    "nombredecas",
    // es / pt
    "peso",
    "cantidad",
    "casos",
    "quantidade",
    // it
    "casi",
    "conteggio",
    // nl
    "aantal",
    "gevallen",
    // pl
    "waga",
    "liczba",
    "przypadki",
    // sv / da / no
    "vikt",
    "antal",
    "vaegt",
    "vekt",
    "antall",
    // people at a point (a population file given as counts)
    "residents",
    "inhabitants",
    "einwohner",
    "habitants",
    "habitantes",
    "abitanti",
    "inwoners",
];

/// Lower case, accents folded ([`fold_latin`]), bracketed parts removed,
/// letters and digits only.
pub fn normalize(name: &str) -> String {
    let mut out = String::with_capacity(name.len());
    let mut depth = 0u32;
    for c in name.chars() {
        match c {
            '(' | '[' | '{' => depth += 1,
            ')' | ']' | '}' => depth = depth.saturating_sub(1),
            c if depth == 0 && c.is_alphanumeric() => {
                for l in c.to_lowercase() {
                    match fold_latin(l) {
                        Some(f) => out.push_str(f),
                        None => out.push(l),
                    }
                }
            }
            _ => {}
        }
    }
    out
}

/// The plain letters for a lower-case accented Latin letter of the European
/// languages above (`ä` → `a`, `ß` → `ss`, `æ` → `ae`, `ł` → `l`), or `None`.
pub fn fold_latin(c: char) -> Option<&'static str> {
    Some(match c {
        'à' | 'á' | 'â' | 'ã' | 'ä' | 'å' | 'ą' | 'ā' => "a",
        'æ' => "ae",
        'ç' | 'ć' | 'č' => "c",
        'ď' | 'đ' => "d",
        'è' | 'é' | 'ê' | 'ë' | 'ę' | 'ě' | 'ē' => "e",
        'ì' | 'í' | 'î' | 'ï' | 'ī' => "i",
        'ł' => "l",
        'ñ' | 'ń' | 'ň' => "n",
        'ò' | 'ó' | 'ô' | 'õ' | 'ö' | 'ø' | 'ō' | 'ő' => "o",
        'œ' => "oe",
        'ř' => "r",
        'ś' | 'š' => "s",
        'ß' => "ss",
        'ť' => "t",
        'ù' | 'ú' | 'û' | 'ü' | 'ů' | 'ū' | 'ű' => "u",
        'ý' | 'ÿ' => "y",
        'ź' | 'ż' | 'ž' => "z",
        _ => return None,
    })
}

/// Index of the first header (by `names` priority, then left to right) whose
/// normalised form is in `names`, skipping `taken` columns.
pub fn find(norm_headers: &[String], names: &[&str], taken: &[usize]) -> Option<usize> {
    names.iter().find_map(|n| {
        norm_headers
            .iter()
            .enumerate()
            .position(|(i, h)| h == n && !taken.contains(&i))
    })
}

/// Looks up a user-given column name: exact match first, then normalised.
fn lookup(headers: &[String], norm_headers: &[String], name: &str) -> Option<usize> {
    let name = name.trim();
    headers.iter().position(|h| h == name).or_else(|| {
        let n = normalize(name);
        if n.is_empty() {
            return None;
        }
        norm_headers.iter().position(|h| *h == n)
    })
}

fn missing(headers: &[String], detail: String) -> InputError {
    InputError::new(InputErrorKind::MissingColumns {
        detail,
        available: headers.to_vec(),
    })
}

fn named(headers: &[String], norm: &[String], role: &str, name: &str) -> Result<usize, InputError> {
    lookup(headers, norm, name).ok_or_else(|| {
        missing(
            headers,
            format!(
                "there is no column named \"{}\" (chosen for {role})",
                name.trim()
            ),
        )
    })
}

/// `name` without a trailing metre unit set off by a space, `_`, `-` or `.`
/// (`x_m`, `Y m`, `easting-metres` → `x`, `Y`, `easting`); a unit in
/// brackets is dropped by [`normalize`] itself.
fn strip_metre_unit(name: &str) -> &str {
    let t = name.trim_end();
    let cut = t.rfind([' ', '_', '-', '.']);
    match cut {
        Some(i) if i > 0 => {
            let unit = t[i + 1..].to_ascii_lowercase();
            if matches!(unit.as_str(), "m" | "metre" | "metres" | "meter" | "meters") {
                t[..i].trim_end()
            } else {
                t
            }
        }
        _ => t,
    }
}

/// The x and y columns and what their coordinates are.
#[derive(Debug, Clone, PartialEq)]
pub struct XyRoles {
    pub x: usize,
    pub y: usize,
    pub coords: CoordKind,
}

/// Resolves the x / y columns of a table.
///
/// Detection (for roles the mapping leaves unset) prefers a longitude /
/// latitude pair to a planar x / y pair, unless `coords` says planar.
pub fn resolve_xy(
    headers: &[String],
    mapping: &ColumnMapping,
    coords: Option<CoordKind>,
) -> Result<XyRoles, InputError> {
    let norm: Vec<String> = headers.iter().map(|h| normalize(h)).collect();
    // For detection only: a trailing metre unit is dropped (`x_m`, `Y m`).
    let bare: Vec<String> = headers
        .iter()
        .map(|h| normalize(strip_metre_unit(h)))
        .collect();
    fn given(o: &Option<String>) -> Option<&str> {
        o.as_deref().filter(|s| !s.trim().is_empty())
    }
    let gx = given(&mapping.x)
        .map(|n| named(headers, &norm, "x", n))
        .transpose()?;
    let gy = given(&mapping.y)
        .map(|n| named(headers, &norm, "y", n))
        .transpose()?;

    let prefer_planar = matches!(coords, Some(CoordKind::Planar { .. }));
    let pairs: [(&[&str], &[&str]); 2] = if prefer_planar {
        [(X_NAMES, Y_NAMES), (LON_NAMES, LAT_NAMES)]
    } else {
        [(LON_NAMES, LAT_NAMES), (X_NAMES, Y_NAMES)]
    };
    let (x, y) = match (gx, gy) {
        (Some(x), Some(y)) => (x, y),
        (Some(x), None) => {
            let y = pairs.iter().find_map(|(_, yn)| find(&bare, yn, &[x]));
            (
                x,
                y.ok_or_else(|| missing(headers, "no y / latitude column found".into()))?,
            )
        }
        (None, Some(y)) => {
            let x = pairs.iter().find_map(|(xn, _)| find(&bare, xn, &[y]));
            (
                x.ok_or_else(|| missing(headers, "no x / longitude column found".into()))?,
                y,
            )
        }
        (None, None) => {
            let mut found = None;
            for (xn, yn) in pairs {
                if let Some(x) = find(&bare, xn, &[]) {
                    if let Some(y) = find(&bare, yn, &[x]) {
                        found = Some((x, y));
                        break;
                    }
                }
            }
            match found {
                Some(p) => p,
                None => return Err(missing(headers, no_coordinates_detail(headers, &norm))),
            }
        }
    };
    if x == y {
        return Err(missing(
            headers,
            format!("x and y cannot both be the column \"{}\"", headers[x]),
        ));
    }
    let coords = coords.unwrap_or_else(|| {
        if LON_NAMES.contains(&norm[x].as_str()) || LAT_NAMES.contains(&norm[y].as_str()) {
            CoordKind::LonLat
        } else {
            CoordKind::Planar {
                unit: LengthUnit::Metre,
            }
        }
    });
    Ok(XyRoles { x, y, coords })
}

/// Explains why no coordinate pair was found.
fn no_coordinates_detail(headers: &[String], norm: &[String]) -> String {
    let one_of = |names: &[&str]| find(norm, names, &[]).map(|i| headers[i].clone());
    let looks_numeric = !headers.is_empty()
        && headers.iter().all(|h| {
            h.trim()
                .trim_matches(['-', '+', '.', ','])
                .parse::<f64>()
                .is_ok()
        });
    if looks_numeric {
        return "no coordinate columns found: the first row holds numbers, but it should name \
                the columns (for example x,y or lon,lat)"
            .into();
    }
    if let Some(h) = one_of(LON_NAMES) {
        return format!("found the longitude column \"{h}\" but no latitude column");
    }
    if let Some(h) = one_of(LAT_NAMES) {
        return format!("found the latitude column \"{h}\" but no longitude column");
    }
    if let Some(h) = one_of(X_NAMES) {
        return format!("found the x column \"{h}\" but no y column");
    }
    if let Some(h) = one_of(Y_NAMES) {
        return format!("found the y column \"{h}\" but no x column");
    }
    "no coordinate columns found: name them x and y (or easting/northing, lon/lat), \
     or choose them by hand"
        .into()
}

/// A role for an attribute column and whether it was detected (rather than
/// named by the user). Detected columns may be dropped later if none of
/// their sampled values can be read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct AttrRole {
    pub index: usize,
    pub detected: bool,
}

/// Time, time-until, category and weight columns.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct AttrRoles {
    pub time: Option<AttrRole>,
    /// The end of each event's time window ("to" column); only with `time`.
    pub time_until: Option<AttrRole>,
    pub category: Option<AttrRole>,
    pub weight: Option<AttrRole>,
}

/// Resolves the time, category and weight columns among `headers`, never
/// using a column in `taken` (the coordinate columns) for detection.
pub fn resolve_attributes(
    headers: &[String],
    mapping: &ColumnMapping,
    taken: &[usize],
) -> Result<AttrRoles, InputError> {
    let norm: Vec<String> = headers.iter().map(|h| normalize(h)).collect();
    let mut taken = taken.to_vec();
    let mut out = AttrRoles::default();
    resolve_time_window(headers, &norm, mapping, &mut taken, &mut out)?;
    let roles: [(&Option<String>, &[&str], &str); 2] = [
        (&mapping.category, CATEGORY_NAMES, "category"),
        (&mapping.weight, WEIGHT_NAMES, "weight"),
    ];
    for (i, (given, names, role)) in roles.into_iter().enumerate() {
        let r = match given {
            Some(name) if name.trim().is_empty() => None,
            Some(name) => Some(AttrRole {
                index: named(headers, &norm, role, name)?,
                detected: false,
            }),
            None => find(&norm, names, &taken).map(|index| AttrRole {
                index,
                detected: true,
            }),
        };
        if let Some(r) = r {
            taken.push(r.index);
        }
        match i {
            0 => out.category = r,
            _ => out.weight = r,
        }
    }
    Ok(out)
}

/// The time column and the optional "time until" column (end of a window).
///
/// The time column: the user's choice, else the first [`TIME_NAMES`] match,
/// else, only as a pair, a [`TIME_FROM_NAMES`] column with a
/// [`TIME_UNTIL_NAMES`] column beside it. The until column: the user's
/// choice, else (only when there is a time column) the first
/// [`TIME_UNTIL_NAMES`] match. A until column without a time column is
/// refused with a message.
fn resolve_time_window(
    headers: &[String],
    norm: &[String],
    mapping: &ColumnMapping,
    taken: &mut Vec<usize>,
    out: &mut AttrRoles,
) -> Result<(), InputError> {
    let detected = |index| AttrRole {
        index,
        detected: true,
    };
    let given = |o: &Option<String>| -> Result<Option<Option<AttrRole>>, InputError> {
        Ok(match o {
            None => None,
            Some(n) if n.trim().is_empty() => Some(None),
            Some(n) => Some(Some(AttrRole {
                index: named(headers, norm, "time", n)?,
                detected: false,
            })),
        })
    };
    let mut time = given(&mapping.time)?;
    let until_given = match &mapping.time_until {
        Some(n) if !n.trim().is_empty() => Some(Some(AttrRole {
            index: named(headers, norm, "time until", n)?,
            detected: false,
        })),
        Some(_) => Some(None),
        None => None,
    };
    if time.is_none() {
        // Detection: a time name, else a from/until pair.
        let t = find(norm, TIME_NAMES, taken).map(detected).or_else(|| {
            let from = find(norm, TIME_FROM_NAMES, taken)?;
            let mut t2 = taken.clone();
            t2.push(from);
            let until_ok = match until_given {
                Some(Some(u)) => u.index != from,
                Some(None) => false,
                None => find(norm, TIME_UNTIL_NAMES, &t2).is_some(),
            };
            until_ok.then(|| detected(from))
        });
        time = Some(t);
    }
    let time = time.flatten();
    if let Some(t) = time {
        taken.push(t.index);
    }
    let until = match until_given {
        Some(u) => u,
        None => time.and_then(|_| find(norm, TIME_UNTIL_NAMES, taken).map(detected)),
    };
    if let Some(u) = until {
        match time {
            None => {
                return Err(missing(
                    headers,
                    format!(
                        "the column \"{}\" is chosen as the end of a time window, but no time \
                         (from) column is chosen",
                        headers[u.index]
                    ),
                ))
            }
            Some(t) if t.index == u.index => {
                return Err(missing(
                    headers,
                    format!(
                        "the time and the time-until column cannot both be \"{}\"",
                        headers[u.index]
                    ),
                ))
            }
            Some(_) => taken.push(u.index),
        }
    }
    out.time = time;
    out.time_until = until;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn h(names: &[&str]) -> Vec<String> {
        names.iter().map(|s| s.to_string()).collect()
    }

    /// Coordinate headers with a metre unit after a separator are found as
    /// planar metres; a name the user gives is still matched as written;
    /// other trailing words are not dropped.
    #[test]
    fn metre_unit_after_the_name_is_detected() {
        for (x, y) in [
            ("x_m", "y_m"),
            ("X m", "Y m"),
            ("easting-metres", "northing.meters"),
        ] {
            let hs = h(&["id", x, y]);
            let r = resolve_xy(&hs, &Default::default(), None).unwrap();
            assert_eq!((r.x, r.y), (1, 2), "{x} {y}");
            assert_eq!(
                r.coords,
                CoordKind::Planar {
                    unit: LengthUnit::Metre
                }
            );
        }
        let hs = h(&["x_m", "y_m"]);
        let m = ColumnMapping {
            x: Some("x_m".into()),
            y: Some("y_m".into()),
            ..Default::default()
        };
        assert_eq!(resolve_xy(&hs, &m, None).unwrap().x, 0);
        assert!(resolve_xy(&h(&["x_max", "y_max"]), &Default::default(), None).is_err());
        assert_eq!(strip_metre_unit("m"), "m");
        assert_eq!(strip_metre_unit("x_km"), "x_km");
    }

    #[test]
    fn normalisation() {
        assert_eq!(normalize(" Lon_DD "), "londd");
        assert_eq!(normalize("Easting (m)"), "easting");
        assert_eq!(normalize("Date-Time [UTC]"), "datetime");
        assert_eq!(normalize("X"), "x");
        // Accents and marks fold to plain letters.
        assert_eq!(normalize("Länge"), "lange");
        assert_eq!(normalize("Fälle"), "falle");
        assert_eq!(normalize("Szerokość geograficzna"), "szerokoscgeograficzna");
        assert_eq!(normalize("Straße"), "strasse");
        assert_eq!(normalize("Længdegrad"), "laengdegrad");
        assert_eq!(normalize("Catégorie"), "categorie");
        assert_eq!(normalize("DŁUGOŚĆ"), "dlugosc");
    }

    #[test]
    fn european_headers() {
        let roles = |names: &[&str]| {
            let hs = h(names);
            let xy = resolve_xy(&hs, &Default::default(), None).unwrap();
            let a = resolve_attributes(&hs, &Default::default(), &[xy.x, xy.y]).unwrap();
            (
                xy.x,
                xy.y,
                xy.coords,
                a.time.map(|r| r.index),
                a.category.map(|r| r.index),
                a.weight.map(|r| r.index),
            )
        };
        let ll = CoordKind::LonLat;
        // German, French, Spanish, Italian, Portuguese, Dutch, Polish, Swedish, Danish.
        let cases: [(&[&str], (usize, usize)); 9] = [
            (
                &["Breite", "Länge", "Meldedatum", "Kategorie", "Anzahl"],
                (1, 0),
            ),
            (
                &["Latitude", "Longitude", "Date", "Catégorie", "Poids"],
                (1, 0),
            ),
            (&["Latitud", "Longitud", "Fecha", "Tipo", "Casos"], (1, 0)),
            (
                &["Latitudine", "Longitudine", "Data", "Categoria", "Peso"],
                (1, 0),
            ),
            (
                &[
                    "Latitude",
                    "Longitude",
                    "Data e hora",
                    "Grupo",
                    "Quantidade",
                ],
                (1, 0),
            ),
            (
                &[
                    "Breedtegraad",
                    "Lengtegraad",
                    "Meldingsdatum",
                    "Soort",
                    "Aantal",
                ],
                (1, 0),
            ),
            (
                &[
                    "Szerokość",
                    "Długość",
                    "Data zgłoszenia",
                    "Rodzaj",
                    "Liczba",
                ],
                (1, 0),
            ),
            (
                &["Breddgrad", "Längdgrad", "Datum", "Kategori", "Antal"],
                (1, 0),
            ),
            (
                &["Breddegrad", "Længdegrad", "Dato", "Gruppe", "Antal"],
                (1, 0),
            ),
        ];
        for (names, (x, y)) in cases {
            assert_eq!(
                roles(names),
                (x, y, ll, Some(2), Some(3), Some(4)),
                "{names:?}"
            );
        }
        // Planar German grid names.
        let hs = h(&["Rechtswert", "Hochwert"]);
        let r = resolve_xy(&hs, &Default::default(), None).unwrap();
        assert_eq!((r.x, r.y), (0, 1));
        // An identifier column is not a weight.
        let hs = h(&["x", "y", "Nummer", "Numero"]);
        assert_eq!(
            resolve_attributes(&hs, &Default::default(), &[0, 1])
                .unwrap()
                .weight,
            None
        );
    }

    #[test]
    fn every_listed_name_is_already_normalised() {
        for list in [
            X_NAMES,
            Y_NAMES,
            LON_NAMES,
            LAT_NAMES,
            TIME_NAMES,
            TIME_FROM_NAMES,
            TIME_UNTIL_NAMES,
            CATEGORY_NAMES,
            WEIGHT_NAMES,
        ] {
            for n in list {
                assert_eq!(normalize(n), *n);
            }
        }
    }

    #[test]
    fn detects_lonlat_and_planar() {
        let r = resolve_xy(
            &h(&["id", "Latitude", "Longitude"]),
            &Default::default(),
            None,
        )
        .unwrap();
        assert_eq!((r.x, r.y, r.coords), (2, 1, CoordKind::LonLat));
        let r = resolve_xy(
            &h(&["Easting (m)", "Northing (m)"]),
            &Default::default(),
            None,
        )
        .unwrap();
        assert_eq!(
            r.coords,
            CoordKind::Planar {
                unit: LengthUnit::Metre
            }
        );
        // Both pairs: lon/lat wins unless planar is asked for.
        let both = h(&["x", "y", "lon", "lat"]);
        assert_eq!(resolve_xy(&both, &Default::default(), None).unwrap().x, 2);
        let planar = Some(CoordKind::Planar {
            unit: LengthUnit::Foot,
        });
        assert_eq!(resolve_xy(&both, &Default::default(), planar).unwrap().x, 0);
    }

    #[test]
    fn mapping_overrides_and_missing_names() {
        let hs = h(&["a", "b", "Lat"]);
        let m = ColumnMapping {
            x: Some("a".into()),
            y: Some("B".into()),
            ..Default::default()
        };
        let r = resolve_xy(&hs, &m, None).unwrap();
        assert_eq!((r.x, r.y), (0, 1));
        let m = ColumnMapping {
            x: Some("nope".into()),
            ..Default::default()
        };
        let e = resolve_xy(&hs, &m, None).unwrap_err();
        match e.kind {
            InputErrorKind::MissingColumns { detail, available } => {
                assert!(detail.contains("\"nope\""), "{detail}");
                assert_eq!(available, hs);
            }
            k => panic!("{k:?}"),
        }
        // Only a latitude column: says which one is missing.
        let e = resolve_xy(&h(&["id", "lat"]), &Default::default(), None).unwrap_err();
        assert!(e.to_string().contains("no longitude column"), "{e}");
        let e = resolve_xy(&h(&["12.5", "45.1"]), &Default::default(), None).unwrap_err();
        assert!(e.to_string().contains("first row holds numbers"), "{e}");
    }

    #[test]
    fn attributes() {
        let hs = h(&["x", "y", "Time", "Onset Date", "Type", "N"]);
        let a = resolve_attributes(&hs, &Default::default(), &[0, 1]).unwrap();
        assert_eq!(a.time.map(|r| r.index), Some(3)); // a date beats a bare "time"
        assert_eq!(a.category.map(|r| r.index), Some(4));
        assert_eq!(
            a.weight,
            Some(AttrRole {
                index: 5,
                detected: true
            })
        );
        let m = ColumnMapping {
            time: Some("".into()),
            weight: Some("x".into()),
            ..Default::default()
        };
        let a = resolve_attributes(&hs, &m, &[0, 1]).unwrap();
        assert_eq!(a.time, None);
        assert_eq!(
            a.weight,
            Some(AttrRole {
                index: 0,
                detected: false
            })
        );
        let m = ColumnMapping {
            category: Some("colour".into()),
            ..Default::default()
        };
        assert!(resolve_attributes(&hs, &m, &[0, 1]).is_err());
    }
}
