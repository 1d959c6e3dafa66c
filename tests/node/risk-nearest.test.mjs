// The k-nearest-neighbour test of Cuzick & Edwards (1990) through the JS API
// (dist/node: the same wasm core the page's worker runs): the job protocol,
// the demo's planted clusters, reproducibility, and what is refused.
// Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session, parameterSpec } = require('../../dist/node/cloister.js');
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));
const text = (s) => new TextEncoder().encode(s);

function demo({ controls = true } = {}) {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  if (controls) s.loadControls(file('demo-data/population.csv'), {});
  return s;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

function run(s, o, step = 37) {
  const st = s.nearestCasesStart(o);
  let done = 0;
  while (done < st.total) {
    const d = s.nearestCasesStep(step);
    assert.ok(d > done && d <= st.total, `${d} after ${done}`);
    done = d;
  }
  return [st, s.nearestCasesFinish()];
}

test('Cuzick–Edwards on the demo: the planted clusters give more case neighbours than the population; rows and p-values hold together', () => {
  const s = demo();
  const [st, r] = run(s, { n_sim: 99, seed: 3 });
  assert.deepEqual([st.total, st.k_max, st.n_cases, st.n_controls], [99, 10, 1500, 3000]);
  assert.equal(r.outcome, 'more_case_neighbours', r.verdict);
  assert.match(r.verdict, /^Cases have more cases among their nearest neighbours than the population would give, for k = /);
  assert.equal(r.combined.p_value, 0.01);
  assert.equal(r.rows.length, 10);
  for (const [i, row] of r.rows.entries()) {
    assert.equal(row.k, i + 1);
    // E[T_k] = k·n₁(n₁−1)/(n−1) (Cuzick & Edwards 1990; derived in src/risk/nearest.rs).
    assert.ok(Math.abs(row.expected - (i + 1) * 1500 * 1499 / 4499) < 1e-6, `${row.expected}`);
    assert.ok(Math.abs(row.z - (row.t - row.expected) / Math.sqrt(row.variance)) < 1e-9);
    assert.equal(row.p_value, (1 + row.at_least_as_extreme) / 100);
    assert.ok(row.p_normal > 0 && row.p_normal < 0.01, `normal p ${row.p_normal}`);
    if (i > 0) assert.ok(row.t >= r.rows[i - 1].t, 'T_k grows with k');
  }
  assert.deepEqual(r.small_p_k, r.rows.filter((x) => x.p_value <= 0.05).map((x) => x.k));
  assert.equal(r.combined.max_z, Math.max(...r.rows.map((x) => x.z)));
  assert.ok(r.caveats.length >= 2);
  // The same seed gives the same run, step sizes aside.
  const [, again] = run(s, { n_sim: 99, seed: 3 }, 99);
  assert.deepEqual(again, r);
  // Another seed breaks the demo's few ties (points at one address) in
  // another order: T_k can move only through the points whose lists had a
  // tie decided, by at most k each.
  assert.ok(r.ties_decided > 0 && r.ties_decided < 100, `${r.ties_decided}`);
  const [, other] = run(s, { n_sim: 19, seed: 4, k_max: 3 });
  for (let k = 1; k <= 3; k++) {
    assert.ok(Math.abs(other.rows[k - 1].t - r.rows[k - 1].t) <= k * Math.max(r.ties_decided, other.ties_decided));
  }
});

test('Cuzick–Edwards: counts refused with needs_individuals, no population refused, options checked, no job without a start', () => {
  const s = demo({ controls: false });
  assert.equal(throws(() => s.nearestCasesStart({})).code, 'no_controls');
  assert.equal(throws(() => s.nearestCasesStep(1)).code, 'no_job');
  assert.equal(throws(() => s.nearestCasesFinish()).code, 'no_job');
  const spec = parameterSpec('nearestCasesStart');
  const k = spec.fields.find((f) => f.name === 'k_max');
  assert.deepEqual([k.default, k.min, k.max], [10, 1, 50]);
  assert.equal(spec.fields.find((f) => f.name === 'n_sim').default, 999);
  s.loadControls(file('demo-data/population.csv'), {});
  for (const bad of [{ k_max: 0 }, { k_max: 51 }, { n_sim: 0 }, { n_sim: 10000 }, { alpha: 0 }]) {
    assert.equal(throws(() => s.nearestCasesStart(bad)).code, 'bad_parameter', JSON.stringify(bad));
  }
  // A fraction is the wrong type for a count; a misspelt key is refused.
  assert.equal(throws(() => s.nearestCasesStart({ k_max: 2.5 })).code, 'bad_options');
  assert.equal(throws(() => s.nearestCasesStart({ k: 3 })).code, 'bad_options');
  // A population file with a count column is not a set of individuals.
  const counts = 'x,y,count\n' + Array.from({ length: 40 }, (_, i) => `${(i % 8) * 100 + 50},${Math.floor(i / 8) * 100 + 50},${1 + (i % 3)}`).join('\n');
  const p = new Session();
  p.loadEvents(text('x,y\n' + Array.from({ length: 30 }, (_, i) => `${(i * 37) % 800 + 10},${(i * 53) % 500 + 10}`).join('\n')), {});
  p.setAreaFallback('bounding_box');
  p.loadControls(text(counts), {});
  const e = throws(() => p.nearestCasesStart({ n_sim: 9 }));
  assert.equal(e.code, 'needs_individuals', e.message);
  assert.match(e.message, /one point per control/);
  assert.match(e.message, /relative-risk surface, which works with counts/);
  // Nothing loaded is lost: the events and the population are still there.
  const st = p.study();
  assert.equal(st.events, 30);
  // More neighbours than other points.
  const q = new Session();
  q.loadEvents(text('x,y\n1,1\n5,2\n9,4\n'), {});
  q.setAreaFallback('bounding_box');
  q.loadControls(text('x,y\n3,3\n7,1\n'), {});
  const e2 = throws(() => q.nearestCasesStart({ k_max: 5 }));
  assert.equal(e2.code, 'bad_parameter');
  assert.match(e2.message, /only 5 points/);
});

test('Cuzick–Edwards between two categories of the events, and stacked points at one address', () => {
  const s = demo({ controls: false });
  const [st, r] = run(s, { n_sim: 19, seed: 2, k_max: 4, cases_category: 'enteric' });
  assert.deepEqual([st.n_cases, st.n_controls], [686, 814]);
  assert.match(r.verdict, /events of "enteric"/i);
  assert.match(r.verdict, /the other categories/);
  const [, r2] = run(s, { n_sim: 19, seed: 2, k_max: 4, cases_category: 'enteric', controls_category: 'respiratory' });
  assert.deepEqual(r2.rows.map((x) => x.t), r.rows.map((x) => x.t));
  const e = throws(() => s.nearestCasesStart({ cases_category: 'entric' }));
  assert.equal(e.code, 'bad_parameter');
  assert.match(e.message, /^nearestCasesStart: there is no category "entric"/);
  assert.equal(throws(() => s.nearestCasesStart({ controls_category: 'enteric' })).code, 'bad_parameter');
  // Twelve events at one address among spread controls: ties are broken by
  // the seed's random order, and the result says how many points had one.
  const ev = Array.from({ length: 12 }, () => '500,500').concat(Array.from({ length: 8 }, (_, i) => `${100 + i * 97},${120 + (i * 61) % 400}`));
  const ctl = Array.from({ length: 40 }, (_, i) => `${(i * 137) % 1000},${(i * 71) % 700}`);
  const t = new Session();
  t.loadEvents(text('x,y\n' + ev.join('\n')), {});
  t.setAreaFallback('bounding_box');
  t.loadControls(text('x,y\n' + ctl.join('\n')), {});
  const [ts, tr] = run(t, { n_sim: 19, seed: 1, k_max: 3 });
  assert.ok(ts.ties_decided >= 12, `${ts.ties_decided}`);
  assert.equal(tr.stacked_points, 12);
  assert.equal(tr.rows[0].t >= 12, true, 'each stacked case has a stacked case as its nearest neighbour');
  assert.ok(tr.warnings.some((w) => /random order drawn from the seed/.test(w)), tr.warnings.join(' | '));
});

test('Cuzick–Edwards spread over helpers: pieces run in another session from the shared run give the one-worker result', () => {
  const o = { n_sim: 199, seed: 31, k_max: 4 };
  const s = demo();
  const [, alone] = run(s, o);
  const st = s.nearestCasesStart(o);
  const share = s.nearestCasesShare();
  // The share holds point numbers, never a coordinate of the files.
  assert.ok(!/-3\d\.\d{6}/.test(share), 'a longitude in the share');
  const helper = new Session();
  helper.nearestCasesHelperStart(share);
  const a = s.nearestCasesSimulate(0, 120);
  const b = helper.nearestCasesSimulate(120, st.total);
  assert.equal(a[0], 120);
  assert.equal(b[0], 79);
  assert.equal(a.length, 1 + 4 + 1);
  assert.equal(throws(() => s.nearestCasesAdd(120, b)).code, 'bad_parameter');
  assert.equal(s.nearestCasesAdd(0, a), 120);
  assert.equal(s.nearestCasesAdd(120, b), 199);
  const spread = s.nearestCasesFinish();
  assert.deepEqual(spread.rows, alone.rows);
  assert.deepEqual(spread.combined, alone.combined);
  assert.equal(throws(() => helper.nearestCasesHelperStart('{}')).code, 'bad_parameter');
});
