// The inhomogeneous K test (Baddeley, Møller & Waagepetersen 2000) through
// the JS API (dist/node: the same wasm core the page's worker runs), with
// both kinds of population layer: individual controls, and counts at points
// (the demo's controls aggregated to block centres here, with a count
// column). Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session } = require('../../dist/node/cloister.js');
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));
const text = (s) => new TextEncoder().encode(s);

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

function demo({ controls = true } = {}) {
  const s = new Session();
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadEvents(file('demo-data/cases.csv'), {});
  if (controls) s.loadControls(file('demo-data/population.csv'), {});
  return s;
}

/** Runs a whole test with varying batch sizes (the result must not depend on them). */
function run(s, o, first = 1) {
  const st = s.inhomKStart(o);
  let done = 0;
  let k = first;
  while (done < st.total) { done = s.inhomKStep(k); k = k * 2 + 1; }
  return [st, s.inhomKFinish()];
}

/** The demo's population points grouped into blocks of `deg` degrees, one
 * row per block at the mean position of its people, with their number. */
function blocks(deg) {
  const rows = readFileSync(new URL('demo-data/population.csv', root), 'utf8').trim().split('\n').slice(1);
  const cells = new Map();
  for (const line of rows) {
    const [lon, lat] = line.split(',').map(Number);
    const key = `${Math.floor(lon / deg)},${Math.floor(lat / deg)}`;
    const c = cells.get(key) || { lon: 0, lat: 0, n: 0 };
    c.lon += lon; c.lat += lat; c.n += 1;
    cells.set(key, c);
  }
  return [...cells.values()].map((c) => ({ lon: c.lon / c.n, lat: c.lat / c.n, n: c.n }));
}

test('individual controls: the demo cases cluster beyond the population; reproducible by seed whatever the batches', () => {
  const s = demo();
  const o = { n_sim: 19, seed: 7, r_max_m: 1500, n_steps: 30 };
  const [st, r] = run(s, o);
  assert.deepEqual([st.total, st.n_cases, st.n_controls, st.distances], [19, 1500, 3000, 31]);
  assert.ok(st.bandwidth_m > 0 && st.bandwidth_m === r.bandwidth_m);
  assert.equal(r.intensity_from, 'population');
  assert.equal(r.total_controls, 3000);
  // The demo's planted clusters are in the cases only (examples/make_demo.rs):
  // pairs of cases are closer than the population explains at short range.
  assert.equal(r.outcome, 'clustered', r.verdict);
  assert.match(r.verdict, /^Cases cluster beyond what the population layer explains, at distances/);
  assert.equal(r.mad.p_value, 1 / 20);
  assert.ok(r.ranges.some((g) => g.departure === 'clustered' && g.from_m <= 300), JSON.stringify(r.ranges));
  assert.match(r.caveats[0], /depends on how the intensity was estimated/);
  assert.match(r.bandwidth_rule, /rule of thumb/);
  for (let k = 0; k < r.r.length; k++) {
    assert.ok(Math.abs(r.observed[k] - Math.sqrt(r.k_inhom[k] / Math.PI)) <= 1e-9 * (1 + r.observed[k]));
    assert.equal(r.theoretical[k], r.r[k]);
  }
  const [, again] = run(s, o, 5);
  assert.deepEqual(again, r);
  const [, other] = run(s, { ...o, seed: 8 });
  assert.deepEqual(other.observed, r.observed);
  assert.notDeepEqual(other.sim_mean, r.sim_mean);
});

test('counts at points: the population as block centres with a count column gives nearly the individuals\' curve; without the counts it does not', () => {
  const b = blocks(0.004);
  assert.ok(b.length > 100 && b.length < 1500, `${b.length} blocks`);
  const csv = 'longitude,latitude,count\n' + b.map((c) => `${c.lon.toFixed(6)},${c.lat.toFixed(6)},${c.n}`).join('\n');
  const o = { n_sim: 9, seed: 3, r_max_m: 1500, n_steps: 15, bandwidth_method: 'fixed', bandwidth_m: 600 };
  const people = demo();
  const [, ri] = run(people, o);
  const counted = demo({ controls: false });
  counted.loadControls(text(csv), {});
  const [st, rc] = run(counted, o);
  assert.equal(st.n_controls, b.length);
  assert.equal(rc.total_controls, 3000, 'the count column is used: N0 is the total count');
  // Blocks of about 0.004° (under 450 m) against a 600 m bandwidth: the
  // intensity barely changes, so L_inhom stays within 3 % of the individuals'.
  for (let k = 1; k < ri.r.length; k++) {
    assert.ok(Math.abs(rc.observed[k] - ri.observed[k]) <= 0.03 * ri.observed[k], `r=${ri.r[k]}: ${rc.observed[k]} vs ${ri.observed[k]}`);
  }
  // The same rows with the count column left out: each block counts once,
  // which is a different population (empty blocks weigh as much as full ones).
  const flat = demo({ controls: false });
  flat.loadControls(text(csv), { mapping: { weight: '' } });
  const [, rf] = run(flat, o);
  assert.equal(rf.total_controls, b.length);
  const far = ri.r.findIndex((r) => r >= 500);
  assert.ok(Math.abs(rf.observed[far] - ri.observed[far]) > 2 * Math.abs(rc.observed[far] - ri.observed[far]),
    `unweighted ${rf.observed[far]}, weighted ${rc.observed[far]}, individuals ${ri.observed[far]}`);
});

test('intensity from the events: runs without a population file; the population is asked for otherwise', () => {
  const s = demo({ controls: false });
  assert.equal(throws(() => s.inhomKStart({})).code, 'no_controls');
  const [st, r] = run(s, { intensity_from: 'events', n_sim: 9, seed: 2, r_max_m: 1000, n_steps: 10 });
  assert.equal(st.n_controls, 0);
  assert.equal(r.intensity_from, 'events');
  assert.match(r.bandwidth_rule, /rule of thumb, normal reference, on the events/);
  assert.match(r.verdict, /^(Events cluster|Explained by|Events are further)/);
  assert.ok(r.caveats.some((c) => /cannot be told apart/.test(c)));
  assert.ok(r.inverse_intensity_ratio > 0.5 && r.inverse_intensity_ratio < 2, String(r.inverse_intensity_ratio));
});

test('bad options are refused in plain words and nothing running is lost', () => {
  const s = demo();
  assert.equal(throws(() => s.inhomKStep(1)).code, 'no_job');
  assert.equal(throws(() => s.inhomKFinish()).code, 'no_job');
  for (const [o, name] of [
    [{ correction: 'border' }, 'correction'],
    [{ bandwidth_method: 'fixed' }, 'bandwidth_m'],
    [{ bandwidth_method: 'likelihood_cv' }, 'bandwidth_method'],
    [{ intensity_from: 'controls' }, 'intensity_from'],
    [{ bandwidth_m: -5, bandwidth_method: 'fixed' }, 'bandwidth_m'],
    [{ n_sim: 0 }, 'n_sim'],
  ]) {
    const e = throws(() => s.inhomKStart(o));
    assert.ok(e.code === 'bad_parameter' || e.code === 'bad_options', `${JSON.stringify(o)}: ${e.code}`);
    assert.ok(e.message.includes(name), e.message);
  }
  // A run in progress survives nothing but its own finish or new data.
  const st = s.inhomKStart({ n_sim: 3, seed: 1, n_steps: 5 });
  assert.equal(s.inhomKStep(2), 2);
  assert.equal(s.inhomKStep(5), st.total);
  assert.equal(s.inhomKFinish().n_sim, 3);
});
