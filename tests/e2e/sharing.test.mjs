// (Sharing safely) In the page: mask the demo once, see the masked points and
// the cost table, count per cell with small counts hidden, preview what leaves,
// save the map picture and the report, then open the saved report from disk
// and check it asks for nothing from any network and holds no original
// coordinate.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { launch, openPage, loadDemo, act, frame, canvasCensus, palette, outDir, DEMO_DIR } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

/** Longitude and latitude strings exactly as written in the demo's cases.csv. */
function originalStrings() {
  const lines = readFileSync(join(DEMO_DIR, 'cases.csv'), 'utf8').split(/\r?\n/).filter((l) => l.trim());
  const head = lines[0].split(',');
  const ix = head.indexOf('longitude');
  const iy = head.indexOf('latitude');
  return lines.slice(1).flatMap((l) => { const c = l.split(','); return [c[ix], c[iy]]; });
}

/** Pixels of the given colours in a PNG file, counted by the browser. */
async function pngCensus(page, path, colours) {
  const b64 = readFileSync(path).toString('base64');
  return page.evaluate(async ({ b64, colours }) => {
    const img = new Image();
    img.src = `data:image/png;base64,${b64}`;
    await img.decode();
    const c = document.createElement('canvas');
    c.width = img.naturalWidth;
    c.height = img.naturalHeight;
    const ctx = c.getContext('2d');
    ctx.drawImage(img, 0, 0);
    const d = ctx.getImageData(0, 0, c.width, c.height).data;
    const want = colours.map((h) => [1, 3, 5].map((i) => parseInt(h.slice(i, i + 2), 16)));
    const counts = want.map(() => 0);
    for (let i = 0; i < d.length; i += 4) {
      want.forEach((w, k) => { if (d[i] === w[0] && d[i + 1] === w[1] && d[i + 2] === w[2]) counts[k]++; });
    }
    return { counts, width: c.width, height: c.height };
  }, { b64, colours });
}

test('mask, count, preview and save: the report opens offline with no request and no original coordinate', async () => {
  const out = outDir();
  const { page, log } = await openPage(browser, { width: 1366, height: 900 });
  const pal = await palette(page);
  await loadDemo(page);
  assert.equal(await page.isDisabled('#share-mask'), false);
  assert.match(await page.textContent('#share-cautions'), /Brownstein/);

  // 1. Mask with a ring shift of 100–400 m.
  await page.fill('#share-rmin', '100');
  await page.fill('#share-rmax', '400');
  await act(page, () => page.click('#share-mask'));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.match(await page.textContent('#share-mask-summary'), /1,500 of 1,500 points masked/);
  const cost = await page.textContent('#share-cost-table');
  for (const w of ['Mean nearest-neighbour distance', 'Clark–Evans R', 'Standard distance', 'Mean centre', 'Kernel surface']) assert.ok(cost.includes(w), `cost table: ${w}`);
  await frame(page);
  assert.match(await page.textContent('#legend'), /Masked points \(1,500\)/);
  const withOriginals = await canvasCensus(page, ['#1b1b1b', ...pal.categories]);
  assert.ok(withOriginals.counts[0] > 200, `masked circles drawn (${withOriginals.counts[0]} px)`);
  assert.ok(withOriginals.counts.slice(1).reduce((a, b) => a + b, 0) > 1500, 'original points still drawn');

  // The picture can only be saved while the originals are hidden.
  assert.equal(await page.isDisabled('[data-export="map_png:png"]'), true);
  const baseItems = await page.$$eval('#legend li', (lis) => lis.filter((li) => li.querySelector('.sw.dot, .sw.control, .sw.centre, .sw.ellipse')).map((li) => li.textContent));
  assert.ok(baseItems.length > 0, 'the original layers are in the legend');
  // A hotspot overlay drawn from the original points (DBSCAN hulls).
  await page.fill('#hs-eps', '150');
  await act(page, () => page.click('#hs-dbscan-run'));
  assert.match(await page.textContent('#legend'), /Density clusters/);
  await page.check('#share-only');
  await frame(page);
  await frame(page);
  // While only what would be shared is drawn, other overlays are neither drawn nor listed.
  assert.doesNotMatch(await page.textContent('#legend'), /Density clusters/);
  const onlyShared = await canvasCensus(page, ['#1b1b1b', ...pal.categories, pal.control]);
  assert.ok(onlyShared.counts[0] > 200, 'masked circles still drawn');
  assert.equal(onlyShared.counts.slice(1).reduce((a, b) => a + b, 0), 0, 'no original point or control pixel left on the map');
  // The legend lists only what is drawn.
  const sharedLegend = await page.textContent('#legend');
  for (const t of baseItems) assert.ok(!sharedLegend.includes(t), `legend still lists ${t}`);
  assert.match(sharedLegend, /Masked points \(1,500\)/);
  assert.equal(await page.isDisabled('[data-export="map_png:png"]'), false);

  // Masking again asks first and warns about averaging.
  await act(page, () => page.click('#share-mask'));
  assert.equal(await page.isVisible('#share-remask'), true);
  assert.match(await page.textContent('#share-remask'), /averaging/);
  await page.click('#share-remask-no');
  assert.equal(await page.isVisible('#share-remask'), false);

  // 2. Count per 500 m square cell.
  await page.fill('#share-cell', '500');
  await act(page, () => page.click('#share-aggregate'));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  const cells = await page.$$eval('#share-cells tbody tr', (trs) => trs.map((tr) => ({ hidden: tr.dataset.suppressed === '1', count: tr.cells[1].textContent.trim() })));
  assert.ok(cells.some((c) => c.hidden), 'some counts hidden');
  for (const c of cells.filter((c) => !c.hidden)) {
    const v = Number(c.count.replace(/,/g, ''));
    assert.ok(v === 0 || v >= 5, `shown count ${c.count}`);
  }
  assert.match(await page.textContent('#share-agg-figures'), /1 to 4/);
  assert.match(await page.textContent('#share-agg-figures [data-key="audit"]'), /no hidden count can be recovered/);
  assert.match(await page.textContent('#legend'), /Hidden count/);
  await frame(page);
  await page.locator('#map-panel').screenshot({ path: join(out, 'sharing-map.png') });

  // Masked points and hidden counts never go out together: the map picture
  // and the report show one or the other (counts first).
  assert.equal(await page.isVisible('#share-holds'), true);
  assert.equal(await page.isVisible('#share-holds-hint'), true);
  assert.equal(await page.inputValue('#share-holds'), 'counts');
  assert.equal(await page.$eval('#share-holds option[value=both]', (o) => o.disabled), true);
  await frame(page);
  const countsOnly = await canvasCensus(page, ['#1b1b1b']);
  assert.equal(countsOnly.counts[0], 0, 'no masked circle drawn over the counts');
  await page.selectOption('#share-holds', 'masked_points');
  await frame(page);

  // 3. The map picture: preview, then download; it holds no original-point colour.
  await act(page, () => page.click('[data-export="map_png:png"]'));
  assert.match(await page.textContent('#share-preview'), /What leaves the page/);
  const [pngDl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#share-save'))]);
  const pngPath = join(out, 'sharing-downloaded-map.png');
  await pngDl.saveAs(pngPath);
  const pngCount = await pngCensus(page, pngPath, ['#1b1b1b', ...pal.categories]);
  assert.ok(pngCount.counts[0] > 100, 'masked points in the picture');
  assert.equal(pngCount.counts.slice(1).reduce((a, b) => a + b, 0), 0, 'no original point colour in the picture');

  // 4. The report (of the counts): preview first.
  await page.selectOption('#share-holds', 'counts');
  await act(page, () => page.click('[data-export="report:html"]'));
  const preview = await page.textContent('#share-preview-list');
  assert.match(preview, /Original coordinates\s*none/);
  assert.match(preview, /Masking seed\s*not written/);
  await page.locator('#sharing').screenshot({ path: join(out, 'sharing-panel.png') });
  const [dl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#share-save'))]);
  assert.match(dl.suggestedFilename(), /^cloister-sharing-report-\d{4}-\d{2}-\d{2}\.html$/);
  const reportPath = join(out, 'sharing-report.html');
  await dl.saveAs(reportPath);

  // 4b. The counts as CSV: a spreadsheet sees the header first; the notes
  // about the file are its last column (or # lines, when asked for).
  await act(page, () => page.click('[data-export="aggregates:csv"]'));
  assert.match(await page.textContent('#share-preview-list'), /written in the last column, about_this_file/);
  const [csvDl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#share-save'))]);
  const csvPath = join(out, 'sharing-counts.csv');
  await csvDl.saveAs(csvPath);
  const csvLines = readFileSync(csvPath, 'utf8').split('\n');
  assert.match(csvLines[0], /^kind,id,.*,about_this_file$/);
  assert.match(csvLines[1], /,tool: Cloister$/);
  assert.ok(!csvLines.some((l) => l.startsWith('#')), 'no # line');
  await page.selectOption('#share-notes', 'top_lines');
  await act(page, () => page.click('[data-export="aggregates:csv"]'));
  const [topDl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#share-save'))]);
  await topDl.saveAs(csvPath);
  assert.match(readFileSync(csvPath, 'utf8'), /^# tool: Cloister\n/);
  await page.selectOption('#share-notes', 'last_column');

  // 5. The unmasked export asks for explicit confirmation.
  await page.click('#share-file-box details summary');
  await act(page, () => page.click('[data-export="unmasked_points:csv"]'));
  assert.match(await page.textContent('#share-preview-list'), /YES: the original locations/);
  assert.equal(await page.isDisabled('#share-save'), true, 'cannot save before confirming');
  await page.check('#share-confirm-unmasked');
  assert.equal(await page.isDisabled('#share-save'), false);
  await page.click('#share-cancel');

  assert.deepEqual(log.pageErrors, []);
  assert.deepEqual(log.consoleErrors, []);
  assert.ok(log.requests.every((u) => /^(file|data|blob):/.test(u)), `page requests: ${log.requests.filter((u) => !/^(file|data|blob):/.test(u))}`);

  // 6. Open the saved report from disk in a fresh browser page.
  const html = readFileSync(reportPath, 'utf8');
  const strings = originalStrings();
  assert.equal(strings.length, 3000);
  const found = strings.filter((s) => html.includes(s));
  assert.deepEqual(found, [], 'no original longitude or latitude string in the report');
  const ctx2 = await browser.newContext({ viewport: { width: 1100, height: 900 } });
  const rp = await ctx2.newPage();
  const requests = [];
  rp.on('request', (r) => requests.push(r.url()));
  const reportUrl = pathToFileURL(reportPath).href;
  await rp.goto(reportUrl);
  await rp.waitForLoadState('load');
  const img = await rp.evaluate(() => { const i = document.querySelector('figure img'); return i ? { w: i.naturalWidth, ok: i.complete } : null; });
  assert.ok(img && img.ok && img.w > 0, 'the inline map picture shows under the report\'s policy');
  const network = requests.filter((u) => u !== reportUrl && !u.startsWith('data:'));
  assert.deepEqual(network, [], 'the report requests nothing');
  assert.match(await rp.textContent('body'), /Cassa/);
  await rp.screenshot({ path: join(out, 'sharing-report.png') });
  await rp.evaluate(() => window.scrollTo(0, document.querySelector('h2').offsetTop - 10));
  await rp.screenshot({ path: join(out, 'sharing-report-2.png') });
  await ctx2.close();
});

test('k-anonymity mode against the loaded population: k shown, points that fall short listed with their rows', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  await page.check('#share-method-k');
  assert.equal(await page.isVisible('#share-k-fields'), true);
  assert.equal(await page.isVisible('#share-ring-fields'), false);
  await page.fill('#share-k', '10');
  await page.fill('#share-kmax', '250');
  await page.selectOption('#share-against', 'population');
  await act(page, () => page.click('#share-mask'));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  const summary = await page.textContent('#share-mask-summary');
  const m = /([\d,]+) of 1,500 points masked .*; ([\d,]+) could not be masked/.exec(summary);
  assert.ok(m, summary);
  const masked = Number(m[1].replace(/,/g, ''));
  const left = Number(m[2].replace(/,/g, ''));
  assert.equal(masked + left, 1500);
  assert.ok(left > 0, 'with these settings some points cannot reach k = 10');
  const kCells = await page.$$eval('#share-k-table td', (tds) => tds.map((td) => td.textContent));
  assert.equal(kCells[0], 'min 10', 'every shared point reaches k = 10');
  assert.equal(kCells[3], 'below target 0 %');
  const rows = await page.$$eval('#share-unplaced tbody tr', (trs) => trs.map((tr) => [tr.cells[0].textContent, tr.cells[1].textContent]));
  assert.equal(rows.length, Math.min(left, 500));
  for (const [row, why] of rows) {
    assert.match(row, /^\d[\d,]*$/);
    assert.match(why, /target 10|candidate addresses|inside the study area/);
  }
  // The masked-points preview counts exactly the masked points.
  await act(page, () => page.click('[data-export="masked_points:csv"]'));
  assert.match(await page.textContent('#share-preview-list'), new RegExp(`Rows / features\\s*${masked.toLocaleString('en-GB')}`));
  await page.locator('#sharing').screenshot({ path: join(outDir(), 'sharing-panel-k.png') });
  assert.deepEqual(log.pageErrors, []);
});
