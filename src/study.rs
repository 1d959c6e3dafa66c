//! What exactly is being analysed?
//!
//! A [`Study`] joins the events, the optional controls and the study area in
//! one planar metre grid, after dropping events outside the study area (they
//! become rejections with reason "outside the study area") and counting
//! coincident points. Every analysis takes a `&Study` or its parts, so none
//! has to re-check coordinates.

use crate::error::{InputError, InputErrorKind};
use crate::index::GridIndex;
use crate::input::{CoordKind, LengthUnit, RawArea, RawLayer, RejectReason, Rejection};
use crate::projection::Projection;
use crate::window::{Window, WindowOrigin};
use serde::{Deserialize, Serialize};

/// What to use as the study area when no polygon file was given.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum AreaFallback {
    #[default]
    ConvexHull,
    BoundingBox,
}

/// A validated set of points in metres: finite coordinates, inside the window.
///
/// **Missing optional values.** A point whose time or weight cell was empty
/// or unreadable is kept (it takes part in every spatial analysis) and holds
/// **NaN** in [`Pattern::time`] / [`Pattern::weight`]. Analyses that need the
/// value handle it: the time summary counts only finite times
/// (`n_with_time`); weighted analyses take [`Pattern::weights_or_zero`], so
/// such a point counts 0 (adds nothing to a density or to a neighbour's
/// count) and never silently 1. Categories have no missing value: an empty
/// cell is the category "(blank)".
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Pattern {
    x: Vec<f64>,
    y: Vec<f64>,
    time: Option<Vec<f64>>,
    /// End of each event's time window ("to" column); `None` without one.
    /// Where present, [`Pattern::time`] is the window's start ("from").
    time_end: Option<Vec<f64>>,
    category: Option<Vec<u32>>,
    category_names: Vec<String>,
    weight: Option<Vec<f64>>,
    row: Vec<u64>,
    /// The neighbour index of x, y ([`Pattern::index`]).
    index: IndexCache,
}

/// The neighbour index of a pattern's points, built on first use and then
/// kept (shared by clones: the points never change after construction).
/// It is derived from the points, so it plays no part in comparing patterns.
#[derive(Debug, Clone, Default)]
struct IndexCache(std::sync::OnceLock<std::sync::Arc<GridIndex>>);

impl PartialEq for IndexCache {
    fn eq(&self, _: &IndexCache) -> bool {
        true
    }
}

impl Pattern {
    /// The neighbour index of the points ([`GridIndex::new`] on x, y, in
    /// the pattern's order), built on first use and kept with the pattern:
    /// the study counts coincident events with it and the summary finds
    /// nearest neighbours with it, so intake builds one index, not two.
    pub fn index(&self) -> &GridIndex {
        self.index
            .0
            .get_or_init(|| std::sync::Arc::new(GridIndex::new(&self.x, &self.y)))
    }

    /// The pattern with `g` kept as its neighbour index: `g` must be
    /// [`GridIndex::new`] on exactly this pattern's x and y.
    fn with_index(self, g: GridIndex) -> Pattern {
        debug_assert_eq!(g.len(), self.x.len());
        let _ = self.index.0.set(std::sync::Arc::new(g));
        self
    }

    /// A bare pattern from coordinates in metres (rows numbered 1..=n).
    /// Returns `None` if lengths differ or a coordinate is not finite.
    pub fn from_xy(x: Vec<f64>, y: Vec<f64>) -> Option<Pattern> {
        if x.len() != y.len() || x.iter().chain(y.iter()).any(|v| !v.is_finite()) {
            return None;
        }
        let row = (1..=x.len() as u64).collect();
        Some(Pattern {
            x,
            y,
            row,
            ..Default::default()
        })
    }
    /// The points `keep` (indices into the layer) of a layer, with
    /// coordinates already in metres (`x`, `y` of the same length as `keep`).
    /// Optional columns are subset alongside.
    pub(crate) fn from_layer_subset(
        layer: &RawLayer,
        keep: &[usize],
        x: Vec<f64>,
        y: Vec<f64>,
    ) -> Pattern {
        // `keep` is ascending within the layer's points: as many as the
        // layer has, it is 0, 1, 2, ... and a full column is taken whole.
        let all = |len: usize| len == layer.len() && keep.len() == len;
        let pick_f = |v: &Option<Vec<f64>>| {
            v.as_ref().map(|v| {
                if all(v.len()) {
                    return v.clone();
                }
                keep.iter()
                    .map(|&i| v.get(i).copied().unwrap_or(f64::NAN))
                    .collect()
            })
        };
        Pattern {
            x,
            y,
            time: pick_f(&layer.time),
            time_end: pick_f(&layer.time_end),
            category: layer.category.as_ref().map(|v| {
                if all(v.len()) {
                    return v.clone();
                }
                keep.iter()
                    .map(|&i| v.get(i).copied().unwrap_or(0))
                    .collect()
            }),
            category_names: layer.category_names.clone(),
            weight: pick_f(&layer.weight),
            row: if all(layer.row.len()) {
                layer.row.clone()
            } else {
                keep.iter()
                    .map(|&i| layer.row.get(i).copied().unwrap_or(0))
                    .collect()
            },
            index: IndexCache::default(),
        }
    }
    pub fn len(&self) -> usize {
        self.x.len()
    }
    pub fn is_empty(&self) -> bool {
        self.x.is_empty()
    }
    pub fn x(&self) -> &[f64] {
        &self.x
    }
    pub fn y(&self) -> &[f64] {
        &self.y
    }
    /// Days since 1970-01-01T00:00Z; NaN where the point has no usable time.
    pub fn time(&self) -> Option<&[f64]> {
        self.time.as_deref()
    }
    /// End of each point's time window (days, as [`Pattern::time`]); `None`
    /// when the events have no "to" column. NaN where a row has no end.
    pub fn time_end(&self) -> Option<&[f64]> {
        self.time_end.as_deref()
    }
    /// Events known only within a from–to window (a finite start and a
    /// later finite end), and the median window length in days (`None`
    /// when there is none).
    pub fn time_windows(&self) -> (usize, Option<f64>) {
        let (Some(s), Some(e)) = (self.time(), self.time_end()) else {
            return (0, None);
        };
        let mut len: Vec<f64> = s
            .iter()
            .zip(e)
            .map(|(a, b)| b - a)
            .filter(|d| d.is_finite() && *d > 0.0)
            .collect();
        len.sort_by(f64::total_cmp);
        let m = len.len();
        let median = match m {
            0 => None,
            _ if m % 2 == 1 => Some(len[m / 2]),
            _ => Some(0.5 * (len[m / 2 - 1] + len[m / 2])),
        };
        (m, median)
    }
    /// Points without a usable time (0 without a time column).
    pub fn missing_time(&self) -> usize {
        self.time
            .as_ref()
            .map_or(0, |t| t.iter().filter(|v| !v.is_finite()).count())
    }
    /// Points without a usable weight (0 without a weight column).
    pub fn missing_weight(&self) -> usize {
        self.weight
            .as_ref()
            .map_or(0, |w| w.iter().filter(|v| !v.is_finite()).count())
    }
    /// The weights for a weighted analysis: a point without a usable weight
    /// counts 0 (see the type's documentation). `None` without a weight column.
    pub fn weights_or_zero(&self) -> Option<std::borrow::Cow<'_, [f64]>> {
        let w = self.weight.as_deref()?;
        if w.iter().all(|v| v.is_finite()) {
            return Some(std::borrow::Cow::Borrowed(w));
        }
        Some(std::borrow::Cow::Owned(
            w.iter()
                .map(|&v| if v.is_finite() { v } else { 0.0 })
                .collect(),
        ))
    }
    pub fn category(&self) -> Option<&[u32]> {
        self.category.as_deref()
    }
    pub fn category_names(&self) -> &[String] {
        &self.category_names
    }
    /// Weights as read; NaN where the point has no usable weight (weighted
    /// analyses use [`Pattern::weights_or_zero`]).
    pub fn weight(&self) -> Option<&[f64]> {
        self.weight.as_deref()
    }
    /// Source row of each point.
    pub fn row(&self) -> &[u64] {
        &self.row
    }
}

/// Coincident points: several events at exactly the same coordinates.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
pub struct Coincidence {
    /// Distinct locations holding two or more events.
    pub locations: usize,
    /// Events at such locations (all of them, not just the extra ones).
    pub events: usize,
    /// The most events at one location.
    pub largest: usize,
}

/// Events, controls and study area in one metre grid.
#[derive(Debug, Clone)]
pub struct Study {
    pub projection: Projection,
    pub window: Window,
    pub events: Pattern,
    pub controls: Option<Pattern>,
    /// Rejected event rows, including those outside the study area.
    pub event_rejections: Vec<Rejection>,
    pub events_rows_read: u64,
    pub control_rejections: Vec<Rejection>,
    pub controls_rows_read: u64,
    pub coincident: Coincidence,
    /// Plain-words warnings for the page (e.g. window drawn around the points).
    pub warnings: Vec<String>,
}

/// How coordinates of a layer are described in messages.
fn kind_words(k: CoordKind) -> String {
    match k {
        CoordKind::LonLat => "longitude/latitude".to_string(),
        CoordKind::Planar { unit } => match unit {
            LengthUnit::Metre => "planar metres".to_string(),
            LengthUnit::Foot => "planar feet".to_string(),
            LengthUnit::UsSurveyFoot => "planar US survey feet".to_string(),
        },
    }
}

/// Centre of the smallest longitude interval holding all `lons` (so data
/// straddling ±180° is centred near ±180°, not near 0°).
fn lon_centre(lons: impl Iterator<Item = f64> + Clone) -> f64 {
    let (mut a0, mut a1, mut b0, mut b1) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
    for l in lons.filter(|l| l.is_finite()) {
        a0 = a0.min(l);
        a1 = a1.max(l);
        let s = if l < 0.0 { l + 360.0 } else { l };
        b0 = b0.min(s);
        b1 = b1.max(s);
    }
    if a0 > a1 {
        return 0.0;
    }
    if a1 - a0 <= b1 - b0 {
        (a0 + a1) / 2.0
    } else {
        let c = (b0 + b1) / 2.0;
        if c > 180.0 {
            c - 360.0
        } else {
            c
        }
    }
}

fn mid_range(v: impl Iterator<Item = f64>) -> f64 {
    let (lo, hi) = v
        .filter(|v| v.is_finite())
        .fold((f64::MAX, f64::MIN), |(lo, hi), v| (lo.min(v), hi.max(v)));
    if lo > hi {
        0.0
    } else {
        (lo + hi) / 2.0
    }
}

/// Counts events at exactly the same input coordinates (0.0 and −0.0 as
/// the same place) on a neighbour index over the same points (in any
/// coordinates that give equal points equal places, such as their
/// projection): `input(i)` gives point i's input coordinates. The index
/// groups equal places cell by cell without sorting them all; a place
/// holding two or more points is split by the points' input coordinates,
/// so two inputs that a projection happened to round to one place are not
/// counted together.
fn coincidence_on(g: &GridIndex, input: impl Fn(usize) -> (f64, f64)) -> Coincidence {
    let loc = g.locations();
    let mut c = Coincidence::default();
    let mut add = |run: usize| {
        if run >= 2 {
            c.locations += 1;
            c.events += run;
            c.largest = c.largest.max(run);
        }
    };
    let key = |s: u32| {
        let (x, y) = input(g.id[s as usize] as usize);
        ((x + 0.0).to_bits(), (y + 0.0).to_bits())
    };
    let mut keys = Vec::new();
    for l in 0..loc.len() {
        let members = loc.members(l);
        let Some(&first) = members.first() else {
            continue;
        };
        if members.len() < 2 {
            continue;
        }
        let k0 = key(first);
        if members.iter().all(|&s| key(s) == k0) {
            add(members.len());
            continue;
        }
        keys.clear();
        keys.extend(members.iter().map(|&s| key(s)));
        keys.sort_unstable();
        for run in keys.chunk_by(|a, b| a == b) {
            add(run.len());
        }
    }
    c
}

/// [`coincidence_on`] with an index built on the input coordinates.
#[cfg(test)]
fn coincidence(x: &[f64], y: &[f64]) -> Coincidence {
    coincidence_on(&GridIndex::new(x, y), |i| (x[i], y[i]))
}

/// Projects a layer and keeps the points inside the window; the rest become
/// "outside the study area" rejections, merged with the reader's rejections
/// in row order. Also returns the kept indices into the layer.
///
/// `projected`: the layer's points already projected, and whether the
/// window was drawn around exactly these points (convex hull or bounding
/// box), in which case every finite point lies in it by construction and
/// the point-in-polygon test is skipped.
fn place_layer(
    layer: &RawLayer,
    projection: &Projection,
    window: &Window,
    projected: Option<(Vec<f64>, Vec<f64>, bool)>,
) -> (Pattern, Vec<Rejection>, Vec<usize>) {
    let n = layer.len();
    let mut keep = Vec::with_capacity(n);
    let mut rejections = layer.rejections.clone();
    let (px, py, drawn_around) = match projected {
        Some(p) if p.0.len() == n && p.1.len() == n => p,
        _ => {
            let (px, py) = projection.forward_many(&layer.x, &layer.y);
            (px, py, false)
        }
    };
    for i in 0..n {
        let (e, no) = (px[i], py[i]);
        if e.is_finite() && no.is_finite() && (drawn_around || window.contains(e, no)) {
            keep.push(i);
        } else {
            // Say which number is which (a swapped pair is a common cause).
            let mut value = match layer.coords {
                CoordKind::LonLat => format!("lon {}, lat {}", layer.x[i], layer.y[i]),
                CoordKind::Planar { .. } => format!("x {}, y {}", layer.x[i], layer.y[i]),
            };
            if value.chars().count() > 60 {
                value = value.chars().take(60).collect();
            }
            rejections.push(Rejection {
                row: layer.row.get(i).copied().unwrap_or(0),
                column: None,
                reason: RejectReason::OutsideStudyArea,
                value,
            });
        }
    }
    rejections.sort_by_key(|r| r.row);
    // Every point kept (the usual case): the projected vectors as they are.
    let (xs, ys) = if keep.len() == n {
        (px, py)
    } else {
        (
            keep.iter().map(|&i| px[i]).collect(),
            keep.iter().map(|&i| py[i]).collect(),
        )
    };
    (
        Pattern::from_layer_subset(layer, &keep, xs, ys),
        rejections,
        keep,
    )
}

/// Events that are far from all the others, found before the projection
/// and the fallback study area are chosen (a stray point would stretch
/// both). The rule works on the distances from the median centre
/// (coordinate-wise median; in longitude/latitude measured on a local
/// equirectangular approximation, which is ample for the purpose). A point
/// is far when it lies both beyond Tukey's far-out fence Q3 + 3·(Q3 − Q1)
/// on those distances (Tukey 1977, *Exploratory Data Analysis*,
/// Addison-Wesley) and beyond a gap: the first place, past the median, where
/// the sorted distances jump by more than [`FAR_GAP`] times. Coordinate
/// errors (a placeholder, exchanged axes, a dropped digit) put a point
/// hundreds of times farther out than the rest; an honest sparse scatter
/// around a dense centre has no such gap and is never cut, nor is a group
/// of more than [`FAR_MAX_SHARE`] of the events (a second place).
/// Longitude/latitude (0, 0) beyond the fence is a
/// [`RejectReason::ZeroPlaceholder`]; a point beyond it that would lie
/// inside it with latitude and longitude exchanged is a
/// [`RejectReason::SwappedLatLon`]. Needs at least [`FAR_MIN_EVENTS`] events.
/// Returns one entry per event: `None` to keep it.
pub fn far_points(layer: &RawLayer) -> Vec<Option<RejectReason>> {
    let n = layer.len();
    let mut out = vec![None; n];
    if n < FAR_MIN_EVENTS {
        return out;
    }
    // Order statistics by selection (linear time) rather than sorting: the
    // same values as indexing the sorted vector.
    let median = |mut v: Vec<f64>| {
        let m = v.len() / 2;
        let (lower, &mut mid, _) = v.select_nth_unstable_by(m, f64::total_cmp);
        if n % 2 == 1 {
            mid
        } else {
            let below = lower.iter().copied().max_by(f64::total_cmp).unwrap_or(mid);
            0.5 * (below + mid)
        }
    };
    let mx = median(layer.x.clone());
    let my = median(layer.y.clone());
    let geographic = layer.coords == CoordKind::LonLat;
    let kx = if geographic {
        my.to_radians().cos().max(0.01)
    } else {
        1.0
    };
    let dist = |x: f64, y: f64| {
        let dx = if geographic {
            lon_difference(x, mx)
        } else {
            x - mx
        };
        root_sum_squares(dx * kx, y - my)
    };
    let d: Vec<f64> = (0..n).map(|i| dist(layer.x[i], layer.y[i])).collect();
    // `work` is d reordered so that work[lo] is the sorted distances' entry
    // lo and work[lo..] holds the sorted entries lo.. (in some order), and
    // likewise for the quartiles' entries: the same values as sorting d.
    let q_at = |p: f64| ((p * (n - 1) as f64).round() as usize).min(n - 1);
    let (i1, i3, lo) = (q_at(0.25), q_at(0.75), (n / 2).max(1) - 1);
    let mut work = d.clone();
    work.select_nth_unstable_by(lo, f64::total_cmp);
    let mut at = |i: usize| {
        use std::cmp::Ordering::*;
        match i.cmp(&lo) {
            Equal => work[lo],
            Less => *work[..lo].select_nth_unstable_by(i, f64::total_cmp).1,
            Greater => {
                *work[lo + 1..]
                    .select_nth_unstable_by(i - lo - 1, f64::total_cmp)
                    .1
            }
        }
    };
    let (q1, q3) = (at(i1), at(i3));
    let tukey = q3 + 3.0 * (q3 - q1);
    // The gap: the first step, past the median, where the sorted distances
    // jump by more than FAR_GAP times; everything after it is cut off from
    // the rest. Without such a gap nothing is far, however sparse.
    let gap = first_gap(&mut work[lo..]);
    let fence = tukey.max(gap);
    if !(fence > 0.0 && fence.is_finite()) {
        return out;
    }
    let beyond = d.iter().filter(|&&x| x > fence).count();
    if beyond as f64 > FAR_MAX_SHARE * n as f64 {
        return out;
    }
    for i in 0..n {
        if d[i] <= fence {
            continue;
        }
        let (x, y) = (layer.x[i], layer.y[i]);
        out[i] = Some(if geographic && x == 0.0 && y == 0.0 {
            RejectReason::ZeroPlaceholder
        } else if geographic && y.abs() <= 180.0 && x.abs() <= 90.0 && dist(y, x) <= fence {
            RejectReason::SwappedLatLon
        } else {
            RejectReason::FarFromOthers
        });
    }
    out
}

/// `x − m` in degrees of longitude, wrapped into [−180, 180): the same
/// bits as `(x − m + 180).rem_euclid(360) − 180`, without its division
/// when no wrapping is needed (rem_euclid is the identity on [0, 360)).
fn lon_difference(x: f64, m: f64) -> f64 {
    let t = x - m + 180.0;
    if (0.0..360.0).contains(&t) {
        t - 180.0
    } else {
        t.rem_euclid(360.0) - 180.0
    }
}

/// √(a² + b²) as the plain root of the sum of squares (within an ulp or
/// so of `hypot`, which costs ten times as much), or `hypot` where a
/// square overflows or underflows.
fn root_sum_squares(a: f64, b: f64) -> f64 {
    let s = a * a + b * b;
    if s.is_finite() && s >= f64::MIN_POSITIVE {
        s.sqrt()
    } else {
        a.hypot(b)
    }
}

/// The lower value of the first step between neighbours in sorted order of
/// `v` (non-negative distances) from a positive value to one more than
/// [`FAR_GAP`] times larger; infinity when there is none. `v` may be
/// reordered.
///
/// Without sorting: two values in the same binade (same floating-point
/// exponent) differ by less than a factor 2, so no such step lies inside a
/// binade, and the steps between binades are from the largest value of one
/// occupied binade to the smallest of the next. Zeros are never the lower
/// end of a step. Anything else (non-finite, subnormal) is sorted.
fn first_gap(v: &mut [f64]) -> f64 {
    let normal = v.iter().all(|x| *x == 0.0 || (x.is_normal() && *x > 0.0));
    if !normal {
        v.sort_by(f64::total_cmp);
        for k in 1..v.len() {
            if v[k - 1] > 0.0 && v[k] > FAR_GAP * v[k - 1] {
                return v[k - 1];
            }
        }
        return f64::INFINITY;
    }
    let mut lo = vec![f64::INFINITY; 2048];
    let mut hi = vec![0.0_f64; 2048];
    for &x in v.iter() {
        if x > 0.0 {
            let e = (x.to_bits() >> 52) as usize & 0x7ff;
            lo[e] = lo[e].min(x);
            hi[e] = hi[e].max(x);
        }
    }
    let mut prev = 0.0_f64;
    for e in 0..2048 {
        if hi[e] == 0.0 {
            continue;
        }
        if prev > 0.0 && lo[e] > FAR_GAP * prev {
            return prev;
        }
        prev = hi[e];
    }
    f64::INFINITY
}

/// Events per core before, in a native build, the events' neighbour index
/// is built alongside the area drawn around them (at intake).
pub const INDEX_ALONGSIDE: usize = 100_000;

/// Events needed before [`far_points`] judges any of them.
pub const FAR_MIN_EVENTS: usize = 20;
/// How many times farther out than the next event a point must be to be cut
/// off by a gap (a judgement call \[CP\], no single source: coordinate
/// errors are usually hundreds of times farther out).
pub const FAR_GAP: f64 = 20.0;
/// At most this share of the events can be judged far: more than that beyond
/// a gap is a second place, not a handful of errors (a judgement call \[CP\]).
pub const FAR_MAX_SHARE: f64 = 0.1;

impl Study {
    /// Projects and validates the layers together.
    ///
    /// # Steps
    /// 1. The events, the controls and the study area must all use the same
    ///    kind of coordinates (lon/lat, or planar in the same unit), else
    ///    `Mismatch`.
    /// 2. Projection: for lon/lat, a transverse Mercator centred on the
    ///    middle of the study area's bounding box (or the events' box when
    ///    there is no area file); planar input is only scaled to metres.
    /// 3. Window: the projected area polygons (edges are straight lines in
    ///    metres between the projected corners), or, without an area file,
    ///    the convex hull or bounding box of the projected events with a
    ///    warning.
    /// 4. Events and controls outside the window (holes included) become
    ///    rejections with reason "outside the study area", column `None`
    ///    and the input coordinates as value; rejection lists stay sorted by
    ///    row. No event left → `NoValidRows`; no control left → `Mismatch`.
    /// 5. Coincident events (exactly equal input coordinates) are counted
    ///    and kept as they are: never dropped, merged or jittered.
    ///
    /// `events.len() + event_rejections.len() == events_rows_read` holds
    /// whenever the reader's `accepted + rejected == rows_read` holds, i.e.
    /// for one point per row. (A GeoJSON MultiPoint feature read as several
    /// points would break the equality; the reader decides how to count it.)
    pub fn build(
        events: &RawLayer,
        area: Option<&RawArea>,
        controls: Option<&RawLayer>,
        fallback: AreaFallback,
    ) -> Result<Study, InputError> {
        let kind = events.coords;
        let mismatch = |what: &str, other: CoordKind| {
            InputError::new(InputErrorKind::Mismatch {
                detail: format!(
                    "the events are in {} but the {what} is in {}; both must use the same \
                     coordinates",
                    kind_words(kind),
                    kind_words(other)
                ),
            })
        };
        if let Some(a) = area {
            if a.coords != kind {
                return Err(mismatch("study area", a.coords));
            }
        }
        if let Some(c) = controls {
            if c.coords != kind {
                return Err(mismatch("control layer", c.coords));
            }
        }
        if events.is_empty() {
            return Err(InputError::new(InputErrorKind::NoValidRows {
                rows_read: events.rows_read,
            }));
        }
        let mut warnings = Vec::new();

        // 1b. Without a study-area file, events far from all the others would
        // stretch the area drawn around them: list them as not used (unless
        // the user keeps them).
        let without_far;
        let events = if area.is_none() && !events.keep_far_points {
            let far = far_points(events);
            let k = far.iter().filter(|r| r.is_some()).count();
            if k > 0 {
                warnings.push(format!(
                    "{k} event(s) lie far from all the others (suspected coordinate errors: \
                     placeholders at 0, 0, latitude and longitude exchanged, typing slips) and \
                     were left out of the area drawn around the events; they are listed with \
                     the rows not used. Keep them with the option to keep far-off points if \
                     they are real."
                ));
                without_far = events.without(&far);
                &without_far
            } else {
                events
            }
        } else {
            events
        };

        // 2. Projection centre.
        let (cx, cy) = match area {
            Some(a) => {
                let verts = || a.polygons.iter().flatten().flatten();
                (
                    lon_centre(verts().map(|p| p[0])),
                    mid_range(verts().map(|p| p[1])),
                )
            }
            None => (
                lon_centre(events.x.iter().copied()),
                mid_range(events.y.iter().copied()),
            ),
        };
        let projection = Projection::for_data(kind, cx, cy);
        if let (Some(a), true) = (area, projection.is_geographic()) {
            let reach = a
                .polygons
                .iter()
                .flatten()
                .flatten()
                .map(|p| lon_difference(p[0], cx).abs())
                .fold(0.0_f64, f64::max);
            if reach > MAX_LON_FROM_CENTRE {
                return Err(InputError::new(InputErrorKind::BadPolygon {
                    detail: format!(
                        "the study area reaches {reach:.1}° of longitude from its centre \
                         (longitude {cx:.4}); one flat map (a transverse Mercator) can hold at \
                         most {MAX_LON_FROM_CENTRE}° either side, and is already far off well \
                         before that. Split the area, or give it and the events in a projected \
                         coordinate system suited to it"
                    ),
                }));
            }
        }

        // 3. Window.
        let mut projected_events = None;
        let mut index_alongside = None;
        let window = match area {
            Some(a) => {
                let polys = projection.forward_polygons(&a.polygons);
                let place = |p: [f64; 2]| {
                    let (x, y) = projection.inverse(p[0], p[1]);
                    if projection.is_geographic() {
                        format!("longitude {x:.6}, latitude {y:.6}")
                    } else {
                        format!("({x}, {y})")
                    }
                };
                let w = Window::from_polygons_placed(polys, WindowOrigin::File, &place)?;
                warnings.extend(w.notes().iter().cloned());
                if projection.is_geographic() {
                    warnings.extend(large_area_warning(&a.polygons, w.area()));
                }
                w
            }
            None => {
                let (px, py) = projection.forward_many(&events.x, &events.y);
                // Many events in a native build: the area is drawn around
                // them on a second core while their neighbour index (with
                // its distinct places) is built here. It is the index of
                // the events kept when all are (every finite point lies in
                // an area drawn around them).
                let many = crate::cores::threads_for(px.len(), INDEX_ALONGSIDE) > 1;
                let (index, drawn) = crate::cores::both(
                    many,
                    || {
                        many.then(|| {
                            let g = GridIndex::new(&px, &py);
                            let _ = g.locations();
                            g
                        })
                    },
                    || match fallback {
                        AreaFallback::ConvexHull => (
                            Window::convex_hull_of(&px, &py),
                            "the convex hull of the events",
                        ),
                        AreaFallback::BoundingBox => (
                            Window::bounding_box_of(&px, &py),
                            "the bounding box of the events",
                        ),
                    },
                );
                index_alongside = index;
                let (w, shape) = (drawn.0?, drawn.1);
                warnings.push(format!(
                    "No study-area file was given, so the study area is {shape}. An area drawn \
                     around the points is not the space where events could have happened, so \
                     every comparison with chance is biased: a tight hull overstates the \
                     intensity and makes events look more evenly spread than they are, while a \
                     rectangle can take in empty corners and make them look more clustered. \
                     Give the true study area if you have it."
                ));
                projected_events = Some((px, py, true));
                w
            }
        };

        // Metres that look like degrees: planar coordinates (none were
        // recognised by name, or the user said so) that all lie within
        // longitude and latitude ranges, many events in a few metres.
        if let Some(w) = degrees_as_metres_warning(events, &window, &projection) {
            warnings.push(w);
        }

        // Stretch of distances far from the centre.
        if projection.is_geographic() {
            let kmax = window
                .polygons()
                .iter()
                .flatten()
                .flatten()
                .map(|p| {
                    let (lon, lat) = projection.inverse(p[0], p[1]);
                    projection.scale_factor(lon, lat)
                })
                .filter(|k| k.is_finite())
                .fold(1.0_f64, f64::max);
            if kmax > 1.001 {
                warnings.push(format!(
                    "The study area is large: at its far edge, distances in metres are {:.2} % \
                     longer than on the ground, because the map flattening is exact only along \
                     its central meridian.",
                    (kmax - 1.0) * 100.0
                ));
            }
        }

        // 4. Place events and controls.
        let (mut ev, event_rejections, kept) =
            place_layer(events, &projection, &window, projected_events);
        if let Some(g) = index_alongside.filter(|g| g.len() == ev.len()) {
            ev = ev.with_index(g);
        }
        let outside = event_rejections
            .iter()
            .filter(|r| r.reason == RejectReason::OutsideStudyArea)
            .count();
        if ev.is_empty() {
            // Readable events, all outside a loaded boundary: say that, not
            // "no rows could be used" (the reasons would list only the few
            // unreadable rows).
            let kind = if outside > 0 && area.is_some() {
                InputErrorKind::AllOutsideArea {
                    rows_read: events.rows_read,
                    outside: outside as u64,
                }
            } else {
                InputErrorKind::NoValidRows {
                    rows_read: events.rows_read,
                }
            };
            return Err(InputError::new(kind));
        }
        if outside > 0 {
            warnings.push(format!(
                "{outside} event(s) lie outside the study area (or inside one of its holes) and \
                 were left out; they are listed with the rejected rows."
            ));
        }
        let no_time = ev.missing_time();
        if no_time > 0 {
            warnings.push(format!(
                "{no_time} event(s) have no usable date: left out of the time analyses (the time \
                 span); they stay in the spatial analyses. They are listed with the rows that \
                 have a value left out."
            ));
        }
        let no_weight = ev.missing_weight();
        if no_weight > 0 {
            warnings.push(format!(
                "{no_weight} event(s) have no usable weight: they count 0 in weighted analyses \
                 (not 1) and 1 in unweighted ones. They are listed with the rows that have a \
                 value left out."
            ));
        }
        let (ctrl, control_rejections, controls_rows_read) = match controls {
            Some(c) => {
                let (p, rej, _) = place_layer(c, &projection, &window, None);
                if p.is_empty() {
                    return Err(InputError::new(InputErrorKind::Mismatch {
                        detail: format!(
                            "none of the {} control rows gives a point inside the study area",
                            c.rows_read
                        ),
                    }));
                }
                (Some(p), rej, c.rows_read)
            }
            None => (None, Vec::new(), 0),
        };

        // 5. Coincident events, by input coordinates, on the index of the
        // projected events (equal inputs project to equal places), which
        // the summary's nearest-neighbour distances then use too.
        let coincident = coincidence_on(ev.index(), |i| (events.x[kept[i]], events.y[kept[i]]));
        if coincident.locations > 0 {
            warnings.push(format!(
                "{} events share a location with another event ({} locations, up to {} at one \
                 place). They are kept as they are; they give nearest-neighbour distances of 0, \
                 which pulls distance-based measures toward clustering.",
                coincident.events, coincident.locations, coincident.largest
            ));
        }

        Ok(Study {
            projection,
            window,
            events: ev,
            controls: ctrl,
            event_rejections,
            events_rows_read: events.rows_read,
            control_rejections,
            controls_rows_read,
            coincident,
            warnings,
        })
    }
}

/// Events from which [`degrees_as_metres_warning`] speaks.
pub const DEGREES_AS_METRES_MIN_EVENTS: usize = 20;
/// Longest side, in metres, of a planar study area that
/// [`degrees_as_metres_warning`] finds too small for many events (a
/// judgement call \[CP\]: a spread of longitudes and latitudes read as
/// metres spans a few units; no study of events lives in a few metres).
pub const DEGREES_AS_METRES_MAX_SIDE_M: f64 = 5.0;

/// A warning when planar coordinates look like longitudes and latitudes
/// read as metres: at least [`DEGREES_AS_METRES_MIN_EVENTS`] events, every
/// x within ±180 and y within ±90, and a study area whose longer side is
/// under [`DEGREES_AS_METRES_MAX_SIDE_M`] metres. It happens when the
/// columns' names say nothing of the kind of coordinates (the reader then
/// takes metres) and the columns are chosen by hand.
fn degrees_as_metres_warning(
    events: &RawLayer,
    window: &Window,
    projection: &Projection,
) -> Option<String> {
    if projection.is_geographic() || events.len() < DEGREES_AS_METRES_MIN_EVENTS {
        return None;
    }
    let in_range =
        events.x.iter().all(|v| v.abs() <= 180.0) && events.y.iter().all(|v| v.abs() <= 90.0);
    let [x0, y0, x1, y1] = window.bbox();
    let side = (x1 - x0).max(y1 - y0);
    (in_range && side < DEGREES_AS_METRES_MAX_SIDE_M).then(|| {
        format!(
            "The coordinates were read as metres, but the {} events lie within {side:.3} m of \
             each other and every value is a possible longitude (x) and latitude (y). If they \
             are longitudes and latitudes, set Coordinates to \"longitude / latitude °\" where \
             the columns are chosen (in a script, coords lon_lat); otherwise every distance, \
             area and density is wrong.",
            events.len()
        )
    })
}

/// Farthest a lon/lat study area may reach from its central meridian, in
/// degrees of longitude: beyond it the study area is refused (a cap around
/// a pole, or a band around the globe, cannot be flattened by one
/// transverse Mercator, which is singular 90° from its central meridian).
pub const MAX_LON_FROM_CENTRE: f64 = 60.0;

/// Largest relative difference between the planar area of a lon/lat study
/// area and its area on the WGS 84 ellipsoid before a warning is given.
pub const AREA_ERROR_WARN: f64 = 0.001;

/// For a lon/lat study area: a warning when its area in metres (one
/// transverse Mercator) differs from its area on the ellipsoid by more than
/// [`AREA_ERROR_WARN`]. The ellipsoidal area is Karney's (2013, "Algorithms
/// for geodesics", J. Geodesy 87:43–55) polygon area through `geo`'s
/// `GeodesicArea`, on the rings cut into pieces of at most 0.01° so that
/// geodesic pieces follow the straight lon/lat edges of GeoJSON.
fn large_area_warning(polygons: &[Vec<Vec<[f64; 2]>>], planar: f64) -> Option<String> {
    use geo::GeodesicArea;
    let ring = |r: &Vec<[f64; 2]>| -> geo::LineString<f64> {
        let mut pts: Vec<geo::Coord<f64>> = Vec::with_capacity(r.len());
        for w in r.windows(2) {
            let (a, b) = (w[0], w[1]);
            let n = ((b[0] - a[0]).abs().max((b[1] - a[1]).abs()) / 0.01)
                .ceil()
                .clamp(1.0, 1e5) as usize;
            for k in 0..n {
                let t = k as f64 / n as f64;
                pts.push(geo::Coord {
                    x: a[0] + t * (b[0] - a[0]),
                    y: a[1] + t * (b[1] - a[1]),
                });
            }
        }
        if let Some(l) = r.last() {
            pts.push(geo::Coord { x: l[0], y: l[1] });
        }
        let mut ls = geo::LineString(pts);
        ls.close();
        ls
    };
    let mut ellipsoid = 0.0;
    for p in polygons {
        if p.is_empty() {
            continue;
        }
        let g = geo::Polygon::new(ring(&p[0]), p[1..].iter().map(ring).collect());
        ellipsoid += g.geodesic_area_unsigned();
    }
    let rel = (planar - ellipsoid) / ellipsoid;
    (rel.is_finite() && rel.abs() > AREA_ERROR_WARN).then(|| {
        format!(
            "The study area is too large for one flat map: its area in metres is {:.2} % \
             {} than on the Earth's surface ({:.1} km² against {:.1} km²), and distances and \
             inside/outside near its far edges are distorted as well. Split it into smaller \
             areas, or give it (and the events) in a projected coordinate system suited to it.",
            rel.abs() * 100.0,
            if rel > 0.0 { "larger" } else { "smaller" },
            planar / 1e6,
            ellipsoid / 1e6
        )
    })
}

/// What the page shows about a study: projection, area, counts, warnings.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StudyReport {
    pub projection: Projection,
    pub projection_text: String,
    pub area_origin: WindowOrigin,
    pub area_km2: f64,
    pub events: usize,
    pub controls: Option<usize>,
    /// When the population file has a count column (people per point, any
    /// value other than 1): the total count (missing counts count 0).
    /// `None` for individual controls or no population file.
    pub controls_population: Option<f64>,
    pub coincident: Coincidence,
    pub warnings: Vec<String>,
    pub events_rows_read: u64,
    pub events_rejected: usize,
    pub controls_rows_read: u64,
    pub controls_rejected: usize,
    /// Events kept without a usable time / weight (see [`Pattern`]).
    pub events_without_time: usize,
    pub events_without_weight: usize,
    /// Events known only within a from–to window, and the median window
    /// length in days (`None` without windows).
    pub events_with_window: usize,
    pub median_window_days: Option<f64>,
}

impl Study {
    /// The study's [`StudyReport`].
    pub fn report(&self) -> StudyReport {
        StudyReport {
            projection: self.projection,
            projection_text: self.projection.describe(),
            area_origin: self.window.origin(),
            area_km2: self.window.area() / 1e6,
            events: self.events.len(),
            controls: self.controls.as_ref().map(|c| c.len()),
            controls_population: self.controls.as_ref().and_then(|c| {
                let w = c.weights_or_zero()?;
                w.iter().any(|&v| v != 1.0).then(|| w.iter().sum())
            }),
            coincident: self.coincident,
            warnings: self.warnings.clone(),
            events_rows_read: self.events_rows_read,
            events_rejected: self.event_rejections.len(),
            controls_rows_read: self.controls_rows_read,
            controls_rejected: self.control_rejections.len(),
            events_without_time: self.events.missing_time(),
            events_without_weight: self.events.missing_weight(),
            events_with_window: self.events.time_windows().0,
            median_window_days: self.events.time_windows().1,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::{ResolvedMapping, SourceFormat};

    fn layer(coords: CoordKind, pts: &[(f64, f64)]) -> RawLayer {
        // Rows 2.. as in a CSV with a header; row 3 rejected by the reader.
        let rows: Vec<u64> = (0..pts.len() as u64)
            .map(|i| if i == 0 { 2 } else { i + 3 })
            .collect();
        RawLayer {
            format: SourceFormat::Csv {
                delimiter: ',',
                decimal_comma: false,
            },
            columns: vec!["x".into(), "y".into(), "day".into()],
            mapping: ResolvedMapping::default(),
            coords,
            x: pts.iter().map(|p| p.0).collect(),
            y: pts.iter().map(|p| p.1).collect(),
            time: Some((0..pts.len()).map(|i| i as f64).collect()),
            time_end: None,
            category: None,
            category_names: vec![],
            weight: None,
            row: rows,
            rejections: vec![Rejection {
                row: 3,
                column: Some("x".into()),
                reason: RejectReason::NotANumber,
                value: "abc".into(),
            }],
            incomplete: vec![],
            rows_read: pts.len() as u64 + 1,
            time_has_clock: false,
            date_order: None,
            encoding: crate::input::text::Encoding::Utf8,
            keep_far_points: false,
        }
    }

    fn square_area(coords: CoordKind, x0: f64, y0: f64, s: f64, hole: bool) -> RawArea {
        let mut rings = vec![vec![[x0, y0], [x0 + s, y0], [x0 + s, y0 + s], [x0, y0 + s]]];
        if hole {
            let (a, b) = (x0 + 0.4 * s, x0 + 0.6 * s);
            let (c, d) = (y0 + 0.4 * s, y0 + 0.6 * s);
            rings.push(vec![[a, c], [b, c], [b, d], [a, d]]);
        }
        RawArea {
            polygons: vec![rings],
            coords,
        }
    }

    const METRE: CoordKind = CoordKind::Planar {
        unit: LengthUnit::Metre,
    };

    #[test]
    fn test_build_planar_with_area_and_hole() {
        let ev = layer(
            METRE,
            &[(1.0, 1.0), (5.0, 5.0), (20.0, 3.0), (9.0, 9.0), (4.0, 5.0)],
        );
        let area = square_area(METRE, 0.0, 0.0, 10.0, true);
        let s = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap();
        assert_eq!(s.events.x(), &[1.0, 9.0, 4.0]); // (4, 5) is on the hole's edge: inside
        assert_eq!(s.events.row(), &[2, 6, 7]);
        assert_eq!(s.events.time().unwrap(), &[0.0, 3.0, 4.0]);
        let rows: Vec<u64> = s.event_rejections.iter().map(|r| r.row).collect();
        assert_eq!(rows, vec![3, 4, 5]);
        let out = &s.event_rejections[1];
        assert_eq!(out.reason, RejectReason::OutsideStudyArea);
        assert_eq!(out.column, None);
        assert_eq!(out.value, "x 5, y 5", "which number is which");
        assert_eq!(
            s.events.len() + s.event_rejections.len(),
            s.events_rows_read as usize
        );
        assert_eq!(s.window.origin(), WindowOrigin::File);
        assert_eq!(s.window.area(), 96.0);
        assert!(s
            .warnings
            .iter()
            .any(|w| w.contains("2 event(s) lie outside")));
    }

    #[test]
    fn test_build_lonlat_centre_and_projection() {
        let ev = layer(
            CoordKind::LonLat,
            &[(10.01, 44.02), (10.05, 44.05), (10.09, 44.08)],
        );
        let area = square_area(CoordKind::LonLat, 10.0, 44.0, 0.1, false);
        let s = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap();
        match s.projection {
            Projection::TransverseMercator { lon0, lat0 } => {
                assert!((lon0 - 10.05).abs() < 1e-12 && (lat0 - 44.05).abs() < 1e-12);
            }
            _ => panic!("expected transverse Mercator"),
        }
        // The centre event maps to (0, 0); the area is about 8 km × 11 km.
        assert!(s.events.x()[1].abs() < 1e-6 && s.events.y()[1].abs() < 1e-6);
        let a = s.window.area() / 1e6;
        assert!(a > 85.0 && a < 92.0, "{a}");
        assert!(s.event_rejections.len() == 1 && s.warnings.is_empty());
    }

    #[test]
    fn test_dateline_centre() {
        assert!((lon_centre([179.0, -179.0, 179.5].into_iter()) - 180.0).abs() < 1e-12);
        assert!((lon_centre([178.0, -179.0].into_iter()) - 179.5).abs() < 1e-12);
        assert_eq!(lon_centre([-10.0, 20.0].into_iter()), 5.0);
        let ev = layer(
            CoordKind::LonLat,
            &[(179.9, -16.0), (-179.9, -16.1), (179.95, -16.2)],
        );
        let s = Study::build(&ev, None, None, AreaFallback::BoundingBox).unwrap();
        let b = s.window.bbox();
        // About 0.2° of longitude wide (≈ 21 km), not 360°.
        assert!(b[2] - b[0] < 25_000.0 && b[2] - b[0] > 15_000.0, "{b:?}");
    }

    #[test]
    fn test_mismatch_between_layers() {
        let ev = layer(CoordKind::LonLat, &[(10.0, 44.0)]);
        let area = square_area(METRE, 0.0, 0.0, 10.0, false);
        let e = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap_err();
        assert!(matches!(e.kind, InputErrorKind::Mismatch { .. }));
        assert!(e.to_string().contains("longitude/latitude") && e.to_string().contains("metres"));
        let ctrl = layer(
            CoordKind::Planar {
                unit: LengthUnit::Foot,
            },
            &[(1.0, 1.0)],
        );
        let ev = layer(METRE, &[(1.0, 1.0)]);
        let e = Study::build(&ev, None, Some(&ctrl), AreaFallback::ConvexHull).unwrap_err();
        assert!(e.to_string().contains("control layer is in planar feet"));
    }

    #[test]
    fn test_all_outside_the_area_says_so() {
        let ev = layer(METRE, &[(20.0, 20.0), (30.0, 30.0)]);
        let area = square_area(METRE, 0.0, 0.0, 10.0, false);
        let e = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap_err();
        assert_eq!(
            e.kind,
            InputErrorKind::AllOutsideArea {
                rows_read: 3,
                outside: 2
            }
        );
        assert_eq!(e.code(), "outside_study_area");
        assert!(e
            .to_string()
            .contains("all 2 readable events (of 3 rows) lie outside"));
    }

    #[test]
    fn test_fallback_windows_warn() {
        let ev = layer(METRE, &[(0.0, 0.0), (4.0, 0.0), (0.0, 3.0), (1.0, 1.0)]);
        let s = Study::build(&ev, None, None, AreaFallback::ConvexHull).unwrap();
        assert_eq!(s.window.origin(), WindowOrigin::ConvexHull);
        assert_eq!(s.window.area(), 6.0);
        assert_eq!(s.events.len(), 4);
        assert!(s.warnings[0].contains("convex hull") && s.warnings[0].contains("evenly spread"));
        let s = Study::build(&ev, None, None, AreaFallback::BoundingBox).unwrap();
        assert_eq!(s.window.area(), 12.0);
        // Too few distinct points for a hull: a clear BadPolygon error.
        let ev = layer(METRE, &[(0.0, 0.0), (1.0, 1.0)]);
        let e = Study::build(&ev, None, None, AreaFallback::ConvexHull).unwrap_err();
        assert!(matches!(e.kind, InputErrorKind::BadPolygon { .. }));
    }

    /// The study area drawn around the events holds every one of them, so
    /// the point-in-polygon test is skipped for it: check that the test
    /// would have kept them all (hull and box of 5,000 lon/lat events).
    #[test]
    fn test_area_drawn_around_events_holds_them_all() {
        use rand::RngExt;
        let mut rng = crate::rng::rng_from_seed(12);
        let pts: Vec<(f64, f64)> = (0..5000)
            .map(|_| {
                let (r, t) = (rng.random::<f64>().sqrt() * 0.2, rng.random::<f64>() * 6.3);
                (-12.3 + r * t.cos(), 38.7 + r * t.sin())
            })
            .collect();
        let ev = layer(CoordKind::LonLat, &pts);
        for fallback in [AreaFallback::ConvexHull, AreaFallback::BoundingBox] {
            let s = Study::build(&ev, None, None, fallback).unwrap();
            assert_eq!(s.events.len(), 5000);
            let (x, y) = (s.events.x(), s.events.y());
            assert!((0..5000).all(|i| s.window.contains(x[i], y[i])));
        }
    }

    #[test]
    fn test_coincident_events_counted_not_dropped() {
        let pts = [
            (1.0, 1.0),
            (2.0, 2.0),
            (1.0, 1.0),
            (3.0, 1.0),
            (1.0, 1.0),
            (2.0, 2.0),
        ];
        let ev = layer(METRE, &pts);
        let area = square_area(METRE, 0.0, 0.0, 10.0, false);
        let s = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap();
        assert_eq!(s.events.len(), 6);
        assert_eq!(
            s.coincident,
            Coincidence {
                locations: 2,
                events: 5,
                largest: 3
            }
        );
        assert!(s
            .warnings
            .iter()
            .any(|w| w.contains("5 events share a location")));
        assert_eq!(coincidence(&[], &[]), Coincidence::default());
        assert_eq!(coincidence(&[0.0, -0.0], &[1.0, 1.0]).events, 2);
    }

    #[test]
    fn test_controls_placed_and_all_outside() {
        let ev = layer(METRE, &[(1.0, 1.0), (2.0, 2.0)]);
        let ctrl = layer(METRE, &[(3.0, 3.0), (50.0, 50.0), (4.0, 4.0)]);
        let area = square_area(METRE, 0.0, 0.0, 10.0, false);
        let s = Study::build(&ev, Some(&area), Some(&ctrl), AreaFallback::ConvexHull).unwrap();
        let c = s.controls.as_ref().unwrap();
        assert_eq!(c.x(), &[3.0, 4.0]);
        assert_eq!(s.control_rejections.len(), 2);
        assert_eq!(
            c.len() + s.control_rejections.len(),
            s.controls_rows_read as usize
        );
        let ctrl = layer(METRE, &[(30.0, 3.0)]);
        let e = Study::build(&ev, Some(&area), Some(&ctrl), AreaFallback::ConvexHull).unwrap_err();
        assert!(matches!(e.kind, InputErrorKind::Mismatch { .. }));
    }

    #[test]
    fn test_planar_feet_converted() {
        let ft = CoordKind::Planar {
            unit: LengthUnit::Foot,
        };
        let ev = layer(ft, &[(100.0, 100.0), (200.0, 100.0), (100.0, 300.0)]);
        let s = Study::build(&ev, None, None, AreaFallback::BoundingBox).unwrap();
        assert!((s.window.area() - 100.0 * 200.0 * 0.3048 * 0.3048).abs() < 1e-9);
        assert_eq!(s.events.x()[1], 200.0 * 0.3048);
    }

    /// Seeded events around (lon −32.0, lat −41.5), about ±0.02° (a town).
    fn town(n: usize) -> Vec<(f64, f64)> {
        let mut rng = crate::rng::rng_from_seed(5);
        use rand::RngExt;
        (0..n)
            .map(|_| {
                (
                    -32.0 + 0.04 * (rng.random::<f64>() - 0.5),
                    -41.5 + 0.04 * (rng.random::<f64>() - 0.5),
                )
            })
            .collect()
    }

    #[test]
    fn far_points_are_named_by_what_they_probably_are() {
        let mut pts = town(60);
        pts.push((0.0, 0.0)); // placeholder
        pts.push((-41.51, -32.01)); // latitude and longitude exchanged
        pts.push((-3.2, -41.5)); // a dropped digit
        let ev = layer(CoordKind::LonLat, &pts);
        let far = far_points(&ev);
        assert!(
            far[..60].iter().all(Option::is_none),
            "no town event flagged"
        );
        assert_eq!(far[60], Some(RejectReason::ZeroPlaceholder));
        assert_eq!(far[61], Some(RejectReason::SwappedLatLon));
        assert_eq!(far[62], Some(RejectReason::FarFromOthers));
        // Without a study-area file they are left out, listed, and the hull is the town's.
        let s = Study::build(&ev, None, None, AreaFallback::ConvexHull).unwrap();
        assert_eq!(s.events.len(), 60);
        let reasons: Vec<&RejectReason> = s
            .event_rejections
            .iter()
            .filter(|r| r.column.is_none())
            .map(|r| &r.reason)
            .collect();
        assert_eq!(reasons.len(), 3);
        assert!(
            s.window.area() < 4.0e6 * 4.0,
            "hull of the town, not of the world: {}",
            s.window.area()
        );
        assert!(s
            .warnings
            .iter()
            .any(|w| w.contains("3 event(s) lie far from all the others")));
        let zero = s
            .event_rejections
            .iter()
            .find(|r| r.reason == RejectReason::ZeroPlaceholder)
            .unwrap();
        assert_eq!(zero.value, "lon 0, lat 0");
        // Kept on request.
        let mut keep = ev.clone();
        keep.keep_far_points = true;
        let s = Study::build(&keep, None, None, AreaFallback::ConvexHull).unwrap();
        assert_eq!(s.events.len(), 63);
    }

    #[test]
    fn honest_spread_is_not_cut() {
        // Uniform events in a square, and a clustered pattern with a sparse
        // scatter around it: nothing is far out.
        let mut rng = crate::rng::rng_from_seed(9);
        use rand::RngExt;
        let uni: Vec<(f64, f64)> = (0..500)
            .map(|_| (1000.0 * rng.random::<f64>(), 1000.0 * rng.random::<f64>()))
            .collect();
        assert!(far_points(&layer(METRE, &uni)).iter().all(Option::is_none));
        let mut clus: Vec<(f64, f64)> = (0..400)
            .map(|_| {
                (
                    500.0 + 20.0 * rng.random::<f64>(),
                    500.0 + 20.0 * rng.random::<f64>(),
                )
            })
            .collect();
        clus.extend((0..40).map(|_| (1000.0 * rng.random::<f64>(), 1000.0 * rng.random::<f64>())));
        let far = far_points(&layer(METRE, &clus));
        assert!(
            far.iter().all(Option::is_none),
            "{:?}",
            far.iter().filter(|r| r.is_some()).count()
        );
        // A second place (a fifth of the events, 50 km off) is not an error.
        let mut two = town(100);
        two.extend(town(25).into_iter().map(|(x, y)| (x + 0.6, y)));
        assert!(far_points(&layer(CoordKind::LonLat, &two))
            .iter()
            .all(Option::is_none));
        // Too few events to judge.
        assert!(
            far_points(&layer(METRE, &[(0.0, 0.0), (1.0, 0.0), (1e9, 1e9)]))
                .iter()
                .all(Option::is_none)
        );
    }

    /// Coincident places by the neighbour index against sorting the
    /// coordinate pairs and counting runs of equal ones (the method it
    /// replaces), on points with many repeated places, −0.0 and 0.0 kept
    /// apart from each other's neighbours.
    #[test]
    fn coincidence_matches_sorted_runs() {
        use rand::RngExt;
        let runs = |x: &[f64], y: &[f64]| {
            let mut p: Vec<(f64, f64)> = x
                .iter()
                .map(|v| v + 0.0)
                .zip(y.iter().map(|v| v + 0.0))
                .collect();
            p.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
            let mut c = Coincidence::default();
            let mut k = 0;
            while k < p.len() {
                let m = (k..p.len()).find(|&m| p[m] != p[k]).unwrap_or(p.len());
                if m - k >= 2 {
                    c.locations += 1;
                    c.events += m - k;
                    c.largest = c.largest.max(m - k);
                }
                k = m;
            }
            c
        };
        let mut rng = crate::rng::rng_from_seed(13);
        for n in [0usize, 1, 2, 50, 3000] {
            let (mut x, mut y): (Vec<f64>, Vec<f64>) = (0..n)
                .map(|_| {
                    // A few hundred addresses, so places repeat.
                    let a = rng.random_range(0..300) as f64;
                    ((a * 7.0) % 40.0 - 20.0, (a * 13.0) % 30.0)
                })
                .unzip();
            if n >= 50 {
                x[0] = -0.0;
                y[0] = 0.0;
                x[1] = 0.0;
                y[1] = -0.0;
                x[2] = 1e-300;
                y[2] = 0.0;
            }
            let c = coincidence(&x, &y);
            assert_eq!(c, runs(&x, &y), "n = {n}");
            if n == 3000 {
                assert!(c.locations > 100 && c.largest > 5);
            }
        }
    }

    /// Coincident events counted on the projected events' index (as
    /// `Study::build` does) against sorting the input coordinate pairs and
    /// counting runs of equal ones, for longitude/latitude centred on
    /// longitude 0 (so 0.0 and −0.0 reach the projection unchanged), feet
    /// and metres, with repeated places, signed zeros and a coordinate of
    /// 1e-300 beside 0.
    #[test]
    fn coincidence_on_projected_index_matches_input_runs() {
        use rand::RngExt;
        let runs = |pts: &[(f64, f64)]| {
            let mut p: Vec<(u64, u64)> = pts
                .iter()
                .map(|&(x, y)| ((x + 0.0).to_bits(), (y + 0.0).to_bits()))
                .collect();
            p.sort_unstable();
            let mut c = Coincidence::default();
            for run in p.chunk_by(|a, b| a == b) {
                if run.len() >= 2 {
                    c.locations += 1;
                    c.events += run.len();
                    c.largest = c.largest.max(run.len());
                }
            }
            c
        };
        let mut rng = crate::rng::rng_from_seed(29);
        let kinds = [
            (CoordKind::LonLat, 0.01),
            (
                CoordKind::Planar {
                    unit: LengthUnit::Foot,
                },
                500.0,
            ),
            (METRE, 500.0),
        ];
        for (kind, half) in kinds {
            let mut pts: Vec<(f64, f64)> = (0..4000)
                .map(|_| {
                    let a = rng.random_range(0..40) as f64;
                    let b = rng.random_range(0..40) as f64;
                    (half * (a / 20.0 - 1.0), half * (b / 20.0 - 1.0))
                })
                .collect();
            pts.extend([
                (0.0, 0.0),
                (-0.0, 0.0),
                (0.0, -0.0),
                (1e-300, 0.0),
                (0.0, 1e-300),
            ]);
            let ev = layer(kind, &pts);
            let area = square_area(kind, -2.0 * half, -2.0 * half, 4.0 * half, false);
            let s = Study::build(&ev, Some(&area), None, AreaFallback::ConvexHull).unwrap();
            assert_eq!(s.events.len(), pts.len());
            let want = runs(&pts);
            assert_eq!(s.coincident, want, "{kind:?}");
            assert!(want.locations > 500 && want.largest >= 5, "{want:?}");
        }
    }

    /// The binade form of the gap search against the plain scan of the
    /// sorted values it replaces, on values with and without gaps, zeros,
    /// ties and values that take the sorting path (subnormal, infinite).
    #[test]
    fn far_point_distances_match_their_definitions() {
        use rand::RngExt;
        let mut rng = crate::rng::rng_from_seed(5);
        let mut worst = 0.0_f64;
        for k in 0..200_000 {
            let (x, m) = match k % 4 {
                0 => (
                    rng.random_range(-180.0..180.0),
                    rng.random_range(-180.0..180.0),
                ),
                1 => (rng.random_range(-1e4..1e4), rng.random_range(-200.0..200.0)),
                2 => (179.999_999 + rng.random::<f64>() * 1e-6, -180.0),
                _ => (rng.random_range(-0.01..0.01), rng.random_range(-0.01..0.01)),
            };
            let want = (x - m + 180.0).rem_euclid(360.0) - 180.0;
            assert_eq!(lon_difference(x, m).to_bits(), want.to_bits(), "{x} {m}");
            let (a, b) = (
                rng.random_range(-1e7..1e7) * 10f64.powi(rng.random_range(-3..4)),
                rng.random_range(-1e7..1e7),
            );
            let (got, h) = (root_sum_squares(a, b), a.hypot(b));
            worst = worst.max((got - h).abs() / h.max(f64::MIN_POSITIVE));
        }
        assert!(worst <= 2.0 * f64::EPSILON, "{worst:e}");
        for (a, b) in [
            (1e200, 3e200),
            (1e-200, 2e-200),
            (0.0, 0.0),
            (-4e-320, 3e-320),
        ] {
            let want = f64::hypot(a, b);
            assert_eq!(root_sum_squares(a, b), want, "{a} {b}");
            assert!(want.is_finite());
        }
        assert!(root_sum_squares(f64::NAN, 1.0).is_nan());
    }

    /// Many events (the index then built alongside the area on a native
    /// build with two cores or more): the index kept with the events is the
    /// one built from their coordinates, so the coincidences and nearest
    /// neighbours are the same; with a far-off point left out, it is the
    /// index of the events kept.
    #[test]
    fn index_built_alongside_is_the_events_index() {
        use rand::RngExt;
        let mut rng = crate::rng::rng_from_seed(8);
        let n = 2 * INDEX_ALONGSIDE + 1000;
        let mut pts: Vec<(f64, f64)> = (0..n)
            .map(|_| {
                (
                    -32.0 + 0.1 * rng.random::<f64>(),
                    -41.5 + 0.1 * rng.random::<f64>(),
                )
            })
            .collect();
        for k in 0..500 {
            pts[n - 1 - k] = pts[k];
        }
        for far in [false, true] {
            if far {
                pts.push((0.0, 0.0));
            }
            let ev = layer(CoordKind::LonLat, &pts);
            let s = Study::build(&ev, None, None, AreaFallback::ConvexHull).unwrap();
            assert_eq!(s.events.len(), n);
            let (x, y) = (s.events.x(), s.events.y());
            let fresh = GridIndex::new(x, y);
            let kept = s.events.index();
            assert_eq!(kept.len(), n);
            assert_eq!(kept.cell().to_bits(), fresh.cell().to_bits());
            assert_eq!(kept.nn_distances(), fresh.nn_distances());
            assert_eq!(s.coincident, coincidence(x, y));
            assert_eq!(s.coincident.locations, 500);
        }
    }

    /// Longitudes and latitudes read as metres are named; true metres,
    /// true degrees and a handful of points are not.
    #[test]
    fn degrees_read_as_metres_are_named() {
        use rand::RngExt;
        let mut rng = crate::rng::rng_from_seed(14);
        let mut pts = |n: usize, x0: f64, y0: f64, side: f64| -> Vec<(f64, f64)> {
            (0..n)
                .map(|_| {
                    (
                        x0 + side * rng.random::<f64>(),
                        y0 + side * rng.random::<f64>(),
                    )
                })
                .collect()
        };
        let metres = CoordKind::Planar {
            unit: LengthUnit::Metre,
        };
        let warned = |kind: CoordKind, p: &[(f64, f64)]| {
            let s = Study::build(&layer(kind, p), None, None, AreaFallback::ConvexHull).unwrap();
            s.warnings.iter().any(|w| w.contains("were read as metres"))
        };
        let degrees = pts(120, 9.41, 50.02, 0.3);
        assert!(warned(metres, &degrees));
        assert!(!warned(CoordKind::LonLat, &degrees));
        assert!(!warned(metres, &pts(120, 0.0, 0.0, 1000.0)));
        assert!(!warned(metres, &degrees[..10]));
        // Within the ranges but spread over more than a few metres: real metres.
        assert!(!warned(metres, &pts(120, -170.0, -80.0, 150.0)));
    }

    #[test]
    fn first_gap_matches_sorted_scan() {
        use rand::RngExt;
        let scan = |v: &[f64]| {
            let mut s = v.to_vec();
            s.sort_by(f64::total_cmp);
            (1..s.len())
                .find(|&k| s[k - 1] > 0.0 && s[k] > FAR_GAP * s[k - 1])
                .map_or(f64::INFINITY, |k| s[k - 1])
        };
        let mut rng = crate::rng::rng_from_seed(11);
        let mut cases: Vec<Vec<f64>> = vec![
            vec![],
            vec![0.0, 0.0],
            vec![0.0, 5.0],
            vec![1.0, 20.0, 20.0000001, 1e6],
            vec![1.0, 1.9, 38.1, 38.0, 1e9],
            vec![3.0, 60.0, 61.0, 1e4, f64::INFINITY],
            vec![1e-310, 1e-300, 1.0],
        ];
        for _ in 0..300 {
            let m = rng.random_range(1..200);
            let spread = 10f64.powf(rng.random::<f64>() * 4.0);
            cases.push(
                (0..m)
                    .map(|_| match rng.random_range(0..10) {
                        0 => 0.0,
                        1 => spread.powi(rng.random_range(1..4)),
                        _ => rng.random::<f64>() * spread,
                    })
                    .collect(),
            );
        }
        for v in cases {
            let expected = scan(&v);
            let got = first_gap(&mut v.clone());
            assert_eq!(got.to_bits(), expected.to_bits(), "{v:?}");
        }
    }
}
