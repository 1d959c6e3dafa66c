// (2) a user's CSV replaces the demo; (3) a file with problems shows its
// rejected rows; (4) a binary or empty file gives one clear error and keeps the data.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { launch, openPage, loadDemo, act, frame, summaryNumber, qualityCounts, rejectionRows, canvasCensus, palette, demoFacts, FIXTURES } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

async function chooseEventsFile(page, file) {
  await act(page, () => page.setInputFiles('#events-file', file));
}

test('a user CSV replaces the demo, and changing a column choice re-reads it', async () => {
  const facts = demoFacts();
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  assert.equal(await summaryNumber(page, 'n_events'), facts.cases.in_area);

  // Back to a window drawn around the events, so all 9 user points count.
  await act(page, () => page.check('#area-mode-hull'));
  await act(page, () => page.click('#controls-clear'));

  await chooseEventsFile(page, join(FIXTURES, 'user-points.csv'));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await summaryNumber(page, 'n_events'), 9);
  assert.match(await page.textContent('#events-name'), /user-points\.csv/);
  const q = await qualityCounts(page, 'events');
  assert.deepEqual(q, { read: 9, used: 9, rejected: 0 });

  // The mapping editor shows the detected roles over the file's columns.
  assert.equal(await page.inputValue('#map-x'), 'x');
  assert.equal(await page.inputValue('#map-y'), 'y');
  assert.equal(await page.inputValue('#map-category'), 'category');
  assert.equal(await page.inputValue('#map-coords'), 'metre');
  const cats = await page.$$eval('#categories tbody tr', (trs) => trs.map((tr) => [tr.cells[0].textContent, tr.cells[1].textContent]));
  assert.deepEqual(cats.sort(), [['north yard', '3'], ['river path', '3'], ['south yard', '3']]);

  // Category off: the file is read again without categories.
  await act(page, () => page.selectOption('#map-category', ''));
  assert.equal(await page.isHidden('#categories'), true, 'no category table');
  assert.match(await page.textContent('#legend'), /Events/);
  const pal = await palette(page);
  const census = await canvasCensus(page, [pal.single, pal.categories[1]]);
  assert.ok(census.counts[0] > 0, 'events in the single colour');
  assert.equal(census.counts[1], 0, 'no second category colour');

  // Feet instead of metres: the study area grows by 0.3048² per square unit.
  const areaM = await summaryNumber(page, 'area_km2');
  await act(page, () => page.selectOption('#map-coords', 'foot'));
  const areaFt = await summaryNumber(page, 'area_km2');
  assert.ok(Math.abs(areaFt / areaM - 0.3048 ** 2) < 0.01 * 0.3048 ** 2, `area ${areaM} → ${areaFt}`);
  assert.deepEqual(log.pageErrors, []);
});

test('the file with problems lists its rejected rows, and rows read = used + not used', async () => {
  const facts = demoFacts();
  const { page, log } = await openPage(browser);
  await act(page, () => page.click('#problems-button'));
  assert.match(await page.textContent('#status'), /file with problems/);
  const q = await qualityCounts(page, 'events');
  assert.equal(q.read, q.used + q.rejected);
  assert.equal(q.read, facts.problems.rows);
  assert.equal(q.rejected, facts.problems.rejected.length);
  assert.equal(await summaryNumber(page, 'n_events'), q.used);

  // The table lists the documented rows: row number, column (a single named
  // column, else none) and value as the demo README gives them; rows found
  // only against the study area say so.
  const rows = await rejectionRows(page);
  const expected = [...facts.problems.rejected].sort((a, b) => a.row - b.row);
  const shown = [...rows].sort((a, b) => Number(a[0]) - Number(b[0]));
  assert.deepEqual(shown.map((r) => Number(r[0].replace(/,/g, ''))), expected.map((e) => e.row));
  for (let i = 0; i < expected.length; i++) {
    const e = expected[i];
    const [, column, reason, value] = shown[i];
    const single = /^[a-z_]+$/.test(e.column) ? e.column : '—';
    assert.equal(column, single, `column of row ${e.row}`);
    // Rows outside the study area name their numbers (longitude first).
    const want = e.stage === 'study area' ? `lon ${e.value.split(', ')[0]}, lat ${e.value.split(', ')[1]}` : e.value;
    if (e.column !== '(row)') assert.equal(value, e.value === '' ? '(empty)' : want, `value of row ${e.row}`);
    assert.equal(/outside the study area/.test(reason), e.stage === 'study area', `reason of row ${e.row}: ${reason}`);
  }
  const range = await page.textContent('#rej-range');
  assert.match(range, new RegExp(`of ${facts.problems.rejected.length}$`));
  assert.deepEqual(log.pageErrors, []);
});

test('a binary file and an empty file each give one clear error and keep the loaded data', async () => {
  const facts = demoFacts();
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  const pal = await palette(page);
  const drawn = await canvasCensus(page, [pal.areaFill]);
  const n = await summaryNumber(page, 'n_events');
  assert.equal(n, facts.cases.in_area);

  const binary = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 0x0d, 0x49, 0x48, 0x44, 0x52, 0, 1, 2, 3, 0xff, 0xfe]);
  await chooseEventsFile(page, { name: 'photo.csv', mimeType: 'text/csv', buffer: binary });
  assert.equal(await page.isVisible('#error-banner'), true);
  assert.equal(await page.locator('[role=alert]:visible').count(), 1, 'exactly one error shown');
  const msg = await page.textContent('#error-text');
  assert.match(msg, /photo\.csv/);
  assert.match(msg, /text file/i);
  assert.equal(await summaryNumber(page, 'n_events'), n, 'previous events kept');
  assert.match(await page.textContent('#events-name'), /cases\.csv/);
  const still = await canvasCensus(page, [pal.areaFill]);
  assert.equal(still.counts[0], drawn.counts[0], 'map unchanged');

  await chooseEventsFile(page, { name: 'nothing.csv', mimeType: 'text/csv', buffer: Buffer.alloc(0) });
  assert.equal(await page.locator('[role=alert]:visible').count(), 1, 'exactly one error shown');
  const msg2 = await page.textContent('#error-text');
  assert.match(msg2, /nothing\.csv/);
  assert.match(msg2, /empty/i);
  assert.equal(await summaryNumber(page, 'n_events'), n, 'previous events kept');
  assert.deepEqual(log.pageErrors, []);
});
