// The space–time permutation scan (Kulldorff et al. 2005) through the JS
// API (dist/node: the same wasm core the page's worker runs): the job
// protocol on the demo (its planted outbreaks A, B, C of demo-data/README.md),
// permutations spread over a helper session equal to one run, the export
// without original coordinates, and what is refused.
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

function run(s, o, step = 7) {
  const st = s.spaceTimeScanStart(o);
  let done = 0;
  while (done < st.total) {
    const d = s.spaceTimeScanStep(step);
    assert.ok(d > done && d <= st.total, `${d} after ${done}`);
    done = d;
  }
  return [st, s.spaceTimeScanFinish()];
}

const truth = JSON.parse(readFileSync(new URL('demo-data/planted-truth.json', root), 'utf8'));

test('retrospective scan of the demo: the strongest clusters are the planted outbreaks, in their weeks', () => {
  const s = demo();
  const [st, r] = run(s, { max_share: 0.1, max_days: 30, n_sim: 39, seed: 8 });
  assert.equal(st.n_events, 1500);
  assert.equal(st.total, 39);
  assert.equal(r.n_sim, 39);
  assert.equal(r.first_date, '2025-01-01');
  assert.equal(r.last_date, '2025-12-31');
  const sig = r.clusters.filter((c) => c.p_value < 0.05);
  // Each planted outbreak (onset window from planted-truth.json) overlaps
  // a significant cluster's days by at least half; the cluster holds
  // mostly that outbreak's events (case ids from the truth file).
  const ids = readFileSync(new URL('demo-data/cases.csv', root), 'utf8').trim().split('\n').slice(1).map((l) => l.split(',')[0]);
  for (const c of truth.clusters) {
    const first = c.onset_window.first, last = c.onset_window.last;
    const planted = new Set(c.case_ids);
    const hit = sig.find((k) => k.start_date <= last && k.end_date >= first
      && k.events.filter((i) => planted.has(ids[i])).length > 0.5 * k.observed);
    assert.ok(hit, `cluster ${c.label} (${first} … ${last}) not found: ${JSON.stringify(r.clusters.map((k) => [k.start_date, k.end_date, k.observed, k.p_value]))}`);
  }
  assert.match(r.verdict, /unlikely to be chance/);
  assert.equal(r.recurrence_days, null);
  assert.ok(r.caveats.some((t) => /not a cause/.test(t)));
  assert.equal(r.null_maxima.length, 39);
});

test('prospective scan: only periods ending on the last day, with the recurrence interval', () => {
  const s = demo();
  const [, r] = run(s, { mode: 'prospective', n_sim: 19, seed: 2, repeat_days: 7 });
  assert.ok(r.clusters.length > 0);
  for (const c of r.clusters) {
    assert.equal(c.end_date, '2025-12-31');
    assert.ok(Math.abs(c.recurrence_days - 7 / c.p_value) < 1e-9);
  }
  assert.ok(Math.abs(r.recurrence_days - 7 / r.p_value) < 1e-9);
  assert.match(r.verdict, /repeated every 7 days, a signal this strong would arise by chance/);
  assert.ok(r.caveats.some((t) => /[Rr]eporting delays/.test(t)));
});

test('permutations computed in a helper session and added in order give the one-run result', () => {
  const o = { n_sim: 30, seed: 12, max_share: 0.2, max_days: 14 };
  const [, one] = run(demo(), o);
  const s = demo();
  s.spaceTimeScanStart(o);
  const share = s.spaceTimeScanShare();
  assert.doesNotMatch(share, /"x"|"y"|longitude|latitude/, 'no coordinates in the share');
  const h = new Session();
  h.spaceTimeScanHelperStart(share);
  s.spaceTimeScanStep(4);
  const a = h.spaceTimeScanSimulate(4, 17);
  const b = s.spaceTimeScanSimulate(17, 30);
  assert.equal(s.spaceTimeScanAdd(4, a), 17);
  assert.equal(throws(() => s.spaceTimeScanAdd(4, b)).code, 'bad_parameter');
  assert.equal(s.spaceTimeScanAdd(17, b), 30);
  const two = s.spaceTimeScanFinish();
  assert.deepEqual(two, one);
});

test('the export coarsens the centres: no event location in the file unless internal, then labelled', () => {
  const s = demo();
  run(s, { max_share: 0.1, n_sim: 9, seed: 1 });
  const rows = readFileSync(new URL('demo-data/cases.csv', root), 'utf8').trim().split('\n').slice(1).map((l) => l.split(','));
  for (const format of ['csv', 'geo_json']) {
    const f = s.spaceTimeScanExport({ format, created: '2026-01-01' });
    assert.equal(f.preview.contains_original_coordinates, false);
    assert.match(f.file_name, /^cloister-spacetime-clusters-2026-01-01\./);
    for (const [, lon, lat] of rows) {
      assert.ok(!(f.text.includes(lon) && f.text.includes(lat)), `event at ${lon}, ${lat} in the ${format} file`);
    }
    assert.doesNotMatch(f.text, /internal use only/);
  }
  const inside = s.spaceTimeScanExport({ internal: true, created: '2026-01-01' });
  assert.match(inside.text, /unmasked, internal use only/);
  assert.match(inside.file_name, /UNMASKED-internal-only/);
  assert.ok(rows.some(([, lon, lat]) => inside.text.includes(lon) && inside.text.includes(lat)), 'the exact centres are event locations');
  assert.equal(throws(() => s.spaceTimeScanExport({ round_m: 10 })).code, 'bad_parameter');
});

test('refused: unknown options, values out of range, events without dates; nothing loaded is lost', () => {
  const s = demo();
  assert.equal(throws(() => s.spaceTimeScanStart({ max_day: 3 })).code, 'bad_options');
  for (const bad of [{ max_share: 0.6 }, { max_days: 0 }, { n_sim: 0 }, { repeat_days: 0 }, { mode: 'sideways' }]) {
    const e = throws(() => s.spaceTimeScanStart(bad));
    assert.ok(['bad_parameter', 'bad_options'].includes(e.code), `${JSON.stringify(bad)}: ${e.code}`);
  }
  assert.equal(throws(() => s.spaceTimeScanStep(1)).code, 'no_job');
  assert.equal(throws(() => s.spaceTimeScanExport({})).code, 'no_result');
  assert.equal(s.summary().n_events, 1500);
  const n = new Session();
  n.loadEvents(text('x,y\n1,1\n5,5\n9,2\n'), {});
  const e = throws(() => n.spaceTimeScanStart({}));
  assert.match(e.message, /date/);
  assert.equal(n.summary().n_events, 3);
  const spec = parameterSpec('spaceTimeScanStart');
  const names = spec.fields.map((f) => f.name);
  for (const k of ['mode', 'max_share', 'max_radius_m', 'max_days', 'n_sim', 'seed', 'repeat_days', 'uncertain_times', 'max_window_days']) assert.ok(names.includes(k), k);
});
