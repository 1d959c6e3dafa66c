// ---- Results of the methods, and the arguments that are not options (tools/result-types.d.ts, appended by tools/gen-dts.mjs) ----
// Each method of Session names its result type with `unchecked_return_type`
// in src/web/. tests/node/result-types.test.mjs calls every method on the
// demo files and checks that each result has exactly these keys and types,
// so a field added, removed or renamed in the Rust result structs fails the
// tests until this file follows. Lengths are metres (`_m`), areas km² (`_km2`)
// unless a name says otherwise; `[number, number]` is an (x, y) or
// (longitude, latitude) pair.

/** Unit of planar input coordinates. */
export type LengthUnit = 'metre' | 'foot' | 'us_survey_foot';

/** How input coordinates became metres. */
export type Projection = ProjectionTransverseMercator | ProjectionPlanar;

/** Transverse Mercator centred on the data (input in longitude/latitude). */
export interface ProjectionTransverseMercator {
  kind: 'transverse_mercator';
  lon0: number;
  lat0: number;
}

/** Input already planar, scaled by its unit. */
export interface ProjectionPlanar {
  kind: 'planar';
  unit: LengthUnit;
}

/** What the coordinates of a file are. */
export type CoordKind = CoordKindLonLat | CoordKindPlanar;

export interface CoordKindLonLat {
  kind: 'lon_lat';
}

export interface CoordKindPlanar {
  kind: 'planar';
  unit: LengthUnit;
}

/** Where the study area came from. */
export type WindowOrigin = 'file' | 'convex_hull' | 'bounding_box';

/** Events sharing a location with another event. */
export interface Coincidence {
  locations: number;
  events: number;
  largest: number;
}

/** What `study()` and the area methods return: projection, area, counts, warnings. */
export interface StudyReport {
  projection: Projection;
  projection_text: string;
  area_origin: WindowOrigin;
  area_km2: number;
  events: number;
  controls: number | null;
  /** Total of the population file's count column when it has one (any value other than 1); null for individual controls. */
  controls_population: number | null;
  coincident: Coincidence;
  warnings: string[];
  events_rows_read: number;
  events_rejected: number;
  controls_rows_read: number;
  controls_rejected: number;
  /** Events kept without a usable time / weight (left out of the analyses that need it). */
  events_without_time: number;
  events_without_weight: number;
  /** Events known only within a from–to window, and the median window length in days (null without windows). */
  events_with_window: number;
  median_window_days: number | null;
}

/** The format a file was read as. */
export type SourceFormat = SourceFormatCsv | SourceFormatGeoJson;

export interface SourceFormatCsv {
  format: 'csv';
  delimiter: string;
  decimal_comma: boolean;
}

export interface SourceFormatGeoJson {
  format: 'geo_json';
}

/** Column roles as used, by header name (null: no such column). */
export interface ResolvedMapping {
  x: string | null;
  y: string | null;
  time: string | null;
  /** The end of each event's time window (a "to" column). */
  time_until: string | null;
  category: string | null;
  weight: string | null;
}

/** Why a row was not accepted. */
export type RejectReason =
  | 'empty'
  | 'not_a_number'
  | 'latitude_out_of_range'
  | 'longitude_out_of_range'
  | 'outside_study_area'
  | 'bad_time'
  | 'reversed_window'
  | 'bad_weight'
  | 'too_few_fields'
  | 'too_many_fields'
  | 'bad_geometry'
  | 'zero_placeholder'
  | 'swapped_lat_lon'
  | 'far_from_others';

/** Rows rejected for one reason. */
export interface ReasonCount {
  reason: RejectReason;
  reason_text: string;
  count: number;
}

/** An error in short, where a result carries one. */
export interface ErrorSummary {
  code: string;
  message: string;
}

/** What `loadEvents` and `loadControls` return. */
export interface LoadReport {
  layer: 'events' | 'controls';
  format: SourceFormat | null;
  columns: string[];
  mapping: ResolvedMapping | null;
  coords: CoordKind;
  rows_read: number;
  accepted: number;
  rejected: number;
  by_reason: ReasonCount[];
  categories: string[];
  time_has_clock: boolean;
  /** The text encoding the file was read with, and its name for people. */
  encoding: TextEncoding;
  encoding_name: string;
  /** How dates were read, if there is a time column. */
  date_order: DateOrderReport | null;
  /** True when the dates cannot tell day/month from month/day (the page asks). */
  date_order_ambiguous: boolean;
  /** Rows kept with an optional value (time, weight) left out: the first 200, and how many. */
  incomplete: RejectionRow[];
  incomplete_count: number;
  /** Rejected rows as a share of the rows read; many_rejected above 10 %. */
  rejected_share: number;
  many_rejected: boolean;
  many_rejected_text: string | null;
  study: StudyReport | null;
  study_error: ErrorSummary | null;
}

/** The text encoding a file was read with. */
export type TextEncoding = 'utf8' | 'utf8_bom' | 'utf16_le' | 'utf16_be' | 'windows1252';

/** The date order used for a layer and why. */
export interface DateOrderReport {
  used: 'day_month_year' | 'month_day_year' | 'year_month_day';
  source: 'given' | 'detected' | 'ambiguous' | 'contradictory' | 'not_needed';
  ambiguous: boolean;
  text: string;
  example: DateOrderExample | null;
}

/** A date shown both ways, for the page's question. */
export interface DateOrderExample {
  row: number;
  value: string;
  day_month_year: string;
  month_day_year: string;
}

/** One rejected row (row 1 is a CSV header; GeoJSON rows are feature numbers). */
export interface RejectionRow {
  row: number;
  column: string | null;
  reason: RejectReason;
  reason_text: string;
  value: string;
}

/** A page of the rejection table (`rejections`). */
export interface RejectionPage {
  total: number;
  offset: number;
  rows: RejectionRow[];
}

/** Rows read, accepted and rejected for one layer. */
export interface LayerCounts {
  rows_read: number;
  accepted: number;
  rejected: number;
}

export interface MeanCentre {
  x_m: number;
  y_m: number;
  lon: number | null;
  lat: number | null;
}

/** The standard deviational ellipse (one SD along each axis). */
export interface Ellipse {
  centre_x_m: number;
  centre_y_m: number;
  major_axis_angle_deg: number;
  semi_major_m: number;
  semi_minor_m: number;
  outline_m: [number, number][];
  outline_lonlat: [number, number][] | null;
}

/** Nearest-neighbour distances, metres. */
export interface NnSummary {
  min: number;
  median: number;
  mean: number;
  max: number;
}

export interface TimeSpan {
  first: string;
  last: string;
  span_days: number;
  n_with_time: number;
  /** Events known only within a from–to window, and the median window length in days. */
  n_windows: number;
  median_window_days: number | null;
}

export interface CategoryCount {
  name: string;
  count: number;
}

/** The descriptive summary (`summary`). */
export interface Summary {
  n_events: number;
  n_controls: number | null;
  events: LayerCounts;
  controls: LayerCounts | null;
  projection: string;
  window_origin: WindowOrigin;
  window_area_km2: number;
  intensity_per_km2: number;
  mean_centre: MeanCentre;
  standard_distance_m: number;
  ellipse: Ellipse | null;
  nearest_neighbour_m: NnSummary | null;
  time_span: TimeSpan | null;
  categories: CategoryCount[];
  coincident: Coincidence;
  warnings: string[];
}

/** Geometry for the map in planar metres (`mapLayers`); points as x, y, x, y, … */
export interface MapLayers {
  events: Float64Array;
  event_category: Uint32Array | null;
  category_names: string[];
  controls: Float64Array | null;
  /** Polygons, each a list of rings (outer first), each a list of points. */
  area: [number, number][][][];
  bbox: [number, number, number, number];
  ellipse: [number, number][];
  mean_centre: [number, number];
}

// ---- Is it clustered? ----

/** One quadrat (kept when it overlaps the study area). */
export interface QuadratCell {
  ix: number;
  iy: number;
  bounds: [number, number, number, number];
  area_m2: number;
  count: number;
  expected: number;
}

export interface QuadratStats {
  chi_square: number;
  df: number;
  p_upper: number;
  p_lower: number;
  p_two_sided: number;
  expected: number[];
  dispersion_index: number;
  cells_below_5: number;
}

/** `quadratTest`: Monte Carlo p-values are null when `n_sim` is 0. */
export interface QuadratResult {
  nx: number;
  ny: number;
  cell_width_m: number;
  cell_height_m: number;
  cells: QuadratCell[];
  n: number;
  stats: QuadratStats;
  p_mc_upper: number | null;
  p_mc_lower: number | null;
  p_mc_two_sided: number | null;
  n_sim: number;
  seed: number;
  warnings: string[];
}

export interface ClarkEvansStats {
  expected_m: number;
  se_m: number;
  r: number;
  z: number;
  p_two_sided: number;
  p_clustered: number;
  p_regular: number;
}

/** `clarkEvans`: Monte Carlo p-values are null when `n_sim` is 0. */
export interface ClarkEvansResult {
  n: number;
  area_m2: number;
  perimeter_m: number;
  mean_nn_m: number;
  naive: ClarkEvansStats;
  donnelly: ClarkEvansStats;
  p_mc_two_sided: number | null;
  p_mc_clustered: number | null;
  p_mc_regular: number | null;
  n_sim: number;
  seed: number;
  coincident_events: number;
  warnings: string[];
}

/** `envelopeStart`: simulations to run and distances on the curve. */
/** A faster setting of an envelope run and what the run would take with it. */
export interface FasterSetting {
  option: string;
  number: number | null;
  choice: string | null;
  label: string;
  curve_ms: number;
  run_ms: number;
}

/** How long an envelope run would take (envelopeEstimate). */
export interface EnvelopeCost {
  events: number;
  n_sim: number;
  workers: number;
  r_max_m: number;
  r_max_rule: string;
  pairs: number;
  simulated_pairs: number;
  curve_ms: number;
  simulation_ms: number;
  run_ms: number;
  probe_events: number;
  probe_ms: number;
  faster: FasterSetting[];
  /** The estimator the run will use (`auto` settled as the run settles it). */
  estimator: 'exact' | 'binned';
}

export interface EnvelopeStarted {
  total: number;
  distances: number;
  seed: number;
}

export interface GlobalTest {
  statistic: number;
  p_value: number;
  at_least_as_extreme: number;
  critical: number;
  rejects: boolean;
}

export interface DistanceRange {
  from_m: number;
  to_m: number;
  departure: 'clustered' | 'regular';
}

/** The plain-language answer. */
export interface Verdict {
  outcome: 'clustered' | 'regular' | 'mixed' | 'consistent_with_csr';
  ranges: DistanceRange[];
  text: string;
  caveats: string[];
}

/** `envelopeFinish`: curves on the `r` grid, bands, global tests and verdict. */
export interface EnvelopeResult {
  function: 'nearest_neighbour' | 'empty_space' | 'j' | 'k' | 'l' | 'pair_correlation';
  label: string;
  r: number[];
  observed: number[];
  theoretical: number[];
  reference: 'theoretical' | 'simulation_mean';
  reference_curve: number[];
  sim_mean: number[];
  pointwise_lo: number[];
  pointwise_hi: number[];
  pointwise_label: string;
  global_lo: number[];
  global_hi: number[];
  test_r_min: number;
  test_r_max: number;
  mad: GlobalTest;
  dclf: GlobalTest;
  alpha: number;
  k_rank: number;
  n_sim: number;
  seed: number;
  n: number;
  correction: 'isotropic' | 'translation' | 'border' | 'none';
  nn_correction: 'border' | 'none';
  r_max_rule: string;
  bandwidth_m: number;
  capped_weights: number;
  /** How the pairs were counted: every pair, or on a fine grid. */
  estimator: 'exact' | 'binned';
  /** Why, in words (the automatic rule when `auto` chose). */
  estimator_reason: string;
  /** Grid cell side, m (binned only). */
  cell_m: number | null;
  /** Relative error of the binned K, L and g against counting every pair that the tests check (binned only)... */
  binned_relative_error: number | null;
  /** ...at distances of at least this many m (binned only). */
  binned_error_from_m: number | null;
  warnings: string[];
  verdict: Verdict;
}

/** What `drawEnvelopeChart` drew (page only: it needs a canvas). */
export interface EnvelopeChartLabels {
  x_label: string;
  y_label: string;
  units: string;
  band_label: string;
}

// ---- Beyond the population at risk ----

/** `labellingStart`: the run is prepared, D(r) of the data computed. */
export interface LabellingStarted {
  total: number;
  distances: number;
  seed: number;
  n_cases: number;
  n_controls: number;
}

/** The random labelling test (Diggle & Chetwynd 1991): D(r) = K_cases − K_controls, or the cross-type L. */
export interface LabellingResult {
  r: number[];
  /** The tested curve of the data: D(r) (m²) or the cross-type L (m), as `statistic` says. */
  observed: number[];
  statistic: 'difference' | 'cross_l';
  /** What deviations are measured from: 0 for D, the mean of the observed and relabelled curves for the cross-type L. */
  reference: number[];
  k_cases: number[];
  k_controls: number[];
  /** Cross-type K of cases and controls (m²), both directions averaged. */
  k_cross: number[];
  sim_mean: number[];
  pointwise_lo: number[];
  pointwise_hi: number[];
  /** The band of the maximum-deviation test, around 0. */
  global_lo: number[];
  global_hi: number[];
  test_r_min: number;
  test_r_max: number;
  mad: GlobalTest;
  dclf: GlobalTest;
  alpha: number;
  k_rank: number;
  n_sim: number;
  seed: number;
  n_cases: number;
  n_controls: number;
  correction: 'isotropic' | 'translation' | 'none';
  r_max_rule: string;
  capped_weights: number;
  outcome: 'consistent_with_population' | 'beyond_population' | 'more_spread_out' | 'mixed' | 'apart_from_controls' | 'closer_to_controls';
  /** Where the curve leaves the global band: 'clustered' = above it (for D: cases closer together than the population; for the cross-type L: cases closer to controls). */
  ranges: DistanceRange[];
  verdict: string;
  caveats: string[];
  warnings: string[];
}

/** `nearestCasesStart`: the neighbour lists are built, T_k of the data computed. */
export interface NearestCasesStarted {
  total: number;
  k_max: number;
  seed: number;
  n_cases: number;
  n_controls: number;
  /** Points whose neighbours the seed's random order chose among equal distances. */
  ties_decided: number;
}

/** One k of the Cuzick–Edwards test. */
export interface NearestCasesRow {
  k: number;
  /** Cases among the cases' k nearest neighbours, summed over the cases. */
  t: number;
  /** Exact mean and variance of t under random labelling. */
  expected: number;
  variance: number;
  /** (t − expected)/√variance; null when the variance is 0. */
  z: number | null;
  /** One-sided normal p, P(Z ≥ z); null with z. */
  p_normal: number | null;
  /** Rank p of the relabellings, (1 + at_least_as_extreme)/(n_sim + 1). */
  p_value: number;
  at_least_as_extreme: number;
}

/** The combined test over k: the largest z against its relabelled values. */
export interface NearestCasesCombined {
  max_z: number | null;
  at_k: number | null;
  p_value: number;
  at_least_as_extreme: number;
}

/** The k-nearest-neighbour test of Cuzick & Edwards (1990). */
export interface NearestCasesResult {
  rows: NearestCasesRow[];
  combined: NearestCasesCombined;
  k_max: number;
  n_sim: number;
  seed: number;
  alpha: number;
  n_cases: number;
  n_controls: number;
  stacked_points: number;
  ties_decided: number;
  outcome: 'consistent_with_population' | 'more_case_neighbours';
  /** The k whose relabelling p is at or below alpha. */
  small_p_k: number[];
  verdict: string;
  caveats: string[];
  warnings: string[];
}

/** `riskSurfaceStart`: bandwidth chosen, observed surface computed. */
export interface RiskSurfaceStarted {
  total: number;
  seed: number;
  n_cases: number;
  n_control_points: number;
  /** People at the control points (= points without a count column). */
  controls_total: number;
  /** Common Gaussian bandwidth (SD per axis), metres. */
  bandwidth_m: number;
}

/** A tolerance contour of the relative-risk surface; polygons in planar metres. */
export interface RiskContour {
  level: number;
  percent_volume: number | null;
  polygons: [number, number][][][];
  area_km2: number;
}

/** One raised or lowered place, for the verdict. */
export interface RiskRegion {
  area_km2: number;
  centre_x: number;
  centre_y: number;
  extreme_ratio: number;
  whereabouts: string;
}

/** `riskSurfaceFinish`: the kernel relative-risk surface (Bithell 1990; Kelsall & Diggle 1995); grids row-major, row 0 at the south. */
export interface RiskSurfaceResult {
  x0: number;
  y0: number;
  cell_m: number;
  nx: number;
  ny: number;
  raised: RiskContour;
  lowered: RiskContour;
  raised_regions: RiskRegion[];
  lowered_regions: RiskRegion[];
  raised_share: number;
  lowered_share: number;
  tolerance: number;
  bandwidth_m: number;
  method: 'pooled_rule' | 'likelihood_cv' | 'fixed';
  method_text: string;
  reference_m: number | null;
  candidates_m: number[];
  criterion: (number | null)[];
  bandwidth_note: string | null;
  edge: 'none' | 'uniform' | 'jones_diggle';
  t_stat: number;
  t_p_value: number;
  t_at_least_as_large: number;
  n_sim: number;
  seed: number;
  n_cases: number;
  n_control_points: number;
  controls_total: number;
  weighted: boolean;
  min_ratio: number;
  max_ratio: number;
  masked_cells: number;
  masked_share: number;
  min_control_share: number;
  area_km2: number;
  privacy: SurfaceDisclosure | null;
  verdict: string;
  caveats: string[];
  warnings: string[];
  /** ln(risk ratio) per cell, nx × ny; 0 where class is not 2. */
  log_rr: Float64Array;
  /** Pointwise Monte Carlo p per cell; 1 where class is not 2. */
  p_value: Float64Array;
  /** 0 outside the study area, 1 too few controls, 2 estimated. */
  class: Uint8Array;
}

/** `inhomKStart`: the run is prepared, the inhomogeneous K of the data computed. */
export interface InhomKStarted {
  total: number;
  distances: number;
  seed: number;
  n_cases: number;
  /** Rows of the population layer (0 with the intensity from the events). */
  n_controls: number;
  /** Bandwidth of the intensity estimate, m. */
  bandwidth_m: number;
}

/** The inhomogeneous K and L functions (Baddeley, Møller & Waagepetersen 2000). */
export interface InhomKResult {
  r: number[];
  /** L_inhom(r) of the data, m. */
  observed: number[];
  /** K_inhom(r) of the data, m². */
  k_inhom: number[];
  /** L = r (inhomogeneous Poisson with the true intensity). */
  theoretical: number[];
  /** Mean of the data's and the simulations' L_inhom: the tests' reference. */
  reference_curve: number[];
  sim_mean: number[];
  pointwise_lo: number[];
  pointwise_hi: number[];
  global_lo: number[];
  global_hi: number[];
  test_r_min: number;
  test_r_max: number;
  mad: GlobalTest;
  dclf: GlobalTest;
  alpha: number;
  k_rank: number;
  n_sim: number;
  seed: number;
  n_cases: number;
  n_controls: number;
  /** Number of controls or their total count (0 with the intensity from the events). */
  total_controls: number;
  intensity_from: 'population' | 'events';
  kernel: 'gaussian' | 'quartic';
  bandwidth_m: number;
  bandwidth_rule: string;
  intensity_edge: 'none' | 'uniform' | 'jones_diggle';
  correction: 'isotropic' | 'translation' | 'none';
  r_max_rule: string;
  /** Σ 1/λ̂ over the events ÷ the study area (1 when the intensity's level fits). */
  inverse_intensity_ratio: number;
  floored_points: number;
  capped_weights: number;
  outcome: 'explained_by_intensity' | 'clustered' | 'regular' | 'mixed';
  ranges: DistanceRange[];
  verdict: string;
  caveats: string[];
  warnings: string[];
}

// ---- Where is it dense? ----

/** `hotspotsInfo`. */
export interface HotspotsInfo {
  n_events: number;
  has_weights: boolean;
  has_controls: boolean;
  /** The population file's count column is mapped (counts at points). */
  has_population_counts: boolean;
  geographic: boolean;
  /** The model the scan picks from what is loaded, and in words. */
  scan_model: 'bernoulli' | 'poisson' | 'poisson_population';
  scan_model_text: string;
}

/** One percent-volume isopleth; polygons in planar metres. */
export interface Isopleth {
  percent: number | null;
  level_per_km2: number;
  area_km2: number;
  polygons: [number, number][][][];
}

/** How many events a surface's peaks could single out. */
export interface SurfaceDisclosure {
  radius_m: number;
  threshold: number;
  exposed_events: number;
  warning: string | null;
}

/** `intensitySurface`: grid row-major, row 0 at the south. */
export interface IntensitySurfaceResult {
  x0: number;
  y0: number;
  cell_m: number;
  nx: number;
  ny: number;
  kernel: 'gaussian' | 'quartic';
  bandwidth_m: number;
  kernel_sd_m: number;
  method: 'normal_reference' | 'likelihood_cv' | 'diggle_mse' | 'fixed';
  method_text: string;
  reference_m: number | null;
  candidates_m: number[];
  criterion: (number | null)[];
  bandwidth_note: string | null;
  edge: 'none' | 'uniform' | 'jones_diggle';
  n_events: number;
  total_weight: number;
  weighted: boolean;
  integral_events: number;
  max_per_km2: number;
  area_km2: number;
  notes: string[];
  isopleths: Isopleth[];
  privacy: SurfaceDisclosure | null;
  /** Events per km², nx × ny. */
  values: Float64Array;
  /** 1 inside the study area. */
  mask: Uint8Array;
}

/** One DBSCAN cluster; centre_lon/lat are null for planar input. */
export interface DbscanCluster {
  id: number;
  members: number;
  core_members: number;
  centre_x: number;
  centre_y: number;
  centre_lon: number | null;
  centre_lat: number | null;
  hull_area_km2: number;
  density_per_km2: number | null;
  hull: [number, number][];
}

/** `dbscan`: labels in input order, −1 = noise. */
export interface DbscanResult {
  eps_m: number;
  min_samples: number;
  n_clusters: number;
  noise: number;
  weighted: boolean;
  clusters: DbscanCluster[];
  labels: Int32Array;
  core: Uint8Array;
}

/** `kDistance`: sorted distances to the k-th neighbour and the knee. */
export interface KDistanceResult {
  min_samples: number;
  sorted_desc_m: Float64Array;
  knee_eps_m: number | null;
  knee_index: number | null;
}

/** `scanStart`. */
/** A faster setting of the scan and how long its chance runs would take. */
export interface ScanFaster {
  option: string;
  number: number;
  label: string;
  run_ms: number;
}

/** The timing of the scan's first chance runs. */
export interface ScanCost {
  timed: number;
  replicate_ms: number;
  left_ms: number;
  faster: ScanFaster[];
}

export interface ScanStarted {
  total: number;
  n_windows: number;
  n_regions: number;
  estimate_ms: number;
  cost: ScanCost;
}

/** One scan cluster (rank 1 = most likely). */
export interface ScanCluster {
  rank: number;
  centre_x: number;
  centre_y: number;
  centre_lon: number | null;
  centre_lat: number | null;
  radius_m: number;
  regions: number;
  observed: number;
  expected: number;
  /** null when undefined: every case inside the window. */
  relative_risk: number | null;
  population: number;
  llr: number;
  p_value: number;
}

/** `scanFinish`. */
export interface ScanResult {
  model: 'auto' | 'bernoulli' | 'poisson' | 'poisson_population';
  model_text: string;
  centres: 'auto' | 'events' | 'grid';
  n_sim: number;
  seed: number;
  max_share: number;
  n_regions: number;
  n_windows: number;
  total_cases: number;
  total_population: number;
  statistic: number;
  p_value: number;
  smallest_p: number;
  critical_95: number | null;
  critical_99: number | null;
  cell_m: number | null;
  /** Against population counts: the farthest a case lies from the point it is counted at, m. */
  case_to_population_max_m: number | null;
  clusters: ScanCluster[];
  null_maxima: number[];
}

// ---- Sharing safely ----

export type DistanceLaw = 'area_uniform' | 'distance_uniform';

export interface DonutSettings {
  method: 'donut';
  r_min_m: number;
  r_max_m: number;
  law: DistanceLaw;
  max_tries: number;
  design_mean_m: number;
  design_median_m: number;
}

export interface KAnonymitySettings {
  method: 'k_anonymity';
  target_k: number;
  basis: KBasis;
  r_min_m: number;
  r_max_m: number;
  law: DistanceLaw;
  max_tries: number;
  density_per_km2: number | null;
  area_factor: number;
  population_points: number | null;
  population_contains_events: boolean;
  keep_below_target: boolean;
  r_min_used_m: number | null;
}

export type KBasis = 'population_layer' | 'uniform_density';

/** Five-number summary plus mean and count. */
export interface Spread {
  n: number;
  min: number;
  q1: number;
  median: number;
  q3: number;
  max: number;
  mean: number;
}

export type UnplacedReason = UnplacedNoPlace | UnplacedTooFewPopulation | UnplacedTargetNotReached;

export interface UnplacedNoPlace {
  code: 'no_place_inside_area';
  tries: number;
}

export interface UnplacedTooFewPopulation {
  code: 'too_few_population_nearby';
  found: number;
  needed: number;
  radius_m: number;
}

export interface UnplacedTargetNotReached {
  code: 'target_not_reached';
  tries: number;
  best_k: number;
  target_k: number;
}

/** An event left out of the masked copy, or below the k target. */
export interface UnplacedRow {
  index: number;
  row: number | null;
  reason: UnplacedReason;
  reason_text: string;
}

export interface KSummary {
  n: number;
  min: number;
  p05: number;
  median: number;
  share_below_target: number;
}

/** `maskDonut`, `maskKAnonymity`, `maskResult`: the masked copy the session keeps. */
export interface MaskResult {
  method: 'donut' | 'k_anonymity';
  settings: DonutSettings | KAnonymitySettings;
  n_input: number;
  n_masked: number;
  displacement: Spread | null;
  unplaced: UnplacedRow[];
  notes: string[];
  basis: KBasis | null;
  target_k: number | null;
  k_summary: KSummary | null;
  below_target: UnplacedRow[];
  replaced: boolean;
  cautions: string[];
  /** Masked points as x, y, x, y, … (planar metres). */
  masked: Float64Array;
  /** Index of each masked point's original event. */
  source: Uint32Array;
  displacement_m: Float64Array;
  /** k reached by each masked point (k-anonymity only). */
  k: Float64Array | null;
}

export interface PatternSummary {
  n: number;
  mean_nn_m: number | null;
  clark_evans_r: number | null;
  centre: [number, number] | null;
  standard_distance_m: number | null;
}

export interface SurfaceShift {
  bandwidth_m: number;
  cell_m: number;
  nx: number;
  ny: number;
  cells_inside: number;
  peak_original: number;
  max_abs_diff_rel: number;
  mean_abs_diff_rel: number;
}

/** L(r) − r of the original and masked points on one r grid. */
export interface CurvePair {
  r_m: number[];
  original: number[];
  masked: number[];
  max_abs_difference_m: number;
}

/** `maskingCost`: original vs masked. */
export interface MaskingCost {
  original: PatternSummary;
  masked: PatternSummary;
  mean_nn_change_m: number | null;
  clark_evans_change: number | null;
  centre_shift_m: number | null;
  standard_distance_change_m: number | null;
  surface: SurfaceShift | null;
  l_curves: CurvePair | null;
  /** Events with dates: the near-repeat table and Knox count before and after masking (same dates); null without dates. */
  pairs: PairShift | null;
}

/** Pairs within the Knox distance and time and their exact expectation. */
export interface KnoxCount {
  pairs: number;
  expected: number;
  ratio: number | null;
}

/** What masking does to the pairs close in space and time. */
export interface PairShift {
  events_used: number;
  knox_distance_m: number;
  knox_days: number;
  knox_original: KnoxCount;
  knox_masked: KnoxCount;
  space_labels: string[];
  time_labels: string[];
  /** Cells row by row (distance band, then time band). */
  observed_original: number[];
  observed_masked: number[];
  ratio_original: (number | null)[];
  ratio_masked: (number | null)[];
}

export type TableLayout = TableLayoutGrid | TableLayoutZones;

export interface TableLayoutGrid {
  layout: 'grid';
  shape: 'square' | 'hexagon';
  orientation: 'pointy_top' | 'flat_top' | null;
  cell_size_m: number;
  origin: [number, number];
  rows: number;
  cols: number;
}

export interface TableLayoutZones {
  layout: 'zones';
  zones: number;
}

export interface SuppressionParams {
  min_count: number;
  suppress_zeros: boolean;
  publish_row_column_totals: boolean;
  rate_per: number;
  rate_min_population: number;
  rate_unreliable_below: number;
  exact_audit_budget: number;
}

/** One cell or zone; `count` is null when hidden. */
export interface TableCell {
  id: string;
  row: number | null;
  col: number | null;
  geometry: [number, number][][][];
  count: number | null;
  suppressed: boolean;
  hidden: 'primary' | 'complementary' | null;
  population: number | null;
  rate: number | null;
  rate_unreliable: boolean;
  in_area: boolean;
}

/** A row, column, group or grand total over cells (indices into `cells`). */
export interface TableLine {
  name: string;
  kind: 'row' | 'column' | 'group' | 'grand';
  cells: number[];
  total: number | null;
}

export interface CellRange {
  cell: number;
  lo: number;
  hi: number | null;
}

/** What an attacker could recover from the published table. */
export interface AuditReport {
  lower: number;
  lines_with_one_hidden: number[];
  determined_by_linear_algebra: number[];
  pinned_by_bounds: number[];
  exact: CellRange[] | null;
  exact_recoverable: number[];
  exact_skipped: string | null;
  safe: boolean;
}

export interface SuppressedTable {
  layout: TableLayout;
  params: SuppressionParams;
  cells: TableCell[];
  lines: TableLine[];
  outside: number | null;
  n_primary: number;
  n_complementary: number;
  totals_withheld: number;
  audit: AuditReport;
  shown: ShownSummary;
  warnings: string[];
}

/** What a suppressed table shows, beside what it hides. */
export interface ShownSummary {
  cells: number;
  cells_shown: number;
  cells_hidden_primary: number;
  cells_hidden_complementary: number;
  cells_with_events: number;
  cells_with_events_shown: number;
  events_in_cells: number;
  events_in_shown_cells: number;
  /** null (undefined) when no cell holds an event. */
  share_of_events_shown: number | null;
  /** null (undefined) when no cell holds an event. */
  share_of_cells_with_events_shown: number | null;
  nothing_shown: boolean;
  mostly_hidden: boolean;
}

/** `aggregate`: the suppressed, audited table the session keeps for export. */
export interface AggregateResult {
  table: SuppressedTable;
  population_source: string | null;
  counts_hidden_from: number;
  counts_hidden_to: number;
  threshold_note: string;
  largest_shown: number | null;
  events_counted: number;
  cautions: string[];
}

/** Exactly what a points or counts file would hold. */
export interface ExportPreview {
  content: string;
  format: 'csv' | 'geo_json';
  fields: string[];
  rows: number;
  metadata_keys: string[];
  /** Where the notes about the file (metadata_keys) are written, in words. */
  notes_at: string;
  contains_original_coordinates: boolean;
  /** Masked points written at their original location at the file's precision. */
  points_at_original_location: number;
  label: string | null;
  points_left_out: number;
  cautions: string[];
}

/** What the HTML report would hold (`what` = "report"). */
export interface ReportPreview {
  content: string;
  format: 'html';
  fields: string[];
  rows: number;
  metadata_keys: string[];
  notes_at: string;
  contains_original_coordinates: boolean;
  label: string | null;
  points_left_out: number;
  cautions: string[];
}

/** A points or counts file. */
export interface ExportedFile {
  text: string;
  file_name: string;
  mime: string;
  preview: ExportPreview;
}

/** The HTML report file. */
export interface ReportFile {
  text: string;
  file_name: string;
  mime: string;
  preview: ReportPreview;
}

// ---- Arguments that are not an analysis's options ----

/** The window used without a study-area file (`setAreaFallback`). */
export type AreaFallback = 'convex_hull' | 'bounding_box';

/** A layer of points (`rejections`). */
export type LayerName = 'events' | 'controls';

/** What `exportPreview` and `exportFile` write; "report" gives the HTML report. */
export type ExportWhat = 'masked_points' | 'aggregates' | 'report' | 'unmasked_points';

/** How `drawEnvelopeChart` draws; every key optional, an unknown key throws. */
export interface EnvelopeChartOptions {
  /** "centred": L(r) − r or K(r) − πr², CSR at 0 (default); "function": the function itself. */
  view?: 'centred' | 'function';
  /** Axis unit; "auto" (default) gives km from 5 km. */
  units?: 'auto' | 'm' | 'km';
  /** "global" (default): the band of the test; "pointwise": not a test. */
  band?: 'global' | 'pointwise';
  /** Device pixels per CSS pixel. */
  scale?: number | null;
}

/** What `drawKDistanceChart` draws: `kDistance`'s answer plus the eps in use. */
export interface KDistanceChartData {
  min_samples?: number;
  sorted_desc_m: Float64Array | number[];
  knee_index?: number | null;
  knee_eps_m?: number | null;
  /** The eps chosen, metres (drawn as a line). */
  eps_m?: number | null;
  /** Device pixels per CSS pixel. */
  scale?: number | null;
}

// ---------- Close in space and time ----------

/** `spaceTimeScanStart`: the circles are built and the data's cylinders scored. */
export interface SpaceTimeScanStarted {
  total: number;
  seed: number;
  n_events: number;
  n_locations: number;
  n_days: number;
  n_circles: number;
  /** What was used and left out of the times, in one sentence. */
  times: string;
}

/** What a space–time result says about the times it used. */
export interface TimeUseReport {
  events_used: number;
  without_time: number;
  window_too_long: number;
  at_midpoint: number;
  uncertain_times: 'midpoint' | 'leave_out';
  max_window_days: number;
  statement: string;
}

/** `mantelStart`: Z of the data and its exact permutation moments. */
export interface MantelStarted {
  total: number;
  n_events: number;
  seed: number;
  statistic: number;
  expected: number;
  variance: number;
}

/** The Mantel test (Mantel 1967) of space–time interaction. */
export interface MantelResult {
  n_events: number;
  pairs: number;
  /** Z = Σ over pairs of (space transform)·(time transform). */
  statistic: number;
  /** Exact permutation mean and variance of Z. */
  expected: number;
  variance: number;
  z_score: number;
  /** Pearson correlation of the two transformed separations over pairs. */
  correlation: number;
  p_normal_upper: number;
  p_normal_lower: number;
  /** Rank p of the permutations: (1 + #{Z* ≥ Z})/(m + 1), and for Z* ≤ Z. */
  p_upper: number;
  p_lower: number;
  /** The tail that means interaction (upper with both transforms alike, lower when mixed) and its rank p. */
  interaction_tail: 'upper' | 'lower';
  p_value: number;
  at_least: number;
  at_most: number;
  simulated_min: number;
  simulated_max: number;
  space_transform: 'raw' | 'reciprocal';
  time_transform: 'raw' | 'reciprocal';
  space_constant_m: number;
  time_constant_days: number;
  n_sim: number;
  seed: number;
  alpha: number;
  times: TimeUseReport;
  outcome: 'no_interaction' | 'interaction';
  verdict: string;
  caveats: string[];
}

/** `spaceTimeKStart`: the pairs within s_max found, D of the data computed. */
export interface SpaceTimeKStarted {
  total: number;
  n_events: number;
  seed: number;
  pairs: number;
  s_max_m: number;
  t_max_days: number;
}

/** The space–time K function (Diggle, Chetwynd, Häggkvist & Morris 1995). Cell arrays are s-major: index a·t.length + b for s[a], t[b]. */
export interface SpaceTimeKResult {
  /** Grid distances (m) and time differences (days). */
  s: number[];
  t: number[];
  k: number[];
  /** D = K(s, t) − K_s(s)·K_t(t). */
  d: number[];
  /** Mean and SD of D over the permutations. */
  d_mean: number[];
  d_sd: number[];
  /** (D − mean)/SD; null where D never varies. */
  residual: (number | null)[];
  /** Pointwise envelope of the permutations' D. */
  d_lo: number[];
  d_hi: number[];
  k_space: number[];
  k_time: number[];
  /** Sum of the residuals over the grid (each grid standardised over the permutations and the data), and its rank p. */
  global_statistic: number;
  global_p: number;
  at_least: number;
  /** [index into s, index into t] of the largest residual. */
  peak: [number, number] | null;
  n_events: number;
  pairs_within_s_max: number;
  s_max_m: number;
  s_max_rule: string;
  t_max_days: number;
  t_max_rule: string;
  span_days: number;
  area_m2: number;
  weights_capped: number;
  n_sim: number;
  seed: number;
  alpha: number;
  times: TimeUseReport;
  outcome: 'no_interaction' | 'interaction';
  verdict: string;
  caveats: string[];
}

/** What `drawSpaceTimeKGrid` draws: fields of a SpaceTimeKResult. */
export interface SpaceTimeGridData {
  s: number[];
  t: number[];
  residual: (number | null)[];
  d?: number[];
  d_hi?: number[];
  /** Device pixels per CSS pixel. */
  scale?: number | null;
}

/** `nearRepeatStart` / `knoxStart`: the close pairs are found, the data's table counted. */
export interface NearRepeatStarted {
  total: number;
  seed: number;
  n_events: number;
  /** Pairs within the largest distance. */
  close_pairs: number;
  cells: number;
}

/** One distance or time band of the near-repeat table. */
export interface NearRepeatBand {
  /** Lower end (not included, except in the first band), upper end (included). */
  from: number;
  to: number;
  label: string;
  /** Pairs of events in this band (of all pairs). */
  pairs: number;
}

/** One cell of the near-repeat table. */
export interface NearRepeatCell {
  space: number;
  time: number;
  observed: number;
  /** Exact permutation expectation n_s·n_t/N. */
  expected: number;
  sim_mean: number;
  ratio: number | null;
  z: number | null;
  p_value: number;
  /** Benjamini–Hochberg q over all cells. */
  q_value: number;
  raised: boolean;
}

/** The max-statistic permutation test over the whole table. */
export interface NearRepeatGlobal {
  max_z: number | null;
  /** [distance band, time band] of the largest standardised cell. */
  at: [number, number] | null;
  p_value: number;
  at_least_as_extreme: number;
}

/** The near-repeat table (Townsley, Homel & Chaseling 2003). */
export interface NearRepeatResult {
  space_bands: NearRepeatBand[];
  time_bands: NearRepeatBand[];
  /** Row-major: distance band, then time band. */
  cells: NearRepeatCell[];
  global: NearRepeatGlobal;
  n_events: number;
  n_pairs: number;
  close_pairs: number;
  n_perm: number;
  seed: number;
  alpha: number;
  outcome: 'no_pattern' | 'raised';
  /** "After an event, the risk of another within … stays raised for about … days"; null when no raised cell touches the origin. */
  reach: string | null;
  verdict: string;
  time_use: TimeUseReport;
  caveats: string[];
  warnings: string[];
}

/** The Knox test (Knox 1964) with a permutation p (Mantel 1967). */
export interface KnoxResult {
  distance_m: number;
  days: number;
  x: number;
  n_s: number;
  n_t: number;
  n_pairs: number;
  expected: number;
  ratio: number | null;
  /** P(Poisson(expected) ≥ x): Knox's approximation. */
  p_poisson: number;
  p_value: number;
  at_least_as_extreme: number;
  sim_mean: number;
  n_events: number;
  n_perm: number;
  seed: number;
  alpha: number;
  verdict: string;
  time_use: TimeUseReport;
  caveats: string[];
}
/** Length of one bar of the time line. */
export type TimelineBin = 'day' | 'week' | 'month';

/** The time line (`timeline`): events per bin, window shares spread by aoristic weights. */
export interface Timeline {
  bin: TimelineBin;
  bin_automatic: boolean;
  bin_text: string;
  /** Bin k is [edges[k], edges[k+1]) in days since 1970-01-01 (UTC). */
  edges: number[];
  /** First day of each bin, YYYY-MM-DD. */
  labels: string[];
  /** Events with one known time in each bin. */
  whole: number[];
  /** Shares of events known only within a from–to window, per bin. */
  window_share: number[];
  instants: number;
  windows: number;
  without_time: number;
  first: number;
  last: number;
  first_text: string;
  last_text: string;
  max_bin: number;
  statement: string;
}

/** Each event's time and window end in days (`eventTimes`), in the order of `mapLayers().events`; NaN = none. */
export interface EventTimes {
  start: Float64Array;
  end: Float64Array | null;
}

/** What `drawTimelineChart` draws: `timeline`'s bins and counts plus the map's range. */
export interface TimelineChartData {
  edges: number[];
  whole: number[];
  window_share: number[];
  /** The range shown on the map (days). */
  from?: number | null;
  to?: number | null;
  /** Device pixels per CSS pixel. */
  scale?: number | null;
}

/** One cluster of the space–time permutation scan (a circle × a run of days). */
export interface SpaceTimeCluster {
  rank: number;
  /** Centre (an event location) and radius, planar metres. */
  centre_x: number;
  centre_y: number;
  radius_m: number;
  n_locations: number;
  /** First and last day, days since 1970-01-01, and as YYYY-MM-DD (UTC). */
  start_day: number;
  end_day: number;
  start_date: string;
  end_date: string;
  days: number;
  observed: number;
  /** (events in the circle) × (events on the days) / (all events). */
  expected: number;
  ratio: number;
  llr: number;
  p_value: number;
  /** Prospective: repeat_days / p, days; null retrospective. */
  recurrence_days: number | null;
  /** Indices (0-based, among the loaded events) of the events in the cluster. */
  events: number[];
}

/** The space–time permutation scan of Kulldorff et al. (2005). */
export interface SpaceTimeScanResult {
  mode: 'retrospective' | 'prospective';
  n_sim: number;
  seed: number;
  max_share: number;
  max_radius_m: number | null;
  max_days: number;
  max_days_used: number;
  repeat_days: number;
  n_events: number;
  n_locations: number;
  first_date: string;
  last_date: string;
  n_days: number;
  n_circles: number;
  n_intervals: number;
  statistic: number;
  p_value: number;
  recurrence_days: number | null;
  clusters: SpaceTimeCluster[];
  null_maxima: number[];
  verdict: string;
  outcome: string;
  caveats: string[];
  times: TimeUseReport;
}
