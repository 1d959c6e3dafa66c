// The near-repeat table and the Knox test through the JS API (dist/node: the
// same wasm core the page's worker runs): the job protocol, a run split over
// helper sessions equals the one-session run, the demo's planted pairs, the
// CSV and the share hold no location, and what is refused.
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

function projected() {
  const s = new Session();
  s.loadEvents(file('demo-data/cases-projected.csv'), {});
  return s;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

function run(s, m, o, step = 13) {
  const st = s[`${m}Start`](o);
  let done = 0;
  while (done < st.total) {
    const d = s[`${m}Step`](step);
    assert.ok(d > done && d <= st.total, `${d} after ${done}`);
    done = d;
  }
  return [st, s[`${m}Finish`]()];
}

test('Knox on the demo grid: the 323 pairs within 100 m and 7 days of demo-data/README.md, far above chance', () => {
  const s = projected();
  const [st, r] = run(s, 'knox', { distance_m: 100, days: 7, n_perm: 99, seed: 1 });
  assert.equal(st.total, 99);
  assert.equal(r.x, 323);
  assert.equal(r.n_events, 1500);
  assert.equal(r.n_pairs, 1500 * 1499 / 2);
  // E = n_s·n_t/N (Knox 1964).
  assert.ok(Math.abs(r.expected - r.n_s * r.n_t / r.n_pairs) < 1e-9 * r.expected);
  assert.ok(r.ratio > 2, String(r.ratio));
  assert.equal(r.p_value, 0.01);
  assert.ok(r.p_poisson < 1e-6);
  assert.match(r.verdict, /^More pairs of events are within 100 m and 7 days/);
  assert.match(r.time_use.statement, /^1500 events with a time used/);
});

test('near-repeat table on the demo: cells near the origin raised, a sentence saying how far and how long', () => {
  const s = projected();
  const [st, r] = run(s, 'nearRepeat', { band_m: 100, max_distance_m: 400, band_days: 7, max_days: 28, n_perm: 99, seed: 2 });
  assert.equal(st.cells, 5 * 4);
  assert.equal(r.cells.length, 20);
  assert.equal(r.space_bands[0].label, 'same location');
  assert.equal(r.outcome, 'raised');
  assert.match(r.verdict, /^After an event, the risk of another within \d+ m stays raised for about \d+ days/);
  // Every cell: the exact expectation from the margins, p and q in range.
  const N = r.n_pairs;
  for (const c of r.cells) {
    const e = r.space_bands[c.space].pairs * r.time_bands[c.time].pairs / N;
    assert.ok(Math.abs(c.expected - e) <= 1e-9 * Math.max(1, e));
    assert.ok(c.p_value > 0 && c.p_value <= 1 && c.q_value >= c.p_value - 1e-12 && c.q_value <= 1);
    assert.equal(c.raised, c.q_value <= 0.05 && c.observed > c.expected);
  }
  // The time margins are over all pairs: they add up to the pairs within 28 days.
  assert.ok(r.time_bands.reduce((a, b) => a + b.pairs, 0) <= N);
});

test('a run split over helper sessions equals the one-session run, for both tests', () => {
  for (const [m, o] of [['nearRepeat', { band_m: 150, max_distance_m: 450, band_days: 10, max_days: 30, n_perm: 60, seed: 77 }], ['knox', { distance_m: 200, days: 10, n_perm: 60, seed: 77 }]]) {
    const [, one] = run(projected(), m, o, 60);
    const s = projected();
    const st = s[`${m}Start`](o);
    const share = s[`${m}Share`]();
    const helpers = [new Session(), new Session()];
    helpers.forEach((h) => h[`${m}HelperStart`](share));
    let done = 0;
    let i = 0;
    while (done < st.total) {
      const to = Math.min(st.total, done + 17);
      const piece = helpers[i++ % 2][`${m}Simulate`](done, to);
      assert.equal(piece[0], to - done);
      done = s[`${m}Add`](done, piece);
      assert.equal(done, to);
    }
    helpers.forEach((h) => h.free());
    const split = s[`${m}Finish`]();
    assert.deepEqual(split, one, m);
  }
});

test('the share and the CSV hold no location', () => {
  const s = projected();
  const coords = new Set();
  const csv = new TextDecoder().decode(file('demo-data/cases-projected.csv')).split(/\r?\n/).slice(1).filter(Boolean);
  for (const line of csv) {
    const f = line.split(';');
    coords.add(f[1].replace(',', '.'));
    coords.add(f[2].replace(',', '.'));
  }
  s.nearRepeatStart({ n_perm: 9, seed: 1 });
  const share = JSON.parse(s.nearRepeatShare());
  const walk = (v, path) => {
    if (typeof v === 'number') assert.ok(!coords.has(String(v)), `${path} = ${v} is a coordinate`);
    else if (Array.isArray(v)) v.forEach((x, i) => walk(x, `${path}[${i}]`));
    else if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) { assert.ok(!['x', 'y'].includes(k), `share has ${k}`); walk(x, `${path}.${k}`); }
  };
  walk(share, 'share');
  s.nearRepeatStep(9);
  const r = s.nearRepeatFinish();
  const out = s.nearRepeatCsv();
  const lines = out.trim().split('\n');
  assert.equal(lines[0], 'distance_band,time_band,distance_from_m,distance_to_m,days_from,days_to,observed,expected,simulated_mean,ratio,p_value,q_value,raised');
  assert.equal(lines.length, 1 + r.cells.length);
  for (const line of lines.slice(1)) {
    const f = line.split(',');
    assert.equal(f.length, 13, line);
    for (const v of f) assert.ok(!coords.has(v), `CSV holds ${v}, a coordinate`);
  }
  // Row for cell 0 matches the result.
  assert.match(lines[1], new RegExp(`^"same location","0\u20137 days",0,0,0,7,${r.cells[0].observed},`));
});

test('refused: events without dates, unknown options, too many cells, CSV before a table, steps without a run', () => {
  const s = new Session();
  s.loadEvents(text('x,y\n0,0\n10,0\n20,0\n30,5\n'), {});
  const e = throws(() => s.nearRepeatStart({ n_perm: 9, band_m: 5, max_distance_m: 20 }));
  assert.match(e.message, /time column|dates/);
  const p = projected();
  assert.equal(throws(() => p.knoxStart({ distance: 5 })).code, 'bad_options');
  const big = throws(() => p.nearRepeatStart({ band_m: 10, max_distance_m: 400, band_days: 1, max_days: 40 }));
  assert.equal(big.code, 'bad_parameter');
  assert.match(big.message, /cells/);
  assert.equal(throws(() => p.nearRepeatCsv()).code, 'no_result');
  assert.equal(throws(() => p.knoxStep(5)).code, 'no_job');
  // A refused start keeps what was loaded.
  assert.equal(p.summary().n_events, 1500);
});
