// "Where are the hotspots?" through the JS API (dist/node: the same wasm core
// the page's worker runs). Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session, beginProgress } = require('../../dist/node/cloister.js');
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));
// The demo generator's record of what it planted (demo-data/README.md).
const truth = JSON.parse(readFileSync(new URL('demo-data/planted-truth.json', root)));

function demo({ controls = false } = {}) {
  const s = new Session();
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadEvents(file('demo-data/cases.csv'), {});
  if (controls) s.loadControls(file('demo-data/population.csv'), {});
  return s;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

/** Great-circle distance on a sphere of radius 6 371 008.8 m (haversine);
 * exact enough to compare points a few hundred metres apart. */
function metresApart(lon1, lat1, lon2, lat2) {
  const r = Math.PI / 180;
  const a = Math.sin(((lat2 - lat1) * r) / 2) ** 2 + Math.cos(lat1 * r) * Math.cos(lat2 * r) * Math.sin(((lon2 - lon1) * r) / 2) ** 2;
  return 2 * 6371008.8 * Math.asin(Math.sqrt(a));
}

function runScan(s, params) {
  const { total } = s.scanStart(params);
  let done = 0;
  let k = 7; // odd batch sizes on purpose: the result must not depend on them
  while (done < total) { done = s.scanStep(k); k = k * 2 + 1; }
  return s.scanFinish();
}

test('surface: with Jones–Diggle edge correction it integrates to n (Jones 1993)', () => {
  const s = demo();
  for (const kernel of ['gaussian', 'quartic']) {
    const r = s.intensitySurface({ kernel, method: 'fixed', fixed_m: 400, edge: 'jones_diggle' });
    // Each event keeps exactly one unit of mass inside the area; the grid
    // quadrature resolves the boundary to one cell (docs/methods.md#kernel).
    assert.ok(Math.abs(r.integral_events - 1500) / 1500 < 5e-3, `${kernel}: ${r.integral_events}`);
    // The same integral recomputed here from the returned grid (values per km², cells in km²).
    let sum = 0;
    for (let k = 0; k < r.values.length; k++) if (r.mask[k]) sum += r.values[k];
    const cellKm2 = (r.cell_m / 1000) ** 2;
    assert.ok(Math.abs(sum * cellKm2 - r.integral_events) < 1e-6 * r.integral_events);
    assert.equal(r.values.length, r.nx * r.ny);
    assert.equal(r.bandwidth_m, 400);
  }
  // Without correction mass leaks out across the town edge and into the lake.
  const none = s.intensitySurface({ method: 'fixed', fixed_m: 400, edge: 'none' });
  assert.ok(none.integral_events < 1500 * 0.99, `uncorrected ${none.integral_events}`);
});

test('surface: bandwidth methods, the rule of thumb by hand, isopleths nest', () => {
  const s = demo();
  const r = s.intensitySurface({});
  assert.equal(r.method, 'normal_reference');
  // Scott (1992) / Silverman (1986) in 2-d: σ̂·n^(−1/6), σ̂² = (s_x² + s_y²)/2 on the projected events.
  const m = s.mapLayers().events;
  const n = m.length / 2;
  let mx = 0, my = 0;
  for (let i = 0; i < n; i++) { mx += m[2 * i]; my += m[2 * i + 1]; }
  mx /= n; my /= n;
  let sxx = 0, syy = 0;
  for (let i = 0; i < n; i++) { sxx += (m[2 * i] - mx) ** 2; syy += (m[2 * i + 1] - my) ** 2; }
  const h = Math.sqrt((sxx / (n - 1) + syy / (n - 1)) / 2) * n ** (-1 / 6);
  assert.ok(Math.abs(r.bandwidth_m - h) < 1e-6 * h, `${r.bandwidth_m} vs ${h}`);
  // 50 % ⊂ 75 % ⊂ 95 %: levels fall and areas grow.
  const iso = r.isopleths;
  assert.deepEqual(iso.map((c) => c.percent), [0.5, 0.75, 0.95]);
  assert.ok(iso[0].level_per_km2 > iso[1].level_per_km2 && iso[1].level_per_km2 > iso[2].level_per_km2);
  assert.ok(iso[0].area_km2 < iso[1].area_km2 && iso[1].area_km2 < iso[2].area_km2);
  for (const method of ['likelihood_cv', 'diggle_mse']) {
    const c = s.intensitySurface({ method });
    assert.equal(c.method, method);
    assert.equal(c.candidates_m.length, 20);
    assert.ok(c.bandwidth_m > c.candidates_m[0] && c.bandwidth_m <= c.candidates_m[19]);
    // The clustered demo wants less smoothing than the rule of thumb, which
    // assumes one normal blob (Scott 1992 notes it oversmooths multimodal data).
    assert.ok(c.bandwidth_m < r.bandwidth_m, `${method} ${c.bandwidth_m} < ${r.bandwidth_m}`);
  }
  const e = throws(() => s.intensitySurface({ method: 'fixed' }));
  assert.equal(e.code, 'bad_parameter');
});

test('surface: privacy count matches a direct 5th-nearest-neighbour count', () => {
  const s = demo();
  const m = s.mapLayers().events;
  const n = m.length / 2;
  const r = s.intensitySurface({ method: 'fixed', fixed_m: 60 });
  const radius = 120; // twice the Gaussian SD
  assert.equal(r.privacy.radius_m, radius);
  let exposed = 0;
  for (let i = 0; i < n; i++) {
    let c = 0;
    for (let j = 0; j < n; j++) {
      const d2 = (m[2 * i] - m[2 * j]) ** 2 + (m[2 * i + 1] - m[2 * j + 1]) ** 2;
      if (d2 <= radius * radius) c++;
    }
    if (c < 5) exposed++;
  }
  assert.equal(r.privacy.exposed_events, exposed);
  assert.ok(exposed > 0 && r.privacy.warning.includes(String(exposed)));
  const wide = s.intensitySurface({ method: 'fixed', fixed_m: 1500 });
  assert.equal(wide.privacy.warning, null);
});

test('isopleths as GeoJSON: lon/lat polygons, closed rings, areas as reported', () => {
  const s = demo();
  const e = throws(() => s.isoplethsGeoJson([0.5]));
  assert.equal(e.code, 'nothing_computed');
  const r = s.intensitySurface({ method: 'fixed', fixed_m: 300 });
  const gj = JSON.parse(s.isoplethsGeoJson([0.5, 0.95]));
  assert.equal(gj.type, 'FeatureCollection');
  assert.equal(gj.features.length, 2);
  for (const [i, f] of gj.features.entries()) {
    assert.equal(f.geometry.type, 'MultiPolygon');
    assert.equal(f.properties.percent_volume, [0.5, 0.95][i]);
    const want = r.isopleths[[0, 2][i]];
    assert.ok(Math.abs(f.properties.area_km2 - want.area_km2) < 1e-12);
    for (const poly of f.geometry.coordinates) for (const ring of poly) {
      assert.deepEqual(ring[0], ring[ring.length - 1]);
      for (const [lon, lat] of ring) assert.ok(Math.abs(lon + 32) < 0.1 && Math.abs(lat + 41.5) < 0.1);
    }
  }
  assert.equal(throws(() => s.isoplethsGeoJson([1.5])).code, 'bad_options');
});

/** DBSCAN as Ester et al. (1996) define it with scikit-learn's order of
 * growth (visit points in input order, grow depth-first through core
 * points, a border point keeps its first cluster), written out directly
 * with O(n²) distances: an independent check on the engine's bucketed one. */
function directDbscan(xy, eps, minSamples) {
  const n = xy.length / 2;
  const nb = [];
  for (let i = 0; i < n; i++) {
    const l = [];
    for (let j = 0; j < n; j++) {
      const d2 = (xy[2 * i] - xy[2 * j]) ** 2 + (xy[2 * i + 1] - xy[2 * j + 1]) ** 2;
      if (d2 <= eps * eps) l.push(j);
    }
    nb.push(l);
  }
  const core = nb.map((l) => l.length >= minSamples);
  const labels = new Array(n).fill(-1);
  let next = 0;
  for (let i = 0; i < n; i++) {
    if (labels[i] !== -1 || !core[i]) continue;
    const stack = [i];
    labels[i] = next;
    while (stack.length) {
      const p = stack.pop();
      if (!core[p]) continue;
      for (const q of nb[p]) {
        if (labels[q] === -1) {
          labels[q] = next;
          if (core[q]) stack.push(q);
        }
      }
    }
    next++;
  }
  return { labels, core };
}

test('DBSCAN on the demo equals a direct computation, label for label', () => {
  const s = demo();
  const xy = s.mapLayers().events;
  for (const [eps, k] of [[150, 8], [250, 12], [90, 4]]) {
    const r = s.dbscan({ eps_m: eps, min_samples: k });
    const d = directDbscan(xy, eps, k);
    assert.ok(r.labels instanceof Int32Array);
    assert.deepEqual(Array.from(r.labels), d.labels, `eps ${eps}, min ${k}`);
    assert.deepEqual(Array.from(r.core, Boolean), d.core);
    assert.equal(r.noise, d.labels.filter((l) => l < 0).length);
    assert.equal(r.n_clusters, Math.max(-1, ...d.labels) + 1);
    for (const c of r.clusters) assert.equal(c.members, d.labels.filter((l) => l === c.id).length);
  }
  // Planted cluster A (120 events, σ = 250 m) is found at eps 150 m / 8 points.
  const r = s.dbscan({ eps_m: 150, min_samples: 8 });
  const a = truth.clusters[0].centre_lonlat;
  const hit = r.clusters.find((c) => metresApart(c.centre_lon, c.centre_lat, a.longitude, a.latitude) < 300);
  assert.ok(hit && hit.members >= 50, 'a cluster at planted A');
  assert.equal(throws(() => s.dbscan({ eps_m: 0 })).code, 'bad_parameter');
});

test('k-distance: sorted largest first, each the distance to the (k−1)-th other event', () => {
  const s = demo();
  const xy = s.mapLayers().events;
  const n = xy.length / 2;
  const kd = s.kDistance(6);
  assert.equal(kd.sorted_desc_m.length, n);
  const direct = [];
  for (let i = 0; i < n; i++) {
    const d = [];
    for (let j = 0; j < n; j++) d.push(Math.hypot(xy[2 * i] - xy[2 * j], xy[2 * i + 1] - xy[2 * j + 1]));
    d.sort((a, b) => a - b);
    direct.push(d[5]); // 6th nearest counting itself (d[0] = 0)
  }
  direct.sort((a, b) => b - a);
  for (let i = 0; i < n; i++) assert.ok(Math.abs(kd.sorted_desc_m[i] - direct[i]) < 1e-9);
  assert.equal(kd.knee_eps_m, kd.sorted_desc_m[kd.knee_index]);
});

test('scan finds the three planted clusters with p at its floor (Kulldorff 1997)', () => {
  for (const controls of [true, false]) {
    const s = demo({ controls });
    const r = runScan(s, { n_sim: 99, seed: 11 });
    assert.equal(r.model, controls ? 'bernoulli' : 'poisson');
    // p = (1 + #{T_j ≥ T_obs}) / (m + 1) (Kulldorff 1997), so with 99 replicates p ≥ 0.01.
    assert.equal(r.smallest_p, 0.01);
    assert.ok(r.p_value >= 0.01 && r.p_value < 0.05, `p = ${r.p_value}`);
    const sig = r.clusters.filter((c) => c.p_value < 0.05);
    for (const planted of truth.clusters) {
      const c = planted.centre_lonlat;
      // The planted centre lies inside a significant circle (within one circle radius of its centre).
      const hit = sig.find((k) => metresApart(k.centre_lon, k.centre_lat, c.longitude, c.latitude) <= Math.max(k.radius_m, r.cell_m));
      assert.ok(hit, `${controls ? 'Bernoulli' : 'Poisson'}: planted ${planted.label} inside a circle with p < 0.05`);
      assert.ok(hit.observed > hit.expected && hit.relative_risk > 1);
    }
  }
});

test('scan: the same seed gives the same answer; another seed changes the replicates only', () => {
  const s = demo({ controls: true });
  const a = runScan(s, { n_sim: 49, seed: 123456789 });
  const b = runScan(s, { n_sim: 49, seed: 123456789 });
  assert.deepEqual(a, b);
  const c = runScan(s, { n_sim: 49, seed: 987 });
  assert.notDeepEqual(c.null_maxima, a.null_maxima);
  assert.equal(c.statistic, a.statistic);
  assert.equal(a.seed, 123456789);
});

test('scan: cases against controls are centred on every place up to 10,000 places (auto), on grid cells when asked', () => {
  const s = demo({ controls: true });
  const places = s.scanStart({ n_sim: 9, seed: 3 });
  const auto = s.scanFinish();
  // The demo has 1,500 cases and 3,000 controls (demo-data/README.md): at most 4,500 places.
  assert.equal(auto.cell_m, null);
  assert.equal(auto.n_regions, places.n_regions);
  assert.ok(auto.n_regions > 2000 && auto.n_regions <= 4500, `${auto.n_regions} places`);
  s.scanStart({ n_sim: 9, seed: 3, centres: 'events' });
  assert.deepEqual(s.scanFinish(), auto);
  s.scanStart({ n_sim: 9, seed: 3, centres: 'grid' });
  const grid = s.scanFinish();
  assert.ok(grid.cell_m > 0 && grid.n_regions < auto.n_regions);
  // An unknown choice is an error naming the option, never a silent default.
  const e = throws(() => s.scanStart({ centres: 'everywhere' }));
  assert.ok(['bad_options', 'bad_parameter'].includes(e.code), e.code);
  assert.match(e.message, /centres/);
});

test('scan: starting again drops a half-run job; finishing twice is refused', () => {
  const s = demo({ controls: true });
  const full = runScan(s, { n_sim: 39, seed: 5 });
  const st = s.scanStart({ n_sim: 1000, seed: 5 });
  assert.equal(st.total, 1000);
  assert.ok(s.scanStep(3) === 3 && s.scanStep(4) === 7);
  // Start again (as after a cancel): the new job starts from zero.
  assert.equal(s.scanStart({ n_sim: 39, seed: 5 }).total, 39);
  assert.equal(s.scanStep(1), 1);
  let done = 1;
  while (done < 39) done = s.scanStep(10);
  assert.deepEqual(s.scanFinish(), full);
  assert.equal(throws(() => s.scanFinish()).code, 'nothing_started');
  assert.equal(throws(() => s.scanStep(1)).code, 'nothing_started');
  // New data drop a job too.
  s.scanStart({ n_sim: 10, seed: 1 });
  s.loadEvents(file('demo-data/cases.csv'), {});
  assert.equal(throws(() => s.scanStep(1)).code, 'nothing_started');
  // Bad options are refused with a message.
  assert.equal(throws(() => s.scanStart({ max_share: 0.8 })).code, 'bad_parameter');
  assert.equal(throws(() => s.scanStart({ seed: -1 })).code, 'bad_parameter');
  assert.equal(throws(() => s.scanStart({ seed: 0.5 })).code, 'bad_options');
  assert.equal(throws(() => s.scanStart({ n_sim: 0 })).code, 'bad_parameter');
});

test('nothing loaded: every hotspot method says so', () => {
  const s = new Session();
  for (const f of [() => s.intensitySurface({}), () => s.dbscan({ eps_m: 100 }), () => s.kDistance(5), () => s.scanStart({}), () => s.hotspotsInfo()]) {
    assert.equal(throws(f).code, 'nothing_loaded');
  }
});

test('MSE criterion on random events: "no finite optimum" is said, not the end of the range', () => {
  // 400 events uniform in a 5 km square (seeded LCG): under complete spatial
  // randomness the Diggle / Berman–Diggle criterion keeps falling as the
  // bandwidth grows (docs/methods.md#kernel), so no bandwidth may be reported.
  let st = 2n;
  const next = () => { st = (st * 6364136223846793005n + 1442695040888963407n) & 0xffffffffffffffffn; return Number(st >> 11n) / 2 ** 53; };
  let csv = 'x,y\n';
  for (let i = 0; i < 400; i++) csv += `${(5000 * next()).toFixed(2)},${(5000 * next()).toFixed(2)}\n`;
  const s = new Session();
  s.loadEvents(new TextEncoder().encode(csv), { coords: { kind: 'planar', unit: 'metre' } });
  s.setAreaFallback('bounding_box');
  const e = throws(() => s.intensitySurface({ method: 'diggle_mse' }));
  assert.equal(e.code, 'bad_parameter');
  assert.match(e.message, /no finite optimum/);
  // The other methods still answer on the same data.
  assert.ok(s.intensitySurface({ method: 'likelihood_cv' }).bandwidth_m > 0);
});

test('one long step reports the share done to globalThis.cloisterProgress after beginProgress, and nothing without it', () => {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  const seen = [];
  globalThis.cloisterProgress = (f) => seen.push(f);
  try {
    // Without beginProgress nothing is reported.
    s.intensitySurface({ cells: 64, method: 'likelihood_cv' });
    assert.deepEqual(seen, []);
    beginProgress();
    s.intensitySurface({ cells: 64, method: 'likelihood_cv' });
  } finally {
    delete globalThis.cloisterProgress;
  }
  assert.ok(seen.length >= 10 && seen.length <= 102, `${seen.length} reports`);
  assert.equal(seen[0], 0);
  assert.ok(seen.every((f, i) => f >= 0 && f <= 1 && (i === 0 || f >= seen[i - 1] + 0.01)), seen.join(' '));
  assert.ok(seen[seen.length - 1] >= 0.95, `last ${seen[seen.length - 1]}`);
});

test('random labelling (Diggle & Chetwynd 1991): the demo cases cluster beyond the population; reproducible by seed; counts refused', () => {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  assert.equal(throws(() => s.labellingStart({})).code, 'no_controls');
  s.loadControls(file('demo-data/population.csv'), {});
  const run = (o) => {
    const st = s.labellingStart(o);
    assert.deepEqual([st.n_cases, st.n_controls], [1500, 3000]);
    while (s.labellingStep(40) < st.total);
    return s.labellingFinish();
  };
  const r = run({ n_sim: 99, seed: 11, r_max_m: 1500 });
  // The demo's cases include planted clusters that the population does not
  // have (examples/make_demo.rs): raised D at short distances.
  assert.equal(r.outcome, 'beyond_population', r.verdict);
  assert.ok(r.ranges.some((g) => g.departure === 'clustered' && g.from_m <= 300), JSON.stringify(r.ranges));
  assert.equal(r.mad.p_value, 0.01);
  for (let k = 0; k < r.r.length; k++) assert.ok(Math.abs(r.observed[k] - (r.k_cases[k] - r.k_controls[k])) <= 1e-6 * (1 + Math.abs(r.k_cases[k])));
  // The same seed gives the same run, batch sizes aside.
  const again = run({ n_sim: 99, seed: 11, r_max_m: 1500 });
  assert.deepEqual(again.sim_mean, r.sim_mean);
  // The cross-type L: the planted clusters keep the cases apart from the
  // controls at short distances; the reference is the relabellings' mean.
  const x = run({ n_sim: 99, seed: 11, r_max_m: 1500, statistic: 'cross_l' });
  assert.equal(x.statistic, 'cross_l');
  assert.equal(x.outcome, 'apart_from_controls', x.verdict);
  assert.ok(x.ranges.some((g) => g.departure === 'regular' && g.from_m <= 300), JSON.stringify(x.ranges));
  for (let k = 0; k < x.r.length; k++) assert.ok(Math.abs(x.observed[k] - Math.sqrt(x.k_cross[k] / Math.PI)) <= 1e-9 * (1 + x.observed[k]));
  assert.deepEqual(x.k_cases, r.k_cases);
  assert.equal(throws(() => s.labellingStart({ statistic: 'cross' })).code, 'bad_options');
  assert.equal(throws(() => s.labellingStart({ correction: 'border' })).code, 'bad_parameter');
  assert.equal(throws(() => s.labellingStep(1)).code, 'no_job');
  // A population file with a count column is not a set of individuals.
  const counts = 'x,y,count\n' + Array.from({ length: 40 }, (_, i) => `${(i % 8) * 100 + 50},${Math.floor(i / 8) * 100 + 50},${1 + (i % 3)}`).join('\n');
  const p = new Session();
  p.loadEvents(new TextEncoder().encode('x,y\n' + Array.from({ length: 30 }, (_, i) => `${(i * 37) % 800 + 10},${(i * 53) % 500 + 10}`).join('\n')), {});
  p.setAreaFallback('bounding_box');
  p.loadControls(new TextEncoder().encode(counts), {});
  // The study says the population file holds counts, and their total.
  assert.equal(p.study().controls_population, 40 + 13 * 3);
  assert.equal(s.study().controls_population, null);
  const e = throws(() => p.labellingStart({ n_sim: 9 }));
  assert.equal(e.code, 'needs_individuals', e.message);
  assert.match(e.message, /one point per control/);
});

test('random labelling spread over helpers: pieces computed in another session from the shared run give the same result as one worker', () => {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadControls(file('demo-data/population.csv'), {});
  const o = { n_sim: 99, seed: 23, r_max_m: 800, n_steps: 20 };
  const st = s.labellingStart(o);
  while (s.labellingStep(64) < st.total);
  const alone = s.labellingFinish();
  // A helper: a fresh session with nothing loaded, given the share only.
  s.labellingStart(o);
  const helper = new Session();
  helper.labellingHelperStart(s.labellingShare());
  const a = s.labellingSimulate(0, 50); // this worker's piece
  const b = helper.labellingSimulate(50, 99); // the helper's
  assert.equal(a.length, 50 * st.distances);
  assert.equal(b.length, 49 * st.distances);
  assert.equal(throws(() => s.labellingAdd(50, b)).code, 'bad_parameter');
  assert.equal(s.labellingAdd(0, a), 50);
  assert.equal(s.labellingAdd(50, b), 99);
  const spread = s.labellingFinish();
  assert.deepEqual(spread.sim_mean, alone.sim_mean);
  assert.deepEqual([spread.mad, spread.dclf], [alone.mad, alone.dclf]);
  assert.equal(throws(() => helper.labellingHelperStart('{"x": 1}')).code, 'bad_parameter');
});

test('scan: the start times a few chance runs for the estimate without changing the job; faster settings each faster', () => {
  const s = demo({ controls: true });
  const st = s.scanStart({ n_sim: 299, seed: 5 });
  assert.equal(st.total, 299);
  assert.ok(st.cost.timed >= 1 && st.cost.timed <= 50, `timed ${st.cost.timed}`);
  assert.ok(Number.isFinite(st.cost.replicate_ms) && st.cost.replicate_ms >= 0);
  assert.equal(st.estimate_ms, st.cost.left_ms);
  assert.ok(Math.abs(st.estimate_ms - 299 * st.cost.replicate_ms) <= 1e-9 * Math.max(1, st.estimate_ms));
  const opts = st.cost.faster.map((f) => `${f.option}=${f.number}`);
  assert.deepEqual(opts.filter((o) => o.startsWith('n_sim')), ['n_sim=199', 'n_sim=99']);
  for (const f of st.cost.faster) assert.ok(f.run_ms <= st.estimate_ms && f.label.length > 0, JSON.stringify(f));
  // The timed runs were not kept: the first step is run 1, and the result
  // equals a scan whose start timed nothing of it (the same seed, run in
  // other batches).
  assert.equal(s.scanStep(1), 1);
  let done = 1;
  while (done < 299) done = s.scanStep(100);
  const a = s.scanFinish();
  const b = runScan(demo({ controls: true }), { n_sim: 299, seed: 5 });
  assert.deepEqual(a, b);
});

test('random labelling between two categories of the events: each against the others or against one; unknown names and no category column are refused', () => {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  const run = (o) => {
    const st = s.labellingStart(o);
    while (s.labellingStep(64) < st.total);
    return [st, s.labellingFinish()];
  };
  const [st, r] = run({ n_sim: 19, seed: 2, cases_category: 'enteric' });
  assert.deepEqual([st.n_cases, st.n_controls], [686, 814]);
  assert.equal(r.n_cases + r.n_controls, 1500);
  // The verdict names the two groups.
  assert.match(r.verdict, /[Ee]vents of "enteric"/);
  assert.match(r.verdict, /the other categories/);
  // With two categories, "against the others" and "against the other one" are the same comparison.
  const [, r2] = run({ n_sim: 19, seed: 2, cases_category: 'enteric', controls_category: 'respiratory' });
  assert.deepEqual(r2.observed, r.observed);
  // Swapped roles: D changes sign.
  const [, r3] = run({ n_sim: 19, seed: 2, cases_category: 'respiratory' });
  for (let k = 0; k < r.r.length; k++) assert.ok(Math.abs(r3.observed[k] + r.observed[k]) <= 1e-6 * (1 + Math.abs(r.k_cases[k])));
  const e = throws(() => s.labellingStart({ cases_category: 'entric' }));
  assert.equal(e.code, 'bad_parameter');
  assert.match(e.message, /no category "entric"; the categories are: (enteric, respiratory|respiratory, enteric)$/);
  assert.equal(throws(() => s.labellingStart({ controls_category: 'enteric' })).code, 'bad_parameter');
  assert.equal(throws(() => s.labellingStart({ cases_category: 'enteric', controls_category: 'enteric' })).code, 'bad_parameter');
  const p = new Session();
  p.loadEvents(new TextEncoder().encode('x,y\n' + Array.from({ length: 30 }, (_, i) => `${(i * 37) % 800 + 10},${(i * 53) % 500 + 10}`).join('\n')), {});
  p.setAreaFallback('bounding_box');
  assert.equal(throws(() => p.labellingStart({ cases_category: 'a' })).code, 'no_categories');
  // Rows with a blank category are not "the other categories".
  const rows = Array.from({ length: 60 }, (_, i) => `${(i * 37) % 800 + 10},${(i * 53) % 500 + 10},${['a', 'b', ''][i % 3]}`);
  const q = new Session();
  q.loadEvents(new TextEncoder().encode('x,y,category\n' + rows.join('\n')), {});
  q.setAreaFallback('bounding_box');
  const sq = q.labellingStart({ n_sim: 9, cases_category: 'a' });
  assert.deepEqual([sq.n_cases, sq.n_controls], [20, 20]);
});
