// The load report's intake fields on real-world exports: the text encoding,
// the date order (detected, ambiguous, given), values left out of rows that
// are kept, the share of rows not used, and the column names offered when
// no coordinate column is found. Invented data only. Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session } = require('../../dist/node/cloister.js');
const utf8 = (t) => new TextEncoder().encode(t);

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

test('a Windows-1252 file is decoded and the encoding is named', () => {
  const s = new Session();
  // "Länge" and "Käse" as Windows-1252 writes them (E4 = ä, CP1252.TXT).
  const head = [...utf8('Breite;L'), 0xe4, ...utf8('nge;Kategorie\n')];
  const row = [...utf8('48,1;11,5;K'), 0xe4, ...utf8('se\n48,2;11,6;Brot\n48,3;11,4;Brot\n')];
  const rep = s.loadEvents(new Uint8Array([...head, ...row]), {});
  assert.equal(rep.encoding, 'windows1252');
  assert.equal(rep.encoding_name, 'Windows-1252 (Western European)');
  assert.deepEqual(rep.categories, ['Käse', 'Brot']);
  assert.equal(rep.mapping.x, 'Länge');
  assert.equal(rep.coords.kind, 'lon_lat');
  assert.equal(s.loadEvents(utf8('x,y\n1,2\n3,4\n5,1\n'), {}).encoding, 'utf8');
});

test('the date order is detected, asked about, or taken as given', () => {
  const s = new Session();
  const csv = (dates) => utf8(`x,y,date\n${dates.map((d, i) => `${i},${(i * i * 3) % 7},${d}`).join('\n')}\n`);
  const mdy = s.loadEvents(csv(['03/04/2025', '04/23/2025', '05/01/2025']), {});
  assert.equal(mdy.date_order.used, 'month_day_year');
  assert.equal(mdy.date_order.source, 'detected');
  assert.equal(mdy.date_order_ambiguous, false);
  assert.match(mdy.date_order.text, /04\/23\/2025 on row 3 can only be month\/day\/year/);

  const amb = s.loadEvents(csv(['03/04/2025', '05/06/2025', '01/02/2025']), {});
  assert.equal(amb.date_order_ambiguous, true);
  assert.deepEqual(amb.date_order.example, {
    row: 2, value: '03/04/2025', day_month_year: '2025-04-03', month_day_year: '2025-03-04',
  });

  const given = s.loadEvents(csv(['03/04/2025', '05/06/2025', '01/02/2025']), { date_order: 'month_day_year' });
  assert.equal(given.date_order_ambiguous, false);
  assert.equal(given.date_order.source, 'given');
});

test('rows with a bad date or weight are kept and counted; many rows not used raise the banner flag', () => {
  const s = new Session();
  const rep = s.loadEvents(utf8('x,y,date,count\n0,0,2025-03-04,1\n9,0,,2\n0,9,2025-03-05,lots\n9,9,2025-03-06,1\n4,4,2025-03-07,1\n'), {});
  assert.equal(rep.accepted, 5);
  assert.equal(rep.rejected, 0);
  assert.equal(rep.incomplete_count, 2);
  assert.deepEqual(rep.incomplete.map((r) => [r.row, r.column, r.reason]), [[3, 'date', 'empty'], [4, 'count', 'bad_weight']]);
  assert.equal(rep.study.events_without_time, 1);
  assert.equal(rep.study.events_without_weight, 1);
  assert.equal(rep.many_rejected, false);

  // 2 of 6 rows not used (33 %) is above the 10 % threshold.
  const bad = s.loadEvents(utf8('x,y\n0,0\n9,0\n0,9\n9,9\nabc,1\n1,2,3\n'), {});
  assert.equal(bad.rejected, 2);
  assert.ok(Math.abs(bad.rejected_share - 2 / 6) < 1e-12);
  assert.equal(bad.many_rejected, true);
  assert.match(bad.many_rejected_text, /2 of 6 rows \(33 %\)/);
  assert.deepEqual(bad.by_reason.map((r) => r.reason), ['not_a_number', 'too_many_fields']);
});

test('no coordinate columns: the error carries the column names, decoded as the file was', () => {
  const s = new Session();
  const e = throws(() => s.loadEvents(new Uint8Array([...utf8('Ort;Stra'), 0xdf, ...utf8('e\na;b\n')]), {}));
  assert.equal(e.code, 'missing_columns');
  assert.deepEqual(e.columns, ['Ort', 'Straße']);
});

test('option errors are in plain words, without type names', () => {
  const s = new Session();
  const bad = [
    { coords: 'lon_lat' },
    { coords: { kind: 'planar' } },
    { coords: { kind: 'planar', unit: 'inch' } },
    { date_order: 'sideways' },
    { mapping: 'x' },
    { mapping: { x: 3 } },
    { delimiter: 'ab' },
  ];
  for (const o of bad) {
    const e = throws(() => s.loadEvents(utf8('x,y\n1,2\n'), o));
    assert.equal(e.code, 'bad_options', JSON.stringify(o));
    assert.doesNotMatch(e.message, /\b(CoordKind|LengthUnit|DateOrder|ColumnMapping|ReadOptions|enum|struct|char|String|Option)\b|`/, e.message);
  }
});
