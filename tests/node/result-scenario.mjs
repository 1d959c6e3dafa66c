// Calls every method of dist/node that returns an object, on the demo files
// with small settings, and hands back what each call returned, so
// result-types.test.mjs can hold each value against the type that
// dist/node/cloister.d.ts declares for that method.
//
// Three sessions cover the shapes a result can take: the demo in
// longitude/latitude with its boundary and population (so optional
// longitude/latitude fields are filled), the same events on a planar grid
// without a boundary or population (so they are null), and the file with
// spoiled rows (so rejection rows are present); masks are also run where
// events cannot be placed, so each reason for leaving one out is met.
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const cloister = require('../../dist/node/cloister.js');
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));
const CREATED = '2026-01-01';

/**
 * Runs the calls; returns `[{ method, label, value }]` in call order.
 * `method` is the name declared in the .d.ts (a Session method or a free
 * function); `label` says which call it was.
 */
export function runScenario() {
  const out = [];
  const record = (method, label, value) => { out.push({ method, label, value }); return value; };

  // 1. Longitude/latitude, boundary file, population.
  const s = new cloister.Session();
  record('study', 'nothing loaded', s.study());
  record('loadEvents', 'cases.csv', s.loadEvents(file('demo-data/cases.csv'), {}));
  record('study', 'events, hull', s.study());
  record('loadArea', 'boundary', s.loadArea(file('demo-data/town-boundary.geojson'), {}));
  record('loadControls', 'population', s.loadControls(file('demo-data/population.csv'), {}));
  record('summary', 'lon/lat, controls', s.summary());
  record('mapLayers', 'lon/lat, controls', s.mapLayers());
  record('rejections', 'events, none', s.rejections('events', 0, 10));
  record('timeline', 'auto bin', s.timeline({}));
  record('eventTimes', 'no windows', s.eventTimes());
  record('hotspotsInfo', 'lon/lat', s.hotspotsInfo());
  record('quadratTest', 'small', s.quadratTest({ nx: 4, ny: 4, n_sim: 19, seed: 1 }));
  record('quadratTest', 'no simulations', s.quadratTest({ nx: 3, ny: 3, n_sim: 0 }));
  record('clarkEvans', 'small', s.clarkEvans({ n_sim: 19, seed: 1 }));
  record('clarkEvans', 'no simulations', s.clarkEvans({ n_sim: 0 }));
  record('envelopeEstimate', 'L, 199 sims, 2 workers', s.envelopeEstimate({ n_sim: 199, seed: 1 }, 2));
  record('envelopeEstimate', 'G, 19 sims', s.envelopeEstimate({ function: 'nearest_neighbour', n_sim: 19, seed: 1 }, 1));
  const started = record('envelopeStart', 'L, 19 sims', s.envelopeStart({ n_sim: 19, seed: 1, n_steps: 12 }));
  record('envelopeStep', 'first 4', s.envelopeStep(4));
  record('envelopeShare', '', s.envelopeShare());
  const curves = record('envelopeSimulate', '4..8', s.envelopeSimulate(4, 8));
  record('envelopeAdd', '4..8', s.envelopeAdd(4, curves));
  s.envelopeStep(started.total);
  record('envelopeFinish', 'L', s.envelopeFinish());
  const binned = s.envelopeStart({ n_sim: 4, seed: 1, n_steps: 10, estimator: 'binned', correction: 'translation' });
  s.envelopeStep(binned.total);
  record('envelopeFinish', 'L on a fine grid', s.envelopeFinish());
  record('envelopeEstimate', 'L on a fine grid, 2 workers', s.envelopeEstimate({ n_sim: 19, seed: 1, estimator: 'binned', correction: 'translation' }, 2));
  const lab = record('labellingStart', 'demo, 19', s.labellingStart({ n_sim: 19, seed: 4, n_steps: 10 }));
  const labShare = record('labellingShare', '', s.labellingShare());
  const labCurves = record('labellingSimulate', '0..5', s.labellingSimulate(0, 5));
  const lh = new cloister.Session();
  record('labellingHelperStart', '', lh.labellingHelperStart(labShare));
  lh.free();
  record('labellingAdd', '0..5', s.labellingAdd(0, labCurves));
  record('labellingStep', '10', s.labellingStep(10));
  s.labellingStep(lab.total);
  record('labellingFinish', 'demo', s.labellingFinish());
  const near = record('nearestCasesStart', 'demo, 19', s.nearestCasesStart({ n_sim: 19, seed: 4, k_max: 3 }));
  const nearShare = record('nearestCasesShare', '', s.nearestCasesShare());
  const nearPiece = record('nearestCasesSimulate', '0..5', s.nearestCasesSimulate(0, 5));
  const nh = new cloister.Session();
  record('nearestCasesHelperStart', '', nh.nearestCasesHelperStart(nearShare));
  nh.free();
  record('nearestCasesAdd', '0..5', s.nearestCasesAdd(0, nearPiece));
  record('nearestCasesStep', '10', s.nearestCasesStep(10));
  s.nearestCasesStep(near.total);
  record('nearestCasesFinish', 'demo', s.nearestCasesFinish());
  const man = record('mantelStart', 'demo, 19', s.mantelStart({ n_sim: 19, seed: 4 }));
  const manShare = record('mantelShare', '', s.mantelShare());
  const manPiece = record('mantelSimulate', '0..5', s.mantelSimulate(0, 5));
  const mh = new cloister.Session();
  record('mantelHelperStart', '', mh.mantelHelperStart(manShare));
  mh.free();
  record('mantelAdd', '0..5', s.mantelAdd(0, manPiece));
  record('mantelStep', '10', s.mantelStep(10));
  s.mantelStep(man.total);
  record('mantelFinish', 'demo', s.mantelFinish());
  const stk = record('spaceTimeKStart', 'demo, 9', s.spaceTimeKStart({ n_sim: 9, seed: 4, s_steps: 4, t_steps: 5 }));
  const stkShare = record('spaceTimeKShare', '', s.spaceTimeKShare());
  const stkPiece = record('spaceTimeKSimulate', '0..2', s.spaceTimeKSimulate(0, 2));
  const kh = new cloister.Session();
  record('spaceTimeKHelperStart', '', kh.spaceTimeKHelperStart(stkShare));
  kh.free();
  record('spaceTimeKAdd', '0..2', s.spaceTimeKAdd(0, stkPiece));
  record('spaceTimeKStep', '3', s.spaceTimeKStep(3));
  s.spaceTimeKStep(stk.total);
  record('spaceTimeKFinish', 'demo', s.spaceTimeKFinish());
  record('spaceTimeKCsv', 'demo', s.spaceTimeKCsv());
  for (const [m, opts] of [['nearRepeat', { n_perm: 19, seed: 4, band_m: 100, max_distance_m: 300, band_days: 7, max_days: 21 }], ['knox', { n_perm: 19, seed: 4 }]]) {
    const st = record(`${m}Start`, 'demo, 19', s[`${m}Start`](opts));
    const share = record(`${m}Share`, '', s[`${m}Share`]());
    const piece = record(`${m}Simulate`, '0..5', s[`${m}Simulate`](0, 5));
    const h = new cloister.Session();
    record(`${m}HelperStart`, '', h[`${m}HelperStart`](share));
    h.free();
    record(`${m}Add`, '0..5', s[`${m}Add`](0, piece));
    record(`${m}Step`, '5', s[`${m}Step`](5));
    s[`${m}Step`](st.total);
    record(`${m}Finish`, 'demo', s[`${m}Finish`]());
  }
  record('nearRepeatCsv', 'demo', s.nearRepeatCsv());
  const st = record('spaceTimeScanStart', 'demo, prospective, 9', s.spaceTimeScanStart({ mode: 'prospective', n_sim: 9, seed: 4 }));
  const stShare = record('spaceTimeScanShare', '', s.spaceTimeScanShare());
  const stPiece = record('spaceTimeScanSimulate', '0..3', s.spaceTimeScanSimulate(0, 3));
  const sth = new cloister.Session();
  record('spaceTimeScanHelperStart', '', sth.spaceTimeScanHelperStart(stShare));
  sth.free();
  record('spaceTimeScanAdd', '0..3', s.spaceTimeScanAdd(0, stPiece));
  record('spaceTimeScanStep', '2', s.spaceTimeScanStep(2));
  s.spaceTimeScanStep(st.total);
  record('spaceTimeScanFinish', 'demo, prospective', s.spaceTimeScanFinish());
  record('spaceTimeScanExport', 'csv', s.spaceTimeScanExport({ created: CREATED }));
  const rs = record('riskSurfaceStart', 'demo, 9', s.riskSurfaceStart({ n_sim: 9, seed: 4, cells: 64 }));
  const rsShare = record('riskSurfaceShare', '', s.riskSurfaceShare());
  const rsPiece = record('riskSurfaceSimulate', '0..2', s.riskSurfaceSimulate(0, 2));
  const rh = new cloister.Session();
  record('riskSurfaceHelperStart', '', rh.riskSurfaceHelperStart(rsShare));
  rh.free();
  record('riskSurfaceAdd', '0..2', s.riskSurfaceAdd(0, rsPiece));
  record('riskSurfaceStep', '3', s.riskSurfaceStep(3));
  s.riskSurfaceStep(rs.total);
  record('riskSurfaceFinish', 'demo', s.riskSurfaceFinish());
  record('riskContoursGeoJson', 'demo', s.riskContoursGeoJson());
  const inh = record('inhomKStart', 'demo, 9', s.inhomKStart({ n_sim: 9, seed: 4, n_steps: 10 }));
  record('inhomKStep', '3', s.inhomKStep(3));
  record('inhomKShare', '', s.inhomKShare());
  const inhRows = record('inhomKSimulate', '3..5', s.inhomKSimulate(3, 5));
  record('inhomKAdd', '3..5', s.inhomKAdd(3, inhRows));
  s.inhomKStep(inh.total);
  record('inhomKFinish', 'demo', s.inhomKFinish());
  const g = s.envelopeStart({ function: 'nearest_neighbour', n_sim: 9, seed: 2, n_steps: 10 });
  s.envelopeStep(g.total);
  record('envelopeFinish', 'nearest neighbour G', s.envelopeFinish());
  // Progress of one long step goes to globalThis.cloisterProgress once asked for.
  globalThis.cloisterProgress = () => {};
  record('beginProgress', 'listen', cloister.beginProgress());
  record('intensitySurface', 'coarse', s.intensitySurface({ cells: 48 }));
  delete globalThis.cloisterProgress;
  record('isoplethsGeoJson', '50 %', s.isoplethsGeoJson([0.5]));
  record('intensitySurface', 'no privacy check', s.intensitySurface({ cells: 32, privacy_check: false, method: 'fixed', fixed_m: 300 }));
  record('dbscan', 'eps 150', s.dbscan({ eps_m: 150, min_samples: 8 }));
  record('kDistance', 'k 5', s.kDistance(5));
  const scan = record('scanStart', 'small', s.scanStart({ n_sim: 19, seed: 3, cells_long_side: 12 }));
  const scanShare = record('scanShare', '', s.scanShare());
  const maxima = record('scanSimulate', '0..5', s.scanSimulate(0, 5));
  const sh = new cloister.Session();
  record('scanHelperStart', '', sh.scanHelperStart(scanShare));
  sh.free();
  record('scanAdd', '0..5', s.scanAdd(0, maxima));
  record('scanStep', 'all', s.scanStep(scan.total));
  record('scanFinish', 'with controls', s.scanFinish());
  record('maskResult', 'nothing masked', s.maskResult());
  record('maskDonut', 'donut', s.maskDonut({ r_min_m: 100, r_max_m: 400, seed: 4 }));
  record('maskResult', 'donut kept', s.maskResult());
  record('maskingCost', 'donut', s.maskingCost({ grid_cells: 32 }));
  record('maskKAnonymity', 'population', s.maskKAnonymity({ target_k: 10, r_max_m: 300, seed: 5, replace: true }));
  record('maskKAnonymity', 'density', s.maskKAnonymity({ target_k: 10, r_max_m: 300, against: 'density', density_per_km2: 800, seed: 6, replace: true }));
  record('maskDonut', 'rings outside the area, one try', s.maskDonut({ r_min_m: 3000, r_max_m: 3500, max_tries: 1, seed: 10, replace: true }));
  record('maskKAnonymity', 'too few addresses nearby', s.maskKAnonymity({ target_k: 500, r_max_m: 50, seed: 11, replace: true }));
  record('maskKAnonymity', 'kept below target', s.maskKAnonymity({ target_k: 10, r_max_m: 300, seed: 5, keep_below_target: true, replace: true }));
  record('maskingCost', 'k-anonymity', s.maskingCost({ grid_cells: 32 }));
  record('aggregate', 'square', s.aggregate({ layout: 'square', cell_size_m: 800 }));
  record('aggregate', 'hexagon', s.aggregate({ layout: 'hexagon', cell_size_m: 600, min_count: 10 }));
  record('aggregate', 'zones', s.aggregate({ layout: 'zones', zones: file('demo-data/town-boundary.geojson') }));
  record('exportPreview', 'masked csv', s.exportPreview('masked_points', { format: 'csv' }));
  record('exportPreview', 'aggregates', s.exportPreview('aggregates', {}));
  record('exportPreview', 'unmasked', s.exportPreview('unmasked_points', { coordinates: 'metres' }));
  record('exportPreview', 'report', s.exportPreview('report', { report_holds: 'counts', created: CREATED }));
  record('exportFile', 'masked geojson', s.exportFile('masked_points', { format: 'geo_json', created: CREATED }));
  record('exportFile', 'aggregates csv', s.exportFile('aggregates', { format: 'csv', created: CREATED }));
  record('exportFile', 'report', s.exportFile('report', { report_holds: 'masked_points', created: CREATED }));
  record('sharingCautions', '', s.sharingCautions());
  record('clearControls', '', s.clearControls());
  record('setAreaFallback', 'bounding box', s.setAreaFallback('bounding_box'));
  record('clearArea', '', s.clearArea());
  record('loadEventsAfresh', 'cases.csv', s.loadEventsAfresh(file('demo-data/cases.csv'), {}));
  record('clearAll', '', s.clearAll());
  s.free();

  // 2. Planar grid, no boundary, no population.
  const p = new cloister.Session();
  record('loadEvents', 'planar', p.loadEvents(file('demo-data/cases-projected.csv'),
    { coords: { kind: 'planar', unit: 'metre' } }));
  record('summary', 'planar', p.summary());
  record('mapLayers', 'planar', p.mapLayers());
  record('hotspotsInfo', 'planar', p.hotspotsInfo());
  record('dbscan', 'planar', p.dbscan({ eps_m: 150, min_samples: 8 }));
  record('dbscan', 'nothing found', p.dbscan({ eps_m: 1, min_samples: 50 }));
  const ps = p.scanStart({ n_sim: 9, seed: 7, cells_long_side: 10 });
  p.scanStep(ps.total);
  record('scanFinish', 'planar, no controls', p.scanFinish());
  record('intensitySurface', 'planar', p.intensitySurface({ cells: 32 }));
  record('maskDonut', 'planar', p.maskDonut({ r_min_m: 50, r_max_m: 200, seed: 8 }));
  record('aggregate', 'planar', p.aggregate({ layout: 'square', cell_size_m: 1000 }));
  record('exportFile', 'planar masked csv', p.exportFile('masked_points', { format: 'csv', created: CREATED }));
  record('rejections', 'controls, none loaded', p.rejections('controls', 0, 5));

  // A helper worker's session: simulates parts of a shared envelope run.
  const run = p.envelopeStart({ n_sim: 4, seed: 9, n_steps: 8 });
  const h = new cloister.Session();
  record('envelopeHelperStart', '', h.envelopeHelperStart(p.envelopeShare()));
  record('envelopeSimulate', 'helper', h.envelopeSimulate(0, run.total));
  // … and of a shared inhomogeneous K run (intensity from the events).
  const inhP = p.inhomKStart({ intensity_from: 'events', n_sim: 3, seed: 9, n_steps: 8 });
  record('inhomKHelperStart', '', h.inhomKHelperStart(p.inhomKShare()));
  record('inhomKSimulate', 'helper', h.inhomKSimulate(0, inhP.total));
  h.free();
  p.free();

  // 3. Rows spoiled on purpose.
  const b = new cloister.Session();
  record('loadEvents', 'with problems', b.loadEvents(file('demo-data/cases-with-problems.csv'), {}));
  record('rejections', 'with problems', b.rejections('events', 0, 100));
  b.free();

  // 4. Events as GeoJSON points (the first rows of the demo, rewritten).
  const rows = readFileSync(new URL('demo-data/cases.csv', root), 'utf8').split(/\r?\n/).slice(1, 41);
  const features = rows.map((l) => l.split(',')).map(([id, lon, lat, day, category]) => ({
    type: 'Feature', properties: { case_id: id, onset_date: day, category },
    geometry: { type: 'Point', coordinates: [Number(lon), Number(lat)] },
  }));
  const gj = new cloister.Session();
  record('loadEvents', 'GeoJSON points', gj.loadEvents(
    new TextEncoder().encode(JSON.stringify({ type: 'FeatureCollection', features })), {}));
  gj.free();

  // 5. The population as counts at points (population-blocks.csv).
  const pc = new cloister.Session();
  pc.loadArea(file('demo-data/town-boundary.geojson'), {});
  pc.loadEvents(file('demo-data/cases.csv'), {});
  record('loadControls', 'population counts', pc.loadControls(file('demo-data/population-blocks.csv'), {}));
  record('hotspotsInfo', 'population counts', pc.hotspotsInfo());
  const pcs = pc.scanStart({ n_sim: 9, seed: 2 });
  pc.scanStep(pcs.total);
  record('scanFinish', 'population counts', pc.scanFinish());
  pc.free();

  // 6. Events with from/to windows (incidents-windows.csv).
  const w = new cloister.Session();
  record('loadEvents', 'from/to windows', w.loadEvents(file('demo-data/incidents-windows.csv'), {}));
  record('summary', 'from/to windows', w.summary());
  record('timeline', 'weekly, windows', w.timeline({ bin: 'week' }));
  record('eventTimes', 'windows', w.eventTimes());
  w.free();

  record('parameterSpec', 'all', cloister.parameterSpec());
  record('parameterSpec', 'one', cloister.parameterSpec('maskDonut'));
  record('version', '', cloister.version());
  return out;
}
