// Drag and drop, many points, a file whose coordinate columns must be chosen
// by hand, and recovery after the engine (wasm instance) dies.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { launch, openPage, loadDemo, act, settle, summaryNumber, qualityCounts, canvasCensus, palette, demoFacts } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('a file dropped on the events box is read', async () => {
  const { page, log } = await openPage(browser);
  await act(page, () => page.evaluate(() => {
    const text = 'x,y\n0,0\n100,0\n0,100\n100,100\n50,50\n';
    const dt = new DataTransfer();
    dt.items.add(new File([text], 'dropped.csv', { type: 'text/csv' }));
    const zone = document.getElementById('events-drop');
    zone.dispatchEvent(new DragEvent('dragover', { dataTransfer: dt, bubbles: true, cancelable: true }));
    zone.dispatchEvent(new DragEvent('drop', { dataTransfer: dt, bubbles: true, cancelable: true }));
  }));
  assert.equal(await summaryNumber(page, 'n_events'), 5);
  assert.match(await page.textContent('#events-name'), /dropped\.csv/);
  assert.deepEqual(log.pageErrors, []);
});

test('200,000 events load and are drawn', async () => {
  const { page, log } = await openPage(browser);
  // A seeded linear congruential generator makes the same file every run.
  let s = 12345;
  const rnd = () => { s = (Math.imul(s, 1103515245) + 12345) >>> 0; return s / 2 ** 32; };
  const lines = ['x,y'];
  for (let i = 0; i < 200000; i++) lines.push(`${(rnd() * 20000).toFixed(1)},${(rnd() * 10000).toFixed(1)}`);
  await act(page, () => page.setInputFiles('#events-file', { name: 'many.csv', mimeType: 'text/csv', buffer: Buffer.from(lines.join('\n')) }));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await summaryNumber(page, 'n_events'), 200000);
  // 200,000 uniform points: the map is shaded by how many events each dot
  // square holds, not one solid area of the event colour (which it was).
  const pal = await palette(page);
  const census = await canvasCensus(page, [pal.single]);
  assert.ok(census.notBackground > census.total * 0.2, `drawn pixels ${census.notBackground} of ${census.total}`);
  assert.ok(census.counts[0] < census.notBackground * 0.5, `solid event colour on ${census.counts[0]} of ${census.notBackground} drawn pixels`);
  const shades = await page.evaluate(() => {
    const c = document.getElementById('map');
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    const seen = new Set();
    for (let i = 0; i < d.length; i += 4) seen.add((d[i] << 16) | (d[i + 1] << 8) | d[i + 2]);
    return seen.size;
  });
  assert.ok(shades > 8, `only ${shades} colours on the map`);
  assert.match(await page.textContent('#legend'), /a paler square holds one event/);
  assert.deepEqual(log.pageErrors, []);
});

test('when the coordinate columns are not found, choosing them reads the file', async () => {
  const { page } = await openPage(browser);
  // Column names no detector could guess.
  const csv = 'site,first_ft,second_ft,kind,date\na,1000,2000,p,2025-03-01\nb,1500,2100,q,2025-03-04\nc,1200,2600,p,2025-03-09\nd,1900,2300,q,2025-03-11\n';
  await act(page, () => page.setInputFiles('#events-file', { name: 'odd-names.csv', mimeType: 'text/csv', buffer: Buffer.from(csv) }));
  // Not a red error but a question: the editor offers the header's names,
  // and the status line says what is missing.
  assert.equal(await page.isVisible('#error-banner'), false);
  assert.match(await page.textContent('#status'), /Choose the coordinate columns of odd-names\.csv below/);
  assert.match(await page.textContent('#mapping-hint'), /choose the x and y columns/);
  const options = await page.$$eval('#map-x option', (os) => os.map((o) => o.value));
  assert.deepEqual(options, ['', 'site', 'first_ft', 'second_ft', 'kind', 'date']);
  // The other roles wait to be found by their names, unless chosen.
  assert.equal(await page.$eval('#map-time', (s) => s.selectedOptions[0].textContent), '(found by its name)');
  await act(page, () => page.selectOption('#map-coords', 'foot'));
  await act(page, () => page.selectOption('#map-x', 'first_ft'));
  await act(page, () => page.selectOption('#map-y', 'second_ft'));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await summaryNumber(page, 'n_events'), 4);
  assert.equal(await page.inputValue('#map-x'), 'first_ft');
  assert.equal(await page.inputValue('#map-y'), 'second_ft');
  assert.equal(await page.inputValue('#map-coords'), 'foot');
  // Choosing the coordinates by hand did not turn off the date found by its name.
  assert.equal(await page.inputValue('#map-time'), 'date');
});

test('after the engine dies, a new one is started and the kept files are read again', async () => {
  const facts = demoFacts();
  const { page } = await openPage(browser);
  await loadDemo(page);
  const before = await qualityCounts(page, 'events');
  const workers = page.workers();
  assert.equal(workers.length, 1);
  // Make the engine trap the way a Rust panic does (WebAssembly.RuntimeError).
  await workers[0].evaluate(() => {
    wasm_bindgen.Session.prototype.study = () => { throw new WebAssembly.RuntimeError('unreachable'); };
  });
  await page.check('#area-mode-box');
  await page.waitForFunction(() => /restarted/.test(document.getElementById('status').textContent), null, { timeout: 60000 });
  await settle(page);
  assert.match(await page.textContent('#error-text'), /stopped unexpectedly and was restarted/);
  // The old worker is gone and a fresh one holds the demo again, with the
  // rectangle study area the user had just chosen.
  assert.equal(page.workers().length, 1);
  assert.equal(await summaryNumber(page, 'n_events'), facts.cases.in_area);
  assert.deepEqual(await qualityCounts(page, 'events'), before);
  assert.equal(await page.isChecked('#area-mode-box'), true);
  assert.match(await page.textContent('#summary dd[data-key="area_km2"]'), /rectangle/);
  const pal = await palette(page);
  const census = await canvasCensus(page, [pal.areaFill]);
  assert.ok(census.counts[0] > 0, 'map drawn again');
  // And the new engine works: the kept boundary file can be used again.
  await act(page, () => page.check('#area-mode-file'));
  const area = await summaryNumber(page, 'area_km2');
  assert.ok(Math.abs(area - facts.area_km2) < 0.01 * facts.area_km2, `study area ${area} km²`);
});

test('changing the events to feet reads the boundary and controls in feet too', async () => {
  const { page } = await openPage(browser);
  // A 1000 × 1000 square boundary in grid units and points inside it.
  const square = { type: 'Polygon', coordinates: [[[0, 0], [1000, 0], [1000, 1000], [0, 1000], [0, 0]]] };
  await act(page, () => page.setInputFiles('#area-file', { name: 'square.geojson', mimeType: 'application/geo+json', buffer: Buffer.from(JSON.stringify(square)) }));
  await act(page, () => page.setInputFiles('#events-file', { name: 'grid.csv', mimeType: 'text/csv', buffer: Buffer.from('x,y\n100,100\n200,500\n900,900\n500,300\n') }));
  await act(page, () => page.setInputFiles('#controls-file', { name: 'grid-controls.csv', mimeType: 'text/csv', buffer: Buffer.from('x,y\n150,150\n250,550\n850,850\n') }));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await summaryNumber(page, 'area_km2'), 1);
  await act(page, () => page.selectOption('#map-coords', 'foot'));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await page.isChecked('#area-mode-file'), true);
  const area = await summaryNumber(page, 'area_km2');
  assert.ok(Math.abs(area - 0.3048 ** 2) < 1e-3, `square of 1000 ft = ${0.3048 ** 2} km², shown ${area}`);
  assert.equal(await summaryNumber(page, 'n_events'), 4);
  assert.equal(await summaryNumber(page, 'n_controls'), 3);
});

test('a file where no row can be used names its bad rows, with row and column, and keeps the data', async () => {
  const { page } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', { name: 'good.csv', mimeType: 'text/csv', buffer: Buffer.from('x,y\n1,1\n5,2\n3,7\n') }));
  assert.equal(await summaryNumber(page, 'n_events'), 3);
  await act(page, () => page.setInputFiles('#events-file', { name: 'bad.csv', mimeType: 'text/csv', buffer: Buffer.from('x,y\nabc,1\n2,\n') }));
  assert.match(await page.textContent('#error-text'), /bad\.csv/);
  const items = await page.$$eval('#error-rows li', (lis) => lis.map((li) => li.textContent));
  assert.deepEqual(items.length, 2);
  assert.match(items[0], /^row 2, column "x": .*"abc"/);
  assert.match(items[1], /^row 3, column "y": .*empty/);
  assert.equal(await summaryNumber(page, 'n_events'), 3, 'the good file stays loaded');
  assert.match(await page.textContent('#events-name'), /good\.csv/);
});

test('the table of rows not used pages through 50 at a time', async () => {
  const { page } = await openPage(browser);
  const lines = ['x,y'];
  for (let i = 0; i < 130; i++) lines.push(i % 13 === 0 ? `${i},${i % 7}` : `bad${i},${i}`); // 10 good rows, 120 bad
  await act(page, () => page.setInputFiles('#events-file', { name: 'mostly-bad.csv', mimeType: 'text/csv', buffer: Buffer.from(lines.join('\n')) }));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.deepEqual(await qualityCounts(page, 'events'), { read: 130, used: 10, rejected: 120 });
  const firstRows = async () => page.$$eval('#rej-body tr', (trs) => trs.map((tr) => Number(tr.cells[0].textContent.replace(/,/g, ''))));
  let rows = await firstRows();
  assert.equal(rows.length, 50);
  assert.equal(rows[0], 3); // data row i = 1 is spreadsheet row 3
  assert.equal(await page.textContent('#rej-range'), '1–50 of 120');
  assert.equal(await page.isDisabled('#rej-prev'), true);
  await act(page, () => page.click('#rej-next'));
  assert.equal(await page.textContent('#rej-range'), '51–100 of 120');
  await act(page, () => page.click('#rej-next'));
  assert.equal(await page.textContent('#rej-range'), '101–120 of 120');
  rows = await firstRows();
  assert.equal(rows.length, 20);
  assert.equal(rows[rows.length - 1], 131);
  assert.equal(await page.isDisabled('#rej-next'), true);
  await act(page, () => page.click('#rej-prev'));
  assert.equal(await page.textContent('#rej-range'), '51–100 of 120');
});

test('a slow engine step shows the progress bar, which goes away afterwards', async () => {
  const { page } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', { name: 'small.csv', mimeType: 'text/csv', buffer: Buffer.from('x,y\n1,1\n5,2\n3,7\n') }));
  assert.equal(await page.isHidden('#progress'), true, 'no bar for quick steps');
  // Make one step take 2 s inside the worker.
  await page.workers()[0].evaluate(() => {
    const original = wasm_bindgen.Session.prototype.summary;
    wasm_bindgen.Session.prototype.summary = function (...args) {
      const until = Date.now() + 2000;
      while (Date.now() < until) { /* busy */ }
      return original.apply(this, args);
    };
  });
  const done = act(page, () => page.check('#area-mode-box'));
  await page.waitForSelector('#progress:not([hidden])', { timeout: 10000 });
  await done;
  assert.equal(await page.isHidden('#progress'), true, 'bar hidden when the step is over');
  assert.match(await page.textContent('#summary dd[data-key="area_km2"]'), /rectangle/);
});

test('the column editor also serves the controls file', async () => {
  const { page } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', { name: 'ev.csv', mimeType: 'text/csv', buffer: Buffer.from('x,y\n1,1\n5,2\n3,7\n8,8\n') }));
  assert.equal(await page.isHidden('#map-layer'), true, 'no file choice with only events');
  const ctl = 'place,p_east,p_north,when\nq,2,2,not-a-date\nr,5,4,2025-01-02\ns,4,6,2025-01-03\n';
  await act(page, () => page.setInputFiles('#controls-file', { name: 'odd-controls.csv', mimeType: 'text/csv', buffer: Buffer.from(ctl) }));
  // Columns not found: a question in the editor, not a red error.
  assert.equal(await page.isVisible('#error-banner'), false, 'columns not found');
  assert.match(await page.textContent('#status'), /Choose the coordinate columns of odd-controls\.csv/);
  assert.equal(await page.inputValue('#map-layer'), 'controls');
  assert.match(await page.textContent('#mapping-hint'), /odd-controls\.csv/);
  assert.equal(await page.isDisabled('#map-coords'), true, 'controls follow the events\' coordinates');
  await act(page, () => page.selectOption('#map-x', 'p_east'));
  await act(page, () => page.selectOption('#map-y', 'p_north'));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await summaryNumber(page, 'n_controls'), 3);
  // Using the time column re-reads the controls: the bad date keeps its row
  // (a value left out, said on the file line); off again, nothing is left out.
  await act(page, () => page.selectOption('#map-time', 'when'));
  assert.equal(await summaryNumber(page, 'n_controls'), 3);
  assert.deepEqual(await qualityCounts(page, 'controls'), { read: 3, used: 3, rejected: 0 });
  assert.match(await page.textContent('#controls-name'), /1 value left out/);
  await act(page, () => page.selectOption('#map-time', ''));
  assert.equal(await summaryNumber(page, 'n_controls'), 3);
  assert.deepEqual(await qualityCounts(page, 'controls'), { read: 3, used: 3, rejected: 0 });
  // Switching the editor back shows the events' columns, untouched.
  await page.selectOption('#map-layer', 'events');
  assert.equal(await page.inputValue('#map-x'), 'x');
  assert.equal(await summaryNumber(page, 'n_events'), 4);
});
