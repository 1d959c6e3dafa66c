// Time windows at intake and the time line through the JS API (dist/node:
// the same wasm core the page's worker runs): from/to columns found, the
// curve's aoristic shares (Ratcliffe 2000: a window spreads evenly over its
// length), bins by day / Monday-start week / month, and what is refused.
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

// 2025-01-01 is day 20089 after 1970-01-01 (Python datetime, as in
// tests/reference/time_reference.json); 2025-01-06 (a Monday) is 20094.
const JAN_1 = 20089;
const MON_JAN_6 = 20094;

function windows() {
  const s = new Session();
  const r = s.loadEvents(file('demo-data/incidents-windows.csv'), {});
  return [s, r];
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

const sum = (a) => Array.from(a).reduce((x, y) => x + y, 0);

test('the demo incidents: from/to columns are found and 54 windows counted (demo-data/README.md)', () => {
  const [s, r] = windows();
  assert.equal(r.mapping.time, 'date_from');
  assert.equal(r.mapping.time_until, 'date_to');
  assert.equal(r.accepted, 160);
  const sm = s.summary();
  assert.equal(sm.time_span.n_windows, 54);
  // Windows of 1 to 4 whole days: the median is one of 1, 1.5, …, 4.
  assert.ok(sm.time_span.median_window_days >= 1 && sm.time_span.median_window_days <= 4);
  assert.equal(s.study().events_with_window, 54);
  const t = s.eventTimes();
  assert.ok(t.start instanceof Float64Array && t.end instanceof Float64Array);
  assert.equal(t.start.length, 160);
  let n = 0;
  for (let i = 0; i < 160; i++) if (Number.isFinite(t.end[i]) && t.end[i] > t.start[i]) n++;
  assert.equal(n, 54);
});

test('the time line: every event adds up to one, windows spread by overlap (checked against our own spreading here)', () => {
  const [s] = windows();
  const auto = s.timeline({});
  // Span 2025-01-07 to 2025-03-16 (68 days): up to 92 days, so one bar per day.
  assert.equal(auto.last_text, '2025-03-16');
  assert.equal(auto.whole.length, 69);
  assert.equal(auto.bin, 'day');
  assert.equal(auto.bin_automatic, true);
  assert.equal(auto.instants + auto.windows, 160);
  assert.equal(auto.windows, 54);
  assert.ok(Math.abs(sum(auto.whole) - 106) < 1e-9);
  assert.ok(Math.abs(sum(auto.window_share) - 54) < 1e-9);

  const week = s.timeline({ bin: 'week' });
  assert.equal(week.bin_automatic, false);
  assert.equal(week.edges[0], MON_JAN_6, 'weeks start on Monday');
  for (let k = 1; k < week.edges.length; k++) assert.equal(week.edges[k] - week.edges[k - 1], 7);
  assert.equal(week.labels[0], '2025-01-06');
  // Independent spreading of each window over the weekly bins by overlap.
  const t = s.eventTimes();
  const e = week.edges;
  const expectWhole = new Array(e.length - 1).fill(0);
  const expectShare = new Array(e.length - 1).fill(0);
  for (let i = 0; i < t.start.length; i++) {
    const a = t.start[i];
    const b = t.end[i];
    if (Number.isFinite(b) && b > a) {
      for (let k = 0; k + 1 < e.length; k++) {
        const part = Math.max(0, Math.min(b, e[k + 1]) - Math.max(a, e[k]));
        expectShare[k] += part / (b - a);
      }
    } else {
      const k = e.findIndex((x, j) => j + 1 < e.length && a >= x && a < e[j + 1]);
      expectWhole[k] += 1;
    }
  }
  assert.deepEqual(week.whole, expectWhole);
  week.window_share.forEach((v, k) => assert.ok(Math.abs(v - expectShare[k]) < 1e-9, `week ${k}: ${v} vs ${expectShare[k]}`));

  const month = s.timeline({ bin: 'month' });
  assert.equal(month.edges[0], JAN_1);
  assert.deepEqual(month.labels, ['2025-01-01', '2025-02-01', '2025-03-01']);
  assert.equal(month.edges[1] - month.edges[0], 31);
  assert.equal(month.edges[2] - month.edges[1], 28);
  // The planted burst (3 to 16 February) makes February the busiest month.
  const totals = month.whole.map((v, k) => v + month.window_share[k]);
  assert.ok(totals[1] > totals[0] && totals[1] > totals[2], totals.join(', '));
});

test('a reversed window is noted with row and column and its "to" is not used', () => {
  const s = new Session();
  const r = s.loadEvents(text('x,y,Datum von,Datum bis\n0,0,04.03.2025,07.03.2025\n10,0,07.03.2025,04.03.2025\n0,10,05.03.2025,\n'), {});
  assert.equal(r.mapping.time, 'Datum von');
  assert.equal(r.mapping.time_until, 'Datum bis');
  assert.equal(r.accepted, 3);
  const inc = r.incomplete.map((x) => [x.row, x.column, x.reason, x.value]);
  assert.deepEqual(inc, [[3, 'Datum bis', 'reversed_window', '04.03.2025']]);
  const tl = s.timeline({});
  assert.equal(tl.windows, 1);
  assert.equal(tl.instants, 2);
});

test('the time line refuses what it cannot do, in plain words', () => {
  const [s] = windows();
  let e = throws(() => s.timeline({ bin: 'year' }));
  assert.equal(e.code, 'bad_options');
  assert.match(e.message, /bin/);
  e = throws(() => s.timeline({ bins: 'week' }));
  assert.equal(e.code, 'bad_options');
  // Events without a time column.
  const p = new Session();
  p.loadEvents(text('x,y\n0,0\n1,1\n2,5\n'), {});
  e = throws(() => p.timeline({}));
  assert.equal(e.code, 'nothing_loaded');
  // Nothing loaded at all.
  e = throws(() => new Session().timeline({}));
  assert.ok(typeof e.message === 'string' && e.message.length > 0);
});
