// The Mantel test (Mantel 1967) and the space–time K function (Diggle,
// Chetwynd, Häggkvist & Morris 1995) through the JS API (dist/node: the
// same wasm core the page's worker runs): the job protocol, the demo's
// planted outbreaks, a split run equal to one run, and what is refused.
// Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session } = require('../../dist/node/cloister.js');
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));
const text = (s) => new TextEncoder().encode(s);

function demo() {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  return s;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

function run(s, prefix, o, step = 7) {
  const st = s[`${prefix}Start`](o);
  let done = 0;
  while (done < st.total) {
    const d = s[`${prefix}Step`](step);
    assert.ok(d > done && d <= st.total, `${d} after ${done}`);
    done = d;
  }
  return [st, s[`${prefix}Finish`]()];
}

/** The same run spread as a page worker spreads it: pieces computed by a
 * helper session from the share, added in order. */
function runSplit(s, prefix, o, cuts) {
  const st = s[`${prefix}Start`](o);
  const h = new Session();
  h[`${prefix}HelperStart`](s[`${prefix}Share`]());
  let from = 0;
  for (const to of [...cuts, st.total]) {
    const piece = (from % 2 === 0 ? h : s)[`${prefix}Simulate`](from, to);
    assert.equal(s[`${prefix}Add`](from, piece), to);
    from = to;
  }
  h.free();
  return s[`${prefix}Finish`]();
}

test('Mantel on the demo: the planted outbreaks link places and times; the numbers hold together', () => {
  const s = demo();
  const [st, r] = run(s, 'mantel', { n_sim: 99, seed: 5 }, 30);
  assert.equal(st.total, 99);
  assert.equal(r.n_events, 1500);
  assert.equal(r.pairs, 1500 * 1499 / 2);
  assert.equal(r.interaction_tail, 'upper');
  assert.equal(r.outcome, 'interaction', r.verdict);
  assert.match(r.verdict, /^Events close together on the map also tend to be close together in time/);
  assert.equal(r.p_value, r.p_upper);
  assert.equal(r.p_upper, (1 + r.at_least) / 100);
  assert.equal(r.p_lower, (1 + r.at_most) / 100);
  assert.ok(Math.abs(r.z_score - (r.statistic - r.expected) / Math.sqrt(r.variance)) < 1e-9);
  assert.ok(r.z_score > 3, `z ${r.z_score}`);
  assert.ok(r.statistic > r.simulated_max);
  assert.equal(r.times.events_used, 1500);
  // The start step's moments are the result's.
  assert.equal(st.expected, r.expected);
  // The same seed gives the same result, whatever the step size.
  const [, again] = run(demo(), 'mantel', { n_sim: 99, seed: 5 }, 13);
  assert.deepEqual(again, r);
});

test('Mantel split over a helper equals one run; raw distances with reciprocal time test the lower tail', () => {
  const o = { n_sim: 40, seed: 11, space_transform: 'raw', time_transform: 'reciprocal' };
  const [, one] = run(demo(), 'mantel', o, 40);
  const split = runSplit(demo(), 'mantel', o, [3, 17, 30]);
  assert.deepEqual(split, one);
  assert.equal(one.interaction_tail, 'lower');
  assert.equal(one.p_value, one.p_lower);
});

test('space–time K on the demo: positive D at short distances and times, global test small, CSV without coordinates', () => {
  const s = demo();
  const [st, r] = run(s, 'spaceTimeK', { n_sim: 39, seed: 2, s_max_m: 1000, t_max_days: 60, s_steps: 5, t_steps: 6 }, 10);
  assert.equal(st.total, 39);
  assert.equal(st.s_max_m, 1000);
  assert.deepEqual(r.s, [200, 400, 600, 800, 1000]);
  assert.deepEqual(r.t, [10, 20, 30, 40, 50, 60]);
  assert.equal(r.d.length, 30);
  assert.equal(r.outcome, 'interaction', r.verdict);
  assert.equal(r.global_p, (1 + r.at_least) / 40);
  assert.ok(r.global_p <= 0.05);
  // The outbreaks (A: σ = 250 m over four weeks, demo-data/README.md) put
  // more pairs within 400 m and 20 days than the map and dates alone give.
  const cell = 1 * 6 + 1;
  assert.ok(r.d[cell] > 0 && r.residual[cell] > 2, `D ${r.d[cell]}, R ${r.residual[cell]}`);
  assert.ok(r.d[cell] > r.d_hi[cell], 'above every permutation');
  for (let c = 0; c < 30; c++) {
    assert.ok(Math.abs(r.k[c] - (r.d[c] + r.k_space[Math.floor(c / 6)] * r.k_time[c % 6])) < 1e-6 * Math.abs(r.k[c]) + 1e-9);
  }
  assert.match(r.verdict, /more common than if times and places were unrelated/);
  const csv = s.spaceTimeKCsv();
  const lines = csv.trim().split('\n');
  assert.equal(lines.length, 31);
  assert.match(lines[0], /^distance_m,days,k,d,/);
  assert.doesNotMatch(csv, /lon|lat|-41\.|-32\./);
});

test('space–time K split over a helper equals one run', () => {
  const o = { n_sim: 12, seed: 8, s_steps: 4, t_steps: 4 };
  const [, one] = run(demo(), 'spaceTimeK', o, 12);
  const split = runSplit(demo(), 'spaceTimeK', o, [2, 7]);
  assert.deepEqual(split, one);
});

test('refusals: no dates, too few events, bad options, pieces out of order, CSV before a run', () => {
  const nodates = new Session();
  nodates.loadEvents(text('x,y\n1,1\n2,5\n3,3\n7,4\n5,9\n'), {});
  for (const m of ['mantelStart', 'spaceTimeKStart']) {
    const e = throws(() => nodates[m]({}));
    assert.equal(e.code, 'nothing_loaded', e.message);
    assert.match(e.message, /time column/);
  }
  const few = new Session();
  few.loadEvents(text('x,y,date\n1,1,2025-01-01\n2,2,2025-01-03\n9,3,2025-01-05\n'), {});
  assert.equal(throws(() => few.mantelStart({})).code, 'too_few_points');
  const s = demo();
  assert.equal(throws(() => s.mantelStart({ space_transform: 'log' })).code, 'bad_options');
  const e = throws(() => s.spaceTimeKStart({ t_max_days: 5000 }));
  assert.equal(e.code, 'bad_parameter');
  assert.match(e.message, /t_max_days/);
  assert.equal(throws(() => s.spaceTimeKCsv()).code, 'no_result');
  s.mantelStart({ n_sim: 10, seed: 1 });
  assert.equal(throws(() => s.mantelAdd(3, new Float64Array([1, 2]))).code, 'bad_parameter');
  assert.equal(throws(() => s.mantelStep(-1)).code, 'bad_parameter');
  // Loading other data ends a run.
  s.loadEvents(file('demo-data/cases.csv'), {});
  assert.equal(throws(() => s.mantelStep(1)).code, 'no_job');
});
