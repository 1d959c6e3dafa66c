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

// ---------- date shifting in the point exports ----------

const dayOf = (text) => Math.round(Date.parse(`${text}T00:00:00Z`) / 86400000);

test('exported dates are shifted per event within ±N, both ends together, reproducibly', () => {
  const [s] = windows();
  const t = s.eventTimes();
  const opts = { format: 'csv', coordinates: 'metres', confirm_unmasked: true, created: '2030-01-01', date_shift_days: 7, date_seed: 11 };
  const f = s.exportFile('unmasked_points', opts);
  const lines = f.text.split('\n');
  assert.match(lines[0], /^x_m,y_m,date,date_to,about_this_file$/);
  let moved = 0;
  const shifts = new Set();
  for (let i = 0; i < 160; i++) {
    const c = lines[i + 1].split(',');
    const shift = dayOf(c[2]) - t.start[i];
    assert.ok(Number.isInteger(shift) && Math.abs(shift) <= 7, `row ${i}: shift ${shift}`);
    shifts.add(shift);
    if (shift !== 0) moved++;
    if (Number.isFinite(t.end[i]) && t.end[i] > t.start[i]) {
      assert.equal(dayOf(c[3]) - t.end[i], shift, `row ${i}: both ends by the same days`);
    } else {
      assert.equal(c[3], '');
    }
  }
  assert.ok(moved > 120, `most dates moved: ${moved}`);
  assert.ok(shifts.size >= 10, `many different shifts: ${[...shifts]}`);
  assert.match(f.text, /dates shifted: each event's date was moved by a random whole number of days from -7 to \+7/);
  assert.match(f.text, /Dates are shifted by up to 7 days each way/);
  assert.equal(s.exportFile('unmasked_points', opts).text, f.text, 'same seed, same file');
  assert.notEqual(s.exportFile('unmasked_points', { ...opts, date_seed: 12 }).text, f.text);
  // Without the option: no dates, as before.
  const plain = s.exportFile('unmasked_points', { format: 'csv', coordinates: 'metres', confirm_unmasked: true, created: '2030-01-01' });
  assert.match(plain.text.split('\n')[0], /^x_m,y_m,about_this_file$/);
  assert.doesNotMatch(plain.text, /2025-/);
});

test('masked points carry shifted dates; tables, the report and half-given options are refused', () => {
  const [s] = windows();
  s.maskDonut({ r_min_m: 50, r_max_m: 200, seed: 3 });
  const opts = { format: 'geo_json', created: '2030-01-01', date_shift_days: 3, date_seed: 5 };
  const gj = JSON.parse(s.exportFile('masked_points', opts).text);
  assert.match(gj.metadata.dates, /from -3 to \+3/);
  const days = gj.features.map((f) => dayOf(f.properties.date));
  assert.ok(days.every(Number.isFinite));
  // Each window keeps its length (1 to 4 days, demo-data/README.md).
  const lengths = gj.features.filter((f) => f.properties.date_to !== null).map((f) => dayOf(f.properties.date_to) - dayOf(f.properties.date));
  assert.equal(lengths.length, 54);
  assert.ok(lengths.every((d) => d >= 1 && d <= 4), lengths.join(','));
  const p = s.exportPreview('masked_points', { format: 'csv', date_shift_days: 3, date_seed: 5 });
  assert.deepEqual(p.fields.slice(0, 4), ['x_m', 'y_m', 'date', 'date_to']);
  assert.ok(p.metadata_keys.includes('dates'));

  let e = throws(() => s.exportFile('masked_points', { date_shift_days: 3 }));
  assert.equal(e.code, 'bad_options');
  assert.match(e.message, /date_seed/);
  e = throws(() => s.exportFile('masked_points', { date_seed: 3 }));
  assert.equal(e.code, 'bad_options');
  e = throws(() => s.exportFile('masked_points', { date_shift_days: 0, date_seed: 1 }));
  assert.equal(e.code, 'bad_parameter');
  e = throws(() => s.exportFile('masked_points', { date_shift_days: 400, date_seed: 1 }));
  assert.equal(e.code, 'bad_parameter');
  assert.match(e.message, /date_shift_days/);
  s.aggregate({ layout: 'square', cell_size_m: 2000 });
  e = throws(() => s.exportFile('aggregates', { date_shift_days: 3, date_seed: 1 }));
  assert.match(e.message, /only beside points/);
  e = throws(() => s.exportFile('report', { date_shift_days: 3, date_seed: 1, report_holds: 'counts' }));
  assert.match(e.message, /report holds no event dates/);
  // Events without dates cannot have them shifted.
  const p2 = new Session();
  p2.loadEvents(text('x,y\n0,0\n100,100\n50,20\n'), {});
  e = throws(() => p2.exportFile('unmasked_points', { coordinates: 'metres', confirm_unmasked: true, date_shift_days: 3, date_seed: 1 }));
  assert.equal(e.code, 'nothing_loaded');
});
