// Strict options through the JS API (dist/node): every Session method that
// takes options refuses a misspelt key with {code: 'bad_options'} naming the
// key and listing the valid ones, and never runs with a silent default;
// values out of range are refused with a message naming the option, its
// value and the range. parameterSpec() is the one list behind both.
// Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const cloister = require('../../dist/node/cloister.js');
const { Session, parameterSpec, drawEnvelopeChart } = cloister;
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));

function demo() {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadControls(file('demo-data/population.csv'), {});
  return s;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

// No Rust type names in what the user reads.
const RUST_WORDS = /\b(usize|u64|u32|u8|i32|i64|f64|f32|struct|enum|CoordKind|Option<|Vec<)\b/;

function assertPlain(e) {
  assert.equal(typeof e.message, 'string');
  assert.doesNotMatch(e.message, RUST_WORDS, e.message);
}

/** The misspelt key is named, and the valid names are listed. */
function assertUnknown(e, key, valid) {
  assert.equal(e.code, 'bad_options', `${key}: ${e.message}`);
  assert.ok(e.message.includes(`"${key}"`), `message names "${key}": ${e.message}`);
  for (const v of valid) assert.ok(e.message.includes(v), `message lists ${v}: ${e.message}`);
  assertPlain(e);
}

/** Out of range: the option and its value are named. */
function assertRange(e, name, value) {
  assert.equal(e.code, 'bad_parameter', `${name}=${value}: ${e.code} ${e.message}`);
  assert.ok(e.message.includes(name), `message names ${name}: ${e.message}`);
  assert.ok(e.message.includes(String(value)), `message gives the value ${value}: ${e.message}`);
  assertPlain(e);
}

// Each method that takes options: how to call it with given options, a
// misspelt key, and names the message must list.
const CASES = {
  loadEvents: { call: (s, o) => s.loadEvents(file('demo-data/cases.csv'), o), bad: { date_ordre: 'day_month_year' }, key: 'date_ordre', valid: ['date_order', 'mapping', 'coords'] },
  loadEventsAfresh: { spec: 'loadEvents', call: (s, o) => s.loadEventsAfresh(file('demo-data/cases.csv'), o), bad: { date_ordre: 'day_month_year' }, key: 'date_ordre', valid: ['date_order', 'mapping', 'coords'] },
  loadControls: { call: (s, o) => s.loadControls(file('demo-data/population.csv'), o), bad: { mappng: {} }, key: 'mappng', valid: ['mapping'] },
  loadArea: { call: (s, o) => s.loadArea(file('demo-data/town-boundary.geojson'), o), bad: { coord: { kind: 'lon_lat' } }, key: 'coord', valid: ['coords'] },
  quadratTest: { call: (s, o) => s.quadratTest(o), bad: { n_x: 4 }, key: 'n_x', valid: ['nx', 'ny', 'n_sim', 'seed'] },
  clarkEvans: { call: (s, o) => s.clarkEvans(o), bad: { nsim: 0 }, key: 'nsim', valid: ['n_sim', 'seed'] },
  envelopeStart: { call: (s, o) => s.envelopeStart(o), bad: { r_max: 500 }, key: 'r_max', valid: ['r_max_m', 'r_min_m', 'bandwidth_m', 'n_steps', 'estimator'] },
  labellingStart: { call: (s, o) => s.labellingStart(o), bad: { n_sims: 99 }, key: 'n_sims', valid: ['n_sim', 'r_max_m', 'correction'] },
  nearestCasesStart: { call: (s, o) => s.nearestCasesStart(o), bad: { k: 5 }, key: 'k', valid: ['k_max', 'n_sim', 'seed'] },
  mantelStart: { call: (s, o) => s.mantelStart(o), bad: { space: 'raw' }, key: 'space', valid: ['space_transform', 'time_transform', 'space_constant_m'] },
  spaceTimeKStart: { call: (s, o) => s.spaceTimeKStart(o), bad: { s_max: 500 }, key: 's_max', valid: ['s_max_m', 't_max_days', 's_steps'] },
  riskSurfaceStart: { call: (s, o) => s.riskSurfaceStart(o), bad: { n_sims: 99 }, key: 'n_sims', valid: ['n_sim', 'method', 'tolerance'] },
  inhomKStart: { call: (s, o) => s.inhomKStart(o), bad: { bandwidth: 300 }, key: 'bandwidth', valid: ['bandwidth_m', 'bandwidth_method', 'intensity_from'] },
  envelopeEstimate: { spec: 'envelopeStart', call: (s, o) => s.envelopeEstimate(o, 1), bad: { r_max: 500 }, key: 'r_max', valid: ['r_max_m', 'r_min_m', 'bandwidth_m', 'n_steps'] },
  intensitySurface: { call: (s, o) => s.intensitySurface(o), bad: { kernal: 'quartic' }, key: 'kernal', valid: ['kernel', 'method', 'fixed_m'] },
  dbscan: { call: (s, o) => s.dbscan(o), bad: { eps_m: 150, minsamples: 8 }, key: 'minsamples', valid: ['eps_m', 'min_samples', 'use_weights'] },
  scanStart: { call: (s, o) => s.scanStart(o), bad: { n_sims: 9 }, key: 'n_sims', valid: ['n_sim', 'max_share', 'seed'] },
  maskDonut: { call: (s, o) => s.maskDonut(o), bad: { r_min_m: 50, r_mxa_m: 250 }, key: 'r_mxa_m', valid: ['r_min_m', 'r_max_m', 'law', 'replace'] },
  maskKAnonymity: { call: (s, o) => s.maskKAnonymity(o), bad: { target: 10 }, key: 'target', valid: ['target_k', 'against', 'r_max_m'] },
  maskingCost: { call: (s, o) => s.maskingCost(o), bad: { bandwidth: 100 }, key: 'bandwidth', valid: ['bandwidth_m', 'grid_cells', 'pair_band_m', 'pair_max_days'], needsMask: true },
  aggregate: { call: (s, o) => s.aggregate(o), bad: { cell_size: 250 }, key: 'cell_size', valid: ['cell_size_m', 'layout', 'min_count'] },
  exportPreview: { call: (s, o) => s.exportPreview('masked_points', o), bad: { formt: 'csv' }, key: 'formt', valid: ['format', 'coordinates', 'decimals'], needsMask: true },
  exportFile: { call: (s, o) => s.exportFile('masked_points', o), bad: { confirm_unmaskd: true }, key: 'confirm_unmaskd', valid: ['confirm_unmasked', 'format'], needsMask: true },
  nearRepeatStart: { call: (s, o) => s.nearRepeatStart(o), bad: { band_metres: 100 }, key: 'band_metres', valid: ['band_m', 'max_distance_m', 'band_days', 'n_perm'] },
  knoxStart: { call: (s, o) => s.knoxStart(o), bad: { distance: 100 }, key: 'distance', valid: ['distance_m', 'days', 'n_perm'] },
  timeline: { call: (s, o) => s.timeline(o), bad: { bins: 'week' }, key: 'bins', valid: ['bin'] },
  spaceTimeScanStart: { call: (s, o) => s.spaceTimeScanStart(o), bad: { max_day: 30 }, key: 'max_day', valid: ['max_days', 'max_share', 'mode'] },
  spaceTimeScanExport: { call: (s, o) => s.spaceTimeScanExport(o), bad: { internl: true }, key: 'internl', valid: ['internal', 'round_m', 'format'] },
};

// Session methods that take no options object (positional arguments only,
// checked below where they are numbers).
const NO_OPTIONS = new Set([
  'constructor', 'free', 'clearAll', 'clearControls', 'clearArea', 'setAreaFallback', 'study', 'summary',
  'mapLayers', 'rejections', 'envelopeStep', 'envelopeFinish', 'envelopeShare', 'envelopeHelperStart',
  'envelopeSimulate', 'envelopeAdd', 'hotspotsInfo', 'isoplethsGeoJson', 'kDistance', 'scanStep',
  'scanFinish', 'maskResult', 'sharingCautions', 'labellingStep', 'labellingFinish',
  'labellingShare', 'labellingHelperStart', 'labellingSimulate', 'labellingAdd',
  'scanShare', 'scanHelperStart', 'scanSimulate', 'scanAdd',
  'nearestCasesStep', 'nearestCasesFinish', 'nearestCasesShare', 'nearestCasesHelperStart', 'nearestCasesSimulate', 'nearestCasesAdd',
  'riskSurfaceStep', 'riskSurfaceFinish', 'riskContoursGeoJson', 'riskSurfaceShare', 'riskSurfaceHelperStart', 'riskSurfaceSimulate', 'riskSurfaceAdd',
  'inhomKStep', 'inhomKFinish', 'inhomKShare', 'inhomKHelperStart', 'inhomKSimulate', 'inhomKAdd',
  'mantelStep', 'mantelFinish', 'mantelShare', 'mantelHelperStart', 'mantelSimulate', 'mantelAdd',
  'spaceTimeKStep', 'spaceTimeKFinish', 'spaceTimeKShare', 'spaceTimeKHelperStart', 'spaceTimeKSimulate', 'spaceTimeKAdd', 'spaceTimeKCsv',
  'nearRepeatStep', 'nearRepeatFinish', 'nearRepeatCsv', 'nearRepeatShare', 'nearRepeatHelperStart', 'nearRepeatSimulate', 'nearRepeatAdd',
  'knoxStep', 'knoxFinish', 'knoxShare', 'knoxHelperStart', 'knoxSimulate', 'knoxAdd',
  'eventTimes',
  'spaceTimeScanStep', 'spaceTimeScanFinish', 'spaceTimeScanShare', 'spaceTimeScanHelperStart', 'spaceTimeScanSimulate', 'spaceTimeScanAdd',
]);

test('every Session method is either listed as taking options here or as taking none', () => {
  const names = Object.getOwnPropertyNames(Session.prototype).filter((n) => typeof Session.prototype[n] === 'function' && !n.startsWith('__'));
  for (const n of names) {
    assert.ok(n in CASES || NO_OPTIONS.has(n), `Session.${n} is new: add it to CASES (takes options) or NO_OPTIONS`);
  }
  for (const n of Object.keys(CASES)) assert.ok(names.includes(n), `Session.${n} exists`);
});

for (const [name, c] of Object.entries(CASES)) {
  test(`${name}: a misspelt option is refused, naming it and the valid ones`, () => {
    const s = demo();
    if (c.needsMask) s.maskDonut({ seed: 5 });
    const before = s.maskResult();
    const e = throws(() => c.call(s, c.bad));
    assertUnknown(e, c.key, c.valid);
    // Nothing was run or kept with a default in the misspelt option's place.
    assert.deepEqual(s.maskResult(), before);
    assert.equal(s.summary().n_events, 1500);
  });
}

test('a misspelt key close to a valid one gets a suggestion', () => {
  const s = demo();
  const e = throws(() => s.maskDonut({ r_min_m: 50, r_mxa_m: 250 }));
  assert.match(e.message, /did you mean "r_max_m"/);
  assert.equal(s.maskResult(), null, 'no mask was made with the default maximum');
  const k = throws(() => s.intensitySurface({ kernal: 'quartic' }));
  assert.match(k.message, /did you mean "kernel"/);
});

test('options that are not an object, or hold values of the wrong type, are refused in plain words', () => {
  const s = demo();
  for (const [f, what] of [
    [() => s.clarkEvans(5), 'clarkEvans'],
    [() => s.clarkEvans({ n_sim: 'many' }), 'n_sim'],
    [() => s.clarkEvans({ n_sim: 2.5 }), 'n_sim'],
    [() => s.envelopeStart({ function: 'ripley' }), 'function'],
    [() => s.envelopeStart({ estimator: 'fast' }), 'estimator'],
    [() => s.envelopeStart({ estimater: 'binned' }), 'estimater'],
    [() => s.maskDonut({ law: 'gaussian', seed: 1 }), 'law'],
    [() => s.loadEvents(file('demo-data/cases.csv'), { coords: { kind: 'nonsense' } }), 'coords'],
    [() => s.loadEvents(file('demo-data/cases.csv'), { mapping: { lon: 'x' } }), 'lon'],
    [() => s.dbscan({ eps_m: NaN }), 'eps_m'],
    [() => s.maskDonut({ r_max_m: Infinity, seed: 1 }), 'r_max_m'],
  ]) {
    const e = throws(f);
    assert.equal(e.code, 'bad_options', e.message);
    assert.ok(e.message.includes(what), `${what}: ${e.message}`);
    assertPlain(e);
  }
  assert.equal(s.maskResult(), null);
});

test('estimator binned with another correction or for G, F, J is refused, saying what to change', () => {
  const s = demo();
  const corr = throws(() => s.envelopeStart({ estimator: 'binned', correction: 'isotropic' }));
  assert.equal(corr.code, 'bad_parameter', corr.message);
  assert.match(corr.message, /estimator: .*translation correction only: set correction to translation/);
  assertPlain(corr);
  const j = throws(() => s.envelopeStart({ estimator: 'binned', correction: 'translation', function: 'j' }));
  assert.equal(j.code, 'bad_parameter', j.message);
  assert.match(j.message, /estimator: binned computes K, L and g only/);
  assertPlain(j);
  const ok = s.envelopeStart({ estimator: 'binned', correction: 'translation', n_sim: 2, seed: 1, n_steps: 10 });
  s.envelopeStep(ok.total);
  const res = s.envelopeFinish();
  assert.equal(res.estimator, 'binned');
  assert.equal(res.correction, 'translation');
  assert.ok(res.cell_m > 0 && res.binned_relative_error > 0 && res.binned_error_from_m > 0);
});

test('values out of range are refused with the option, its value and the range', () => {
  const s = demo();
  assertRange(throws(() => s.quadratTest({ nx: 0 })), 'nx', 0);
  assertRange(throws(() => s.quadratTest({ n_sim: 10000 })), 'n_sim', 10000);
  // A negative count is out of the count's range like any other: the range is said.
  assertRange(throws(() => s.clarkEvans({ n_sim: -1 })), 'n_sim', -1);
  // A fraction for a count is of the wrong kind, but the range is still said.
  const frac = throws(() => s.clarkEvans({ n_sim: 2.5 }));
  assert.equal(frac.code, 'bad_options');
  assert.match(frac.message, /n_sim: must be a whole number from 0 to 9999 \(got 2\.5\)/);
  assertPlain(frac);
  assertRange(throws(() => s.envelopeStart({ n_steps: 1 })), 'n_steps', 1);
  assertRange(throws(() => s.envelopeStart({ n_sim: 0 })), 'n_sim', 0);
  assertRange(throws(() => s.envelopeStart({ alpha: 0 })), 'alpha', 0);
  assertRange(throws(() => s.envelopeStart({ r_max_m: 1e9 })), 'r_max_m', 1000000000);
  assertRange(throws(() => s.envelopeStart({ r_min_m: 500, r_max_m: 400 })), 'r_min_m', 500);
  assertRange(throws(() => s.envelopeStart({ bandwidth_m: -3 })), 'bandwidth_m', -3);
  assertRange(throws(() => s.intensitySurface({ cells: 1 })), 'cells', 1);
  assertRange(throws(() => s.intensitySurface({ candidates: 2 })), 'candidates', 2);
  assertRange(throws(() => s.intensitySurface({ method: 'fixed', fixed_m: -1 })), 'fixed_m', -1);
  assertRange(throws(() => s.intensitySurface({ isopleths: [0.5, 1.5] })), 'isopleths', 1.5);
  assertRange(throws(() => s.dbscan({ eps_m: 0 })), 'eps_m', 0);
  assertRange(throws(() => s.dbscan({ eps_m: 100, min_samples: 0 })), 'min_samples', 0);
  assertRange(throws(() => s.scanStart({ max_share: 0.8 })), 'max_share', 0.8);
  assertRange(throws(() => s.scanStart({ n_sim: 0 })), 'n_sim', 0);
  assertRange(throws(() => s.maskDonut({ r_max_m: 1e9, seed: 1 })), 'r_max_m', 1000000000);
  assertRange(throws(() => s.maskDonut({ r_max_m: -5, seed: 1 })), 'r_max_m', -5);
  assertRange(throws(() => s.maskDonut({ max_tries: 0, seed: 1 })), 'max_tries', 0);
  assertRange(throws(() => s.maskKAnonymity({ target_k: 0, seed: 1 })), 'target_k', 0);
  assertRange(throws(() => s.maskKAnonymity({ area_factor: 0.5, seed: 1 })), 'area_factor', 0.5);
  assert.equal(s.maskResult(), null, 'no mask was made by a refused call');
  s.maskDonut({ seed: 2 });
  assertRange(throws(() => s.maskingCost({ grid_cells: 1 })), 'grid_cells', 1);
  assertRange(throws(() => s.maskingCost({ bandwidth_m: 0 })), 'bandwidth_m', 0);
  assertRange(throws(() => s.aggregate({ cell_size_m: 0 })), 'cell_size_m', 0);
  assertRange(throws(() => s.aggregate({ min_count: 0 })), 'min_count', 0);
  assertRange(throws(() => s.exportPreview('masked_points', { decimals: 99 })), 'decimals', 99);
  // The range is stated in the message.
  assert.match(throws(() => s.clarkEvans({ n_sim: 10000 })).message, /from 0 to 9999/);
  assert.match(throws(() => s.maskDonut({ r_max_m: 1e9, seed: 1, replace: true })).message, /times the study area's extent/);
});

test('kDistance checks its one number: 0, negative, fractional and huge values are refused', () => {
  const s = demo();
  for (const v of [0, 1, 1e6]) {
    const e = throws(() => s.kDistance(v));
    assertRange(e, 'min_samples', v);
    assert.doesNotMatch(e.message, /4294967295/);
  }
  for (const [v, code] of [[-1, 'bad_parameter'], [1.5, 'bad_options']]) {
    const e = throws(() => s.kDistance(v));
    assert.equal(e.code, code, e.message);
    assert.match(e.message, /must be a whole number from 2 to 1000/);
    assert.ok(e.message.includes('min_samples') && e.message.includes(String(v)), e.message);
    assert.doesNotMatch(e.message, /4294967295/);
    assertPlain(e);
  }
  for (const v of ['five', NaN, undefined]) {
    const e = throws(() => s.kDistance(v));
    assert.ok(e.code === 'bad_options' || e.code === 'bad_parameter', `${v}: ${e.code}`);
    assertPlain(e);
  }
  assert.equal(s.kDistance(5).min_samples, 5);
});

test('batch sizes and page offsets must be whole numbers, 0 or more (no wrap-around of -1)', () => {
  const s = demo();
  s.envelopeStart({ n_sim: 5, seed: 1, n_steps: 10 });
  for (const v of [-1, 1.5, NaN]) {
    const e = throws(() => s.envelopeStep(v));
    assert.equal(e.code, 'bad_parameter');
    assert.match(e.message, /envelopeStep: k must be a whole number/);
  }
  assert.equal(s.envelopeStep(2), 2, 'nothing ran on the refused calls');
  s.scanStart({ n_sim: 5, seed: 1 });
  assert.equal(throws(() => s.scanStep(-1)).code, 'bad_parameter');
  assert.equal(s.scanStep(1), 1);
  assert.equal(throws(() => s.rejections('events', -1, 10)).code, 'bad_parameter');
  assert.equal(throws(() => s.rejections('events', 0, 2.5)).code, 'bad_parameter');
  assert.equal(s.rejections('events', 0, 10).offset, 0);
});

test('drawEnvelopeChart refuses an unknown chart option by name', () => {
  const s = demo();
  s.envelopeStart({ n_sim: 3, seed: 1, n_steps: 10 });
  s.envelopeStep(3);
  const res = s.envelopeFinish();
  const e = throws(() => drawEnvelopeChart('no-such-canvas', res, { colour: 'red' }));
  assert.equal(e.code, 'bad_options');
  assert.ok(e.message.includes('"colour"'), e.message);
  assertPlain(e);
});

test('parameterSpec: one list of names, units, defaults and limits, matching what the methods do', () => {
  const all = parameterSpec();
  const names = all.map((x) => x.analysis);
  for (const n of ['loadEvents', 'loadArea', 'quadratTest', 'clarkEvans', 'envelopeStart', 'intensitySurface', 'dbscan', 'kDistance', 'scanStart', 'maskDonut', 'maskKAnonymity', 'maskingCost', 'aggregate', 'exportFile']) {
    assert.ok(names.includes(n), n);
  }
  // Every key a misspelt-key message lists is in the spec, and back.
  const s = demo();
  for (const [name, c] of Object.entries(CASES)) {
    const spec = parameterSpec(c.spec || name);
    if (c.needsMask && !s.maskResult()) s.maskDonut({ seed: 9 });
    const msg = throws(() => c.call(s, c.bad)).message;
    for (const f of spec.fields) assert.ok(msg.includes(f.name), `${name}: ${f.name} listed`);
  }
  // Units are in the names: every field in metres ends in _m, and back.
  for (const sp of all) {
    for (const f of sp.fields) {
      if (f.unit === 'm') assert.match(f.name, /_m$/, `${sp.analysis}.${f.name}`);
      if (/_m$/.test(f.name)) assert.equal(f.unit, 'm', `${sp.analysis}.${f.name}`);
      if (f.kind === 'choice') assert.ok(f.allowed.length > 0);
      if (f.min !== null && f.max !== null) assert.ok(f.min <= f.max);
    }
  }
  // Defaults are the ones the methods use.
  const field = (a, n) => parameterSpec(a).fields.find((f) => f.name === n);
  assert.equal(field('clarkEvans', 'n_sim').default, 999);
  assert.equal(s.clarkEvans({ n_sim: field('clarkEvans', 'n_sim').default }).n_sim, 999);
  const env = s.envelopeStart({ n_sim: 2 });
  assert.equal(env.distances, field('envelopeStart', 'n_steps').default + 1);
  assert.equal(field('maskDonut', 'r_max_m').default, 500);
  assert.equal(field('aggregate', 'cell_size_m').default, 1000);
  // The limits are the ones the methods enforce: max passes, max + 1 fails.
  const nsim = field('quadratTest', 'n_sim');
  assert.equal(s.quadratTest({ n_sim: 0 }).n_sim, 0);
  assert.equal(throws(() => s.quadratTest({ n_sim: nsim.max + 1 })).code, 'bad_parameter');
  assert.equal(throws(() => parameterSpec('noSuchMethod')).code, 'bad_options');
});

// What each analysis is called with when its options are walked: a valid
// base (for options that are required) and the call.
const WALK = {
  quadratTest: {}, clarkEvans: {}, envelopeStart: {}, labellingStart: {}, riskSurfaceStart: {}, inhomKStart: {}, intensitySurface: {},
  dbscan: { base: { eps_m: 150 } }, scanStart: {}, maskDonut: { base: { seed: 1 } },
  maskKAnonymity: { base: { seed: 1 } }, maskingCost: { needsMask: true }, aggregate: {},
  exportFile: { needsMask: true }, loadEvents: {}, loadArea: {},
  kDistance: { call: (s, o) => s.kDistance(o.min_samples) },
  nearestCasesStart: {},
  mantelStart: {}, spaceTimeKStart: {},
  nearRepeatStart: {},
  knoxStart: {},
  timeline: {},
  spaceTimeScanStart: { base: { n_sim: 1, mode: 'prospective' } },
  spaceTimeScanExport: {},
};

test('every numeric option has a range, and values outside it, NaN, ±Infinity, 1e308 and 1e-300 are refused', () => {
  const s = demo();
  s.maskDonut({ seed: 3 });
  let walked = 0;
  for (const sp of parameterSpec()) {
    const w = WALK[sp.analysis];
    assert.ok(w, `${sp.analysis} is walked`);
    const call = w.call || CASES[sp.analysis].call;
    for (const f of sp.fields) {
      if (f.session || !['number', 'integer', 'numbers'].includes(f.kind)) continue;
      walked++;
      assert.ok(f.min !== null && f.max !== null, `${sp.analysis}.${f.name} has a full range`);
      const step = (v) => (f.kind === 'integer' ? 1 : 1e-6 * Math.max(1, Math.abs(v)));
      const values = [f.min_exclusive ? f.min : f.min - step(f.min), f.max + step(f.max), 1e308, -1e308, NaN, Infinity, -Infinity];
      for (const tiny of [1e-300, -1e-300]) {
        const inside = (f.min_exclusive ? tiny > f.min : tiny >= f.min) && tiny <= f.max;
        if (!inside || f.kind === 'integer') values.push(tiny);
      }
      for (const v of values) {
        const opts = { ...(w.base || {}), [f.name]: f.kind === 'numbers' ? [v] : v };
        const before = s.maskResult();
        const e = throws(() => call(s, opts));
        assert.ok(e.code === 'bad_parameter' || e.code === 'bad_options', `${sp.analysis}.${f.name} = ${v}: ${e.code} ${e.message}`);
        assert.ok(e.message.includes(f.name), `${sp.analysis}.${f.name} = ${v}: ${e.message}`);
        assertPlain(e);
        assert.deepEqual(s.maskResult(), before, 'a refused call keeps the mask');
      }
    }
  }
  assert.ok(walked >= 40, `${walked} numeric options walked`);
});

test('the reported absurd values are refused with a message, not answered', () => {
  const s = demo();
  for (const [f, name] of [
    [() => s.envelopeStart({ r_min_m: 1e308 }), 'r_min_m'],
    [() => s.intensitySurface({ method: 'fixed', fixed_m: 1e-300 }), 'fixed_m'],
    [() => s.intensitySurface({ method: 'fixed', fixed_m: 1e308 }), 'fixed_m'],
    [() => s.envelopeStart({ function: 'pair_correlation', bandwidth_m: 1e308 }), 'bandwidth_m'],
    [() => s.maskDonut({ r_min_m: 1e308, r_max_m: 1e308, seed: 1 }), 'r_min_m'],
    [() => s.intensitySurface({ method: 'likelihood_cv', candidates: 1e6 }), 'candidates'],
  ]) {
    const e = throws(f);
    assert.equal(e.code, 'bad_parameter', e.message);
    assert.ok(e.message.includes(name), e.message);
  }
});

/** Paths of every number in `v` that is NaN or ±Infinity. */
function nonFinite(v, path = '', out = []) {
  if (typeof v === 'number') { if (!Number.isFinite(v)) out.push(`${path} = ${v}`); }
  else if (ArrayBuffer.isView(v)) { v.forEach((x, i) => { if (typeof x === 'number' && !Number.isFinite(x)) out.push(`${path}[${i}] = ${x}`); }); }
  else if (Array.isArray(v)) v.forEach((x, i) => nonFinite(x, `${path}[${i}]`, out));
  else if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) nonFinite(x, `${path}.${k}`, out);
  return out;
}

test('degenerate inputs (one event, two coincident events, events on a line): no NaN or Infinity in any result', () => {
  const layouts = {
    'one event': [[500, 500]],
    'two coincident events': [[500, 500], [500, 500]],
    'events on a line': Array.from({ length: 12 }, (_, i) => [100 + 50 * i, 300]),
  };
  const area = new TextEncoder().encode(JSON.stringify({ type: 'Polygon', coordinates: [[[0, 0], [1000, 0], [1000, 1000], [0, 1000], [0, 0]]] }));
  for (const [name, pts] of Object.entries(layouts)) {
    const s = new Session();
    s.loadArea(area, {});
    s.loadEvents(new TextEncoder().encode('x,y\n' + pts.map(([x, y]) => `${x},${y}`).join('\n') + '\n'), {});
    const results = {};
    const attempt = (label, fn) => {
      try { results[label] = fn(); } catch (e) {
        // A refusal is an answer: it must be a coded error in plain words.
        assert.ok(typeof e.code === 'string' && e.code.length > 0, `${name} ${label}: ${e}`);
        assertPlain(e);
      }
    };
    attempt('quadratTest', () => s.quadratTest({ nx: 2, ny: 2, n_sim: 9, seed: 1 }));
    attempt('clarkEvans', () => s.clarkEvans({ n_sim: 9, seed: 1 }));
    for (const fn of ['k', 'l', 'pair_correlation', 'nearest_neighbour', 'empty_space', 'j']) {
      attempt(`envelope ${fn}`, () => {
        const st = s.envelopeStart({ function: fn, n_sim: 5, seed: 1, n_steps: 10 });
        s.envelopeStep(st.total);
        return s.envelopeFinish();
      });
    }
    for (const method of ['normal_reference', 'likelihood_cv', 'diggle_mse']) {
      attempt(`surface ${method}`, () => s.intensitySurface({ method, cells: 16, candidates: 5 }));
    }
    attempt('surface fixed 1 cm', () => s.intensitySurface({ method: 'fixed', fixed_m: 0.01, cells: 16 }));
    attempt('dbscan', () => s.dbscan({ eps_m: 50, min_samples: 2 }));
    attempt('kDistance', () => s.kDistance(2));
    attempt('scan', () => {
      const st = s.scanStart({ n_sim: 9, seed: 1, cells_long_side: 8 });
      s.scanStep(st.total);
      return s.scanFinish();
    });
    attempt('maskDonut', () => s.maskDonut({ r_min_m: 50, r_max_m: 100, seed: 1 }));
    attempt('mantel', () => {
      const st = s.mantelStart({ n_sim: 9, seed: 1 });
      s.mantelStep(st.total);
      return s.mantelFinish();
    });
    attempt('spaceTimeK', () => {
      const st = s.spaceTimeKStart({ n_sim: 9, seed: 1 });
      s.spaceTimeKStep(st.total);
      return s.spaceTimeKFinish();
    });
    attempt('maskingCost', () => s.maskingCost({ grid_cells: 16 }));
    attempt('aggregate', () => s.aggregate({ cell_size_m: 250 }));
    attempt('exportPreview', () => s.exportPreview('masked_points', {}));
    assert.ok(Object.keys(results).length >= 8, `${name}: ${Object.keys(results).join(', ')}`);
    // Envelope curves are documented as NaN where undefined (the result
    // type: "NaN (null in JSON) where undefined"), e.g. g at r = 0; every
    // other number, envelope scalars included, must be finite.
    const documented = /^\.envelope [a-z_]+\.[a-z_]+\[\d+\]$/;
    const bad = nonFinite(results).filter((p) => !documented.test(p.split(' = ')[0]));
    assert.deepEqual(bad, [], `${name}: non-finite values`);
  }
});
