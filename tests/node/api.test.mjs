// The JS API (dist/node, the same wasm core the page runs in its worker),
// driven as an analyst scripting Cloister would. Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session, version } = require('../../dist/node/cloister.js');
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));
const demoCheck = JSON.parse(readFileSync(new URL('tests/reference/demo_data_check.json', root)));
const truth = JSON.parse(readFileSync(new URL('demo-data/planted-truth.json', root)));

function dataRows(path) {
  return readFileSync(new URL(path, root), 'utf8').split(/\r?\n/).filter((l) => l.trim()).length - 1;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

test('version is the crate version', () => {
  const cargo = readFileSync(new URL('Cargo.toml', root), 'utf8');
  assert.equal(version(), /^version = "(.*)"/m.exec(cargo)[1]);
});

test('demo: every row accounted for, area matches the geodesic area from pyproj', () => {
  const s = new Session();
  const ev = s.loadEvents(file('demo-data/cases.csv'), {});
  assert.equal(ev.rows_read, dataRows('demo-data/cases.csv'));
  assert.equal(ev.accepted + ev.rejected, ev.rows_read);
  assert.equal(ev.coords.kind, 'lon_lat');
  assert.deepEqual(ev.mapping.x, 'longitude');
  assert.deepEqual(ev.mapping.time, 'onset_date');
  const st = s.loadArea(file('demo-data/town-boundary.geojson'), {});
  assert.equal(st.area_origin, 'file');
  // pyproj.Geod polygon area of the same ring (tests/reference/demo_data_check.py):
  // the transverse Mercator is conformal with scale ≈ 1 within 10 km of its centre,
  // so the planar area must agree to better than 1e-4 relative.
  const rel = Math.abs(st.area_km2 - demoCheck.geodesic_net_area_km2) / demoCheck.geodesic_net_area_km2;
  assert.ok(rel < 1e-4, `area ${st.area_km2} vs geodesic ${demoCheck.geodesic_net_area_km2}`);
  s.loadControls(file('demo-data/population.csv'), {});
  const sm = s.summary();
  assert.equal(sm.n_events, 1500);
  assert.equal(sm.n_controls, dataRows('demo-data/population.csv'));
  assert.ok(Math.abs(sm.intensity_per_km2 - 1500 / st.area_km2) < 1e-9);
  // five coincident pairs were planted (demo-data/README.md)
  assert.equal(sm.coincident.locations, truth.exactly_coincident_pairs);
  assert.ok(sm.time_span && sm.time_span.first.startsWith('2025-01'));
  const cats = Object.fromEntries(sm.categories.map((c) => [c.name, c.count]));
  assert.equal(cats.respiratory + cats.enteric, 1500);
  const m = s.mapLayers();
  assert.ok(m.events instanceof Float64Array);
  assert.equal(m.events.length, 3000);
  assert.equal(m.controls.length, 2 * sm.n_controls);
  assert.equal(m.area.length, 1);
  assert.equal(m.area[0].length, 2, 'outer ring and the lake');
  assert.ok(m.ellipse.length > 10);
});

test('projected copy of the demo gives the same events and nearly the same spread', () => {
  const a = new Session();
  a.loadEvents(file('demo-data/cases.csv'), {});
  const b = new Session();
  const rep = b.loadEvents(file('demo-data/cases-projected.csv'), { date_order: 'day_month_year' });
  assert.equal(rep.format.delimiter, ';');
  assert.equal(rep.format.decimal_comma, true);
  assert.equal(rep.coords.kind, 'planar');
  const sa = a.summary(), sb = b.summary();
  assert.equal(sb.n_events, sa.n_events);
  // The demo grid is a local equirectangular approximation, off by < 0.3 % (demo-data/README.md).
  assert.ok(Math.abs(sb.standard_distance_m / sa.standard_distance_m - 1) < 0.003);
  assert.equal(sb.time_span.first, sa.time_span.first);
  assert.equal(sb.time_span.last, sa.time_span.last);
});

test('problems file: the documented rows are rejected with their reasons', () => {
  const s = new Session();
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  const rep = s.loadEvents(file('demo-data/cases-with-problems.csv'), {});
  assert.equal(rep.rows_read, 40);
  assert.equal(rep.accepted + rep.rejected, 40);
  const page = s.rejections('events', 0, 100);
  assert.equal(page.total, rep.rejected);
  const got = page.rows.map((r) => [r.row, r.reason]);
  assert.deepEqual(got, [
    [4, 'empty'], [7, 'not_a_number'], [9, 'latitude_out_of_range'],
    [12, 'longitude_out_of_range'], [15, 'not_a_number'],
    [27, 'too_few_fields'],
    [34, 'outside_study_area'], [38, 'outside_study_area'],
  ]);
  // A spoiled date or count keeps the row as a point without that value.
  assert.deepEqual(rep.incomplete.map((r) => [r.row, r.column, r.reason]), [
    [18, 'onset_date', 'bad_time'], [21, 'onset_date', 'bad_time'],
    [24, 'onset_date', 'bad_time'], [30, 'count', 'bad_weight'],
  ]);
  assert.equal(rep.incomplete_count, 4);
  assert.equal(rep.study.events_without_time, 3);
  assert.equal(rep.study.events_without_weight, 1);
  assert.equal(page.rows[0].column, 'longitude');
  assert.equal(page.rows[1].column, 'latitude');
});

test('a bad file throws one clear error and keeps what was loaded', () => {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  const png = new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 13]);
  const e1 = throws(() => s.loadEvents(png, {}));
  assert.equal(e1.code, 'binary');
  assert.match(e1.message, /text/);
  const e2 = throws(() => s.loadEvents(new TextEncoder().encode('x,y\n"1,2\n3,4\n'), {}));
  assert.equal(e2.code, 'not_a_table');
  assert.equal(typeof e2.row, 'number');
  const e3 = throws(() => s.loadEvents(new TextEncoder().encode('name,colour\nx,red\n'), {}));
  assert.equal(e3.code, 'missing_columns');
  const e4 = throws(() => s.loadArea(new TextEncoder().encode('{"type":"Point","coordinates":[0,0]}'), {}));
  assert.match(e4.code, /bad_geojson|bad_polygon/);
  assert.equal(s.summary().n_events, 1500, 'previous events still loaded');
  const e5 = throws(() => s.loadEvents(file('demo-data/cases.csv'), { coords: { kind: 'nonsense' } }));
  assert.equal(e5.code, 'bad_options');
});

test('every row rejected: the error carries the rejection list', () => {
  const s = new Session();
  const e = throws(() => s.loadEvents(new TextEncoder().encode('lon,lat\nabc,1\n200,5\n'), {}));
  assert.equal(e.code, 'no_valid_rows');
  assert.equal(e.rows_read, 2);
  assert.deepEqual(e.rejections.map((r) => r.row), [2, 3]);
  assert.equal(s.study(), null);
});

test('column mapping and declared units change what is read', () => {
  const s = new Session();
  const csv = new TextEncoder().encode('a,b,when\n0,0,2025-01-01\n1000,0,2025-01-02\n0,1000,2025-01-03\n1000,1000,2025-01-04\n');
  const e = throws(() => s.loadEvents(csv, {}));
  assert.equal(e.code, 'missing_columns');
  const m = s.loadEvents(csv, { mapping: { x: 'a', y: 'b' }, coords: { kind: 'planar', unit: 'metre' } });
  assert.equal(m.accepted, 4);
  s.setAreaFallback('bounding_box');
  assert.ok(Math.abs(s.study().area_km2 - 1.0) < 1e-12);
  s.loadEvents(csv, { mapping: { x: 'a', y: 'b' }, coords: { kind: 'planar', unit: 'foot' } });
  assert.ok(Math.abs(s.study().area_km2 - 0.3048 ** 2) < 1e-12);
  const bad = throws(() => s.setAreaFallback('circle'));
  assert.equal(bad.code, 'bad_options');
});

test('events that all lie outside the loaded study area: their own error, and nothing lost', () => {
  const s = new Session();
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadEvents(file('demo-data/cases.csv'), {});
  // The same events moved two degrees east: readable, all outside the area.
  const text = new TextDecoder().decode(file('demo-data/cases.csv'));
  const lines = text.trim().split(/\r?\n/);
  const head = lines[0].split(',');
  const lon = head.findIndex((h) => /lon/i.test(h));
  assert.ok(lon >= 0, 'the demo has a longitude column');
  const moved = [lines[0], ...lines.slice(1).map((l) => {
    const f = l.split(',');
    f[lon] = String(Number(f[lon]) + 2);
    return f.join(',');
  })].join('\n');
  const e = throws(() => s.loadEvents(new TextEncoder().encode(moved), {}));
  assert.equal(e.code, 'outside_study_area');
  assert.match(e.message, /all 1500 readable events .* lie outside the study area/);
  assert.match(e.message, /Remove that study area/);
  assert.equal(s.summary().n_events, 1500, 'the previous events are still loaded');
  // Without the area the same file loads.
  s.clearArea();
  assert.equal(s.loadEvents(new TextEncoder().encode(moved), {}).accepted, 1500);
});

test('clearAll forgets the events, the study area, the controls and kept results', () => {
  const s = new Session();
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadControls(file('demo-data/population.csv'), {});
  s.maskDonut({ r_min_m: 50, r_max_m: 200, seed: 1 });
  assert.notEqual(s.maskResult(), null);
  s.clearAll();
  assert.equal(s.study(), null);
  assert.throws(() => s.summary(), (e) => e.code === 'nothing_loaded');
  // Events elsewhere now load with the hull as their area (no old boundary in the way).
  const r = s.loadEvents(new TextEncoder().encode('x,y\n500000,200000\n500100,200050\n500040,200120\n'), { coords: { kind: 'planar', unit: 'metre' } });
  assert.equal(r.accepted, 3);
});

test('loadEventsAfresh replaces everything only when the file reads', () => {
  const s = new Session();
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadControls(file('demo-data/population.csv'), {});
  // A bad file: nothing changes.
  assert.throws(() => s.loadEventsAfresh(new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0, 0, 1, 2]), {}), (e) => e.code === 'binary');
  assert.equal(s.summary().n_events, 1500);
  assert.ok(s.study().controls > 0, 'the population is still loaded');
  assert.equal(s.study().area_origin, 'file');
  // A planar file that would not fit the lon/lat boundary: read alone, without it.
  const r = s.loadEventsAfresh(new TextEncoder().encode('x,y\n500000,200000\n500100,200050\n500040,200120\n'), { coords: { kind: 'planar', unit: 'metre' } });
  assert.equal(r.accepted, 3);
  assert.equal(s.study().area_origin, 'convex_hull');
  assert.equal(s.study().controls, null);
});
