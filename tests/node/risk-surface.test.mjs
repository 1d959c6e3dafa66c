// The kernel relative-risk surface through the JS API (dist/node: the same
// wasm core the page's worker runs). Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session } = require('../../dist/node/cloister.js');
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));
// The demo generator's record of what it planted (demo-data/README.md).
const truth = JSON.parse(readFileSync(new URL('demo-data/planted-truth.json', root)));

function demo() {
  const s = new Session();
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadControls(file('demo-data/population.csv'), {});
  return s;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

function run(s, o, step = 7) {
  const st = s.riskSurfaceStart(o);
  let done = 0;
  while (done < st.total) done = s.riskSurfaceStep(step);
  return { st, r: s.riskSurfaceFinish() };
}

test('relative-risk surface on the demo: grids, classes, rank p-values, raised places at the planted clusters, reproducible by seed', () => {
  const s = demo();
  const { st, r } = run(s, { n_sim: 19, seed: 3, cells: 128 });
  assert.equal(st.total, 19);
  assert.equal(st.n_cases, 1500);
  assert.equal(st.n_control_points, 3000);
  assert.equal(st.controls_total, 3000);
  assert.equal(r.bandwidth_m, st.bandwidth_m);
  assert.equal(r.method, 'likelihood_cv');
  const n = r.nx * r.ny;
  assert.ok(r.log_rr instanceof Float64Array && r.log_rr.length === n);
  assert.ok(r.p_value instanceof Float64Array && r.p_value.length === n);
  assert.ok(r.class instanceof Uint8Array && r.class.length === n);
  // Rank p-values (1 + k)/(m + 1) where estimated; nothing infinite or NaN.
  let est = 0;
  for (let k = 0; k < n; k++) {
    assert.ok(Number.isFinite(r.log_rr[k]) && Number.isFinite(r.p_value[k]));
    if (r.class[k] !== 2) { assert.equal(r.log_rr[k], 0); continue; }
    est++;
    const j = r.p_value[k] * 20 - 1;
    assert.ok(Math.abs(j - Math.round(j)) < 1e-9 && j >= 0 && j <= 19, `p ${r.p_value[k]}`);
  }
  assert.ok(est > 0.5 * n * 0.6, `${est} estimated cells`);
  assert.equal(r.t_p_value, (1 + r.t_at_least_as_large) / 20);
  assert.equal(r.t_p_value, 0.05, 'no labelling is as far from flat as the demo (planted clusters)');
  assert.match(r.verdict, /^The risk is not the same everywhere: the global test of constant risk gives p = 0\.050 \(19 random labellings\)\./);
  assert.match(r.verdict, /pointwise/);
  assert.match(r.verdict, /A raised risk is not a cause\./);
  // The three largest raised places lie near the planted clusters: each
  // region's centre within 700 m of a cluster's realised mean (local grid
  // metres of the truth file, moved by the same offset as the study's
  // metres: compared through distances between cluster means instead).
  assert.ok(r.raised_regions.length >= 3, JSON.stringify(r.raised_regions));
  assert.ok(r.raised_regions.slice(0, 3).every((g) => g.extreme_ratio > 1.5 && g.area_km2 > 0.3), JSON.stringify(r.raised_regions));
  const means = truth.clusters.map((c) => c.realised_mean_grid_m);
  const c3 = r.raised_regions.slice(0, 3).map((g) => [g.centre_x, g.centre_y]);
  // Pairwise distances between the three raised centres match those between
  // the three planted clusters' realised means (within 700 m each).
  const d = (a, b) => Math.hypot(a[0] - b[0], a[1] - b[1]);
  const planted = [d([means[0].x, means[0].y], [means[1].x, means[1].y]), d([means[0].x, means[0].y], [means[2].x, means[2].y]), d([means[1].x, means[1].y], [means[2].x, means[2].y])].sort((a, b) => a - b);
  const found = [d(c3[0], c3[1]), d(c3[0], c3[2]), d(c3[1], c3[2])].sort((a, b) => a - b);
  for (let i = 0; i < 3; i++) assert.ok(Math.abs(planted[i] - found[i]) < 700, `${planted} vs ${found}`);
  // Same seed, other batch sizes: identical; another seed: other p-values.
  const again = run(demo(), { n_sim: 19, seed: 3, cells: 128 }, 19).r;
  assert.deepEqual(again.p_value, r.p_value);
  assert.deepEqual(again.log_rr, r.log_rr);
  const other = run(demo(), { n_sim: 19, seed: 4, cells: 128 }).r;
  assert.notDeepEqual(other.p_value, r.p_value);
  assert.deepEqual(other.log_rr, r.log_rr);
});

test('relative-risk contours export as GeoJSON in longitude/latitude, with no event or control coordinate', () => {
  const s = demo();
  assert.equal(throws(() => s.riskContoursGeoJson()).code, 'nothing_computed');
  run(s, { n_sim: 19, seed: 1, cells: 96 });
  const text = s.riskContoursGeoJson();
  const g = JSON.parse(text);
  assert.equal(g.type, 'FeatureCollection');
  assert.deepEqual(g.features.map((f) => f.properties.kind), ['raised', 'lowered', 'too_few_controls']);
  assert.match(g.features[0].properties.note, /pointwise/);
  assert.ok(g.cautions.some((c) => /not a cause/.test(c)));
  const raised = g.features[0].geometry.coordinates;
  assert.ok(raised.length >= 1);
  for (const poly of raised) for (const ring of poly) for (const [lon, lat] of ring) {
    assert.ok(lon > -32.2 && lon < -31.8 && lat > -41.6 && lat < -41.4, `${lon}, ${lat}`);
  }
  // No original location (as written, 6 decimals) is a vertex of the file.
  const places = new Set();
  for (const f of ['demo-data/cases.csv', 'demo-data/population.csv']) {
    for (const line of readFileSync(new URL(f, root), 'utf8').split('\n').slice(1)) {
      const m = line.match(/(-\d+\.\d{6}),(-\d+\.\d{6})/);
      if (m) places.add(`${m[1]},${m[2]}`);
    }
  }
  assert.ok(places.size > 4000);
  const leaked = [];
  for (const f of g.features) for (const poly of f.geometry.coordinates) for (const ring of poly) for (const [lon, lat] of ring) {
    if (places.has(`${lon.toFixed(6)},${lat.toFixed(6)}`)) leaked.push([lon, lat]);
  }
  assert.deepEqual(leaked, []);
});

test('relative-risk options and inputs: unknown or out-of-range options refused, no controls, counts as whole people, fractional counts refused', () => {
  const s = new Session();
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadEvents(file('demo-data/cases.csv'), {});
  assert.equal(throws(() => s.riskSurfaceStart({})).code, 'no_controls');
  assert.equal(throws(() => s.riskSurfaceStep(1)).code, 'no_job');
  s.loadControls(file('demo-data/population.csv'), {});
  assert.equal(throws(() => s.riskSurfaceStart({ n_sims: 9 })).code, 'bad_options');
  assert.equal(throws(() => s.riskSurfaceStart({ n_sim: 0 })).code, 'bad_parameter');
  assert.equal(throws(() => s.riskSurfaceStart({ tolerance: 0.5 })).code, 'bad_parameter');
  assert.equal(throws(() => s.riskSurfaceStart({ method: 'fixed' })).code, 'bad_parameter');
  assert.equal(throws(() => s.riskSurfaceStart({ method: 'scott' })).code, 'bad_options');
  // Population counts at points: a count column of whole numbers of people.
  const ev = 'x,y\n' + Array.from({ length: 60 }, (_, i) => `${(i * 37) % 900 + 20},${(i * 53) % 600 + 20}`).join('\n');
  const counts = (c) => 'x,y,count\n' + Array.from({ length: 48 }, (_, i) => `${(i % 8) * 110 + 40},${Math.floor(i / 8) * 110 + 40},${c(i)}`).join('\n');
  const p = new Session();
  p.loadEvents(new TextEncoder().encode(ev), {});
  p.setAreaFallback('bounding_box');
  p.loadControls(new TextEncoder().encode(counts((i) => 1 + (i % 4))), {});
  const { st, r } = run(p, { n_sim: 9, seed: 2, method: 'fixed', fixed_m: 150, cells: 32 });
  assert.equal(st.n_control_points, 48);
  assert.equal(st.controls_total, 48 + 12 * (0 + 1 + 2 + 3));
  assert.equal(r.weighted, true);
  assert.equal(r.controls_total, 120);
  const q = new Session();
  q.loadEvents(new TextEncoder().encode(ev), {});
  q.setAreaFallback('bounding_box');
  q.loadControls(new TextEncoder().encode(counts((i) => (i === 5 ? 2.5 : 1))), {});
  const e = throws(() => q.riskSurfaceStart({ n_sim: 9 }));
  assert.equal(e.code, 'bad_parameter');
  assert.match(e.message, /whole number/);
});

test('the sharing report can hold a summary of the relative-risk surface: settings, global test, shares of the area; no locations; left out when the disclosure check objects', () => {
  const s = demo();
  s.maskDonut({ r_min_m: 100, r_max_m: 300, seed: 99 });
  // Asked for before any surface is drawn: a clear error, nothing lost.
  assert.equal(throws(() => s.exportFile('report', { created: '2026-01-01', report_risk: true })).code, 'bad_options');
  const { r } = run(s, { n_sim: 19, seed: 3, cells: 128 });
  const f = s.exportFile('report', { created: '2026-01-01', report_risk: true });
  assert.ok(f.preview.fields.includes('relative-risk summary'), f.preview.fields.join(', '));
  assert.match(f.text, /Relative risk compared with the population/);
  assert.ok(f.text.includes(`p = ${r.t_p_value.toFixed(3)} (19 random labellings)`), 'global test p');
  assert.match(f.text, /pointwise/);
  // No case or control coordinate, as written in the files, is in it.
  for (const name of ['demo-data/cases.csv', 'demo-data/population.csv']) {
    const lines = readFileSync(new URL(name, root), 'utf8').trim().split('\n').slice(1);
    for (const line of lines) {
      const parts = line.split(',');
      const lon = parts.find((v) => /^-3\d\.\d{6}$/.test(v));
      if (lon) assert.ok(!f.text.includes(lon), `${name}: ${lon} in the report`);
    }
  }
  // Without the option the report has no such section.
  assert.ok(!/Relative risk compared/.test(s.exportFile('report', { created: '2026-01-01' }).text));
  // A bandwidth so small that single cases show: the summary is left out.
  const small = run(s, { n_sim: 19, seed: 3, cells: 128, method: 'fixed', fixed_m: 20 }).r;
  assert.ok(small.privacy && small.privacy.exposed_events > 0, JSON.stringify(small.privacy));
  const g = s.exportFile('report', { created: '2026-01-01', report_risk: true });
  assert.ok(g.preview.fields.includes('relative-risk summary left out (disclosure check)'), g.preview.fields.join(', '));
  assert.ok(!/Global test of constant risk/.test(g.text));
});

test('relative-risk labellings spread over helpers: pieces computed in another session from the shared run give the one-worker surface, for controls and for counts', () => {
  for (const counts of [false, true]) {
    const s = demo();
    if (counts) {
      // The demo population grouped four by four, with a count column.
      const rows = readFileSync(new URL('demo-data/population.csv', root), 'utf8').trim().split('\n').slice(1);
      const lines = ['longitude,latitude,count'];
      for (let i = 0; i < rows.length; i += 4) lines.push(`${rows[i]},${1 + (i % 5)}`);
      s.loadControls(new TextEncoder().encode(lines.join('\n')), {});
    }
    const o = { n_sim: 19, seed: 5, cells: 64 };
    const { r: alone } = run(s, o);
    const st = s.riskSurfaceStart(o);
    const helper = new Session();
    helper.riskSurfaceHelperStart(s.riskSurfaceShare());
    const a = s.riskSurfaceSimulate(0, 8);
    const b = helper.riskSurfaceSimulate(8, st.total);
    assert.equal(throws(() => s.riskSurfaceAdd(8, b)).code, 'bad_parameter');
    assert.equal(s.riskSurfaceAdd(0, a), 8);
    assert.equal(s.riskSurfaceAdd(8, b), 19);
    const spread = s.riskSurfaceFinish();
    assert.deepEqual(Array.from(spread.p_value), Array.from(alone.p_value));
    assert.deepEqual([spread.t_p_value, spread.bandwidth_m, spread.raised_share], [alone.t_p_value, alone.bandwidth_m, alone.raised_share]);
    helper.free();
  }
});
