// The scan against population counts at points (Kulldorff 1997, Poisson
// model) through the JS API (dist/node), on the invented demo town with
// demo-data/population-blocks.csv (a count of residents at each block
// centroid) as the population file. Run: node --test tests/node/
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

function demo(population) {
  const s = new Session();
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadEvents(file('demo-data/cases.csv'), {});
  if (population) s.loadControls(file(`demo-data/${population}`), {});
  return s;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

/** Great-circle distance on a sphere of radius 6 371 008.8 m (haversine). */
function metresApart(lon1, lat1, lon2, lat2) {
  const r = Math.PI / 180;
  const a = Math.sin(((lat2 - lat1) * r) / 2) ** 2 + Math.cos(lat1 * r) * Math.cos(lat2 * r) * Math.sin(((lon2 - lon1) * r) / 2) ** 2;
  return 2 * 6371008.8 * Math.asin(Math.sqrt(a));
}

function runScan(s, params) {
  const { total } = s.scanStart(params);
  let done = 0;
  let k = 5;
  while (done < total) { done = s.scanStep(k); k = k * 2 + 1; }
  return s.scanFinish();
}

test('scan: a population file with counts picks the Poisson model against the counts', () => {
  const s = demo('population-blocks.csv');
  const info = s.hotspotsInfo();
  assert.equal(info.has_population_counts, true);
  assert.equal(info.scan_model, 'poisson_population');
  assert.equal(info.scan_model_text, 'cases against the population counts (Poisson)');
  const r = runScan(s, { n_sim: 199, seed: 3 });
  assert.equal(r.model, 'poisson_population');
  assert.equal(r.model_text, 'cases against the population counts (Poisson)');
  assert.equal(r.total_cases, 1500);
  // demo-data/README.md: 24 000 residents in all.
  assert.equal(r.total_population, truth.population_blocks.residents);
  assert.equal(r.n_regions, truth.population_blocks.n);
  // Blocks are 500 m squares (demo-data/README.md): a case lies in or beside
  // a square with residents, so within about a square's diagonal (707 m) of
  // a centroid (344 m measured).
  assert.ok(r.case_to_population_max_m > 0 && r.case_to_population_max_m < 500 * Math.SQRT2,
    `${r.case_to_population_max_m}`);
  // Each planted cluster lies in a circle with p < 0.05.
  for (const c of truth.clusters) {
    const { longitude, latitude } = c.centre_lonlat;
    const hit = r.clusters.find((m) => m.p_value < 0.05
      && metresApart(m.centre_lon, m.centre_lat, longitude, latitude) <= m.radius_m + 400);
    assert.ok(hit, `cluster ${c.label} not found`);
    assert.ok(hit.relative_risk > 1.5);
  }
  // Asking for the model by name gives the same answer as leaving it to auto.
  assert.deepEqual(runScan(s, { model: 'poisson_population', n_sim: 199, seed: 3 }), r);
});

test('scan: the model against population counts without counts is a clear error', () => {
  // One row per person (population.csv has no count column): no counts.
  const s = demo('population.csv');
  const info = s.hotspotsInfo();
  assert.equal(info.has_population_counts, false);
  assert.equal(info.scan_model, 'bernoulli');
  assert.equal(info.scan_model_text, 'cases against controls (Bernoulli)');
  const e = throws(() => s.scanStart({ model: 'poisson_population', n_sim: 9 }));
  assert.equal(e.code, 'bad_parameter');
  assert.match(e.message, /count column/);
  // No population file at all.
  const bare = demo(null);
  assert.equal(bare.hotspotsInfo().scan_model, 'poisson');
  assert.equal(throws(() => bare.scanStart({ model: 'poisson_population', n_sim: 9 })).code, 'bad_parameter');
  // Bernoulli with counts would take a block for one person.
  const counts = demo('population-blocks.csv');
  const b = throws(() => counts.scanStart({ model: 'bernoulli', n_sim: 9 }));
  assert.equal(b.code, 'bad_parameter');
  assert.match(b.message, /one control per person/);
  // An unknown model name is refused, not read as the default.
  assert.equal(throws(() => counts.scanStart({ model: 'population', n_sim: 9 })).code, 'bad_options');
  // The data already loaded are kept: the scan runs after the errors.
  assert.equal(runScan(counts, { n_sim: 9, seed: 1 }).model, 'poisson_population');
  // Events against area stays available with a counts file loaded.
  assert.equal(runScan(counts, { model: 'poisson', n_sim: 9, seed: 1 }).model, 'poisson');
});

// The chance runs spread over helper workers (the page's worker does this
// with scanShare / scanHelperStart / scanSimulate / scanAdd): chance run j
// depends only on the seed and j, so pieces computed in another Session from
// the shared scan and handed back in order give exactly the one-worker result.
for (const [population, model] of [['population.csv', 'bernoulli'], ['population-blocks.csv', 'poisson_population']]) {
  test(`scan (${model}): chance runs computed in a helper Session give exactly the one-worker result`, () => {
    const params = { n_sim: 99, seed: 17 };
    const one = runScan(demo(population), params);
    assert.equal(one.model, model);
    const s = demo(population);
    const { total } = s.scanStart(params);
    assert.equal(total, 99);
    const helper = new Session();
    helper.scanHelperStart(s.scanShare());
    const pieces = [[0, 30], [30, 31], [31, 99]].map(([a, b]) => [a, helper.scanSimulate(a, b)]);
    assert.equal(pieces[2][1].length, 68);
    // The running scan computes the same piece itself, unchanged by it.
    assert.deepEqual(Array.from(s.scanSimulate(30, 31)), Array.from(pieces[1][1]));
    // Out of order: refused, nothing added.
    assert.equal(throws(() => s.scanAdd(30, pieces[1][1])).code, 'bad_parameter');
    assert.equal(throws(() => s.scanAdd(-1, pieces[0][1])).code, 'bad_parameter');
    let done = 0;
    for (const [from, maxima] of pieces) done = s.scanAdd(from, maxima);
    assert.equal(done, 99);
    const got = s.scanFinish();
    assert.deepEqual(got, one);
    assert.deepEqual(Array.from(got.null_maxima), [...pieces.flatMap(([, m]) => Array.from(m))]);
  });
}

test('scan: the helper calls without a scan or with a bad share are clear errors', () => {
  const s = demo('population.csv');
  assert.equal(throws(() => s.scanShare()).code, 'nothing_started');
  assert.equal(throws(() => s.scanSimulate(0, 5)).code, 'nothing_started');
  assert.equal(throws(() => s.scanAdd(0, new Float64Array([1]))).code, 'nothing_started');
  const h = new Session();
  assert.equal(throws(() => h.scanHelperStart('{"regions": 1}')).code, 'bad_parameter');
  s.scanStart({ n_sim: 9, seed: 1 });
  const share = JSON.parse(s.scanShare());
  share.options.n_sim = 0;
  assert.equal(throws(() => h.scanHelperStart(JSON.stringify(share))).code, 'bad_parameter');
});
