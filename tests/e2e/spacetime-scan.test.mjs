// "Close in space and time": the space–time permutation scan on the demo
// in the page: the planted outbreaks of demo-data/README.md found with
// their dates, drawn on the map, the table and the verdict; Cancel; the
// export holds no event location; helper workers give the one-worker
// result.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { launch, openPage, loadDemo, settle, act, canvasCensus, OUT, DEMO_DIR, outDir } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

const MAIN = '#0f6e6a';

test('space-time scan on the demo: clusters with their dates in the table, on the map, a verdict; the saved file holds no event location', async () => {
  const { page, log } = await openPage(browser);
  assert.equal(await page.isVisible('#st-scan-box'), true);
  assert.equal(await page.isDisabled('#st-scan-run'), true, 'nothing loaded: cannot run');
  await loadDemo(page);
  assert.equal(await page.isDisabled('#st-scan-run'), false);
  // Limits from the engine's parameter list.
  assert.equal(await page.getAttribute('#st-scan-days', 'max'), '366');
  const before = await canvasCensus(page, [MAIN]);
  assert.equal(before.counts[0], 0);
  await page.fill('#st-scan-share', '10');
  await page.fill('#st-scan-days', '30');
  await page.fill('#st-scan-nsim', '39');
  await page.fill('#st-scan-seed', '8');
  await page.click('#st-scan-run');
  await page.waitForFunction(() => !document.getElementById('st-scan-result').hidden, null, { timeout: 240000 });
  await settle(page);
  // Same settings as tests/node/spacetime-scan.test.mjs.
  assert.match(await page.textContent('#st-scan-verdict'), /^The strongest cluster in space and time \(.* from 2025-\d\d-\d\d to 2025-\d\d-\d\d.*\) is unlikely to be chance \(p ≤ 0\.025\)\./);
  const rows = await page.$$eval('#st-scan-rows tr', (trs) => trs.map((tr) => [...tr.children].map((td) => td.textContent)));
  assert.ok(rows.length >= 3, `${rows.length} rows`);
  // The three planted outbreaks (A: March, B: July–August, C: October–November) among the rows with p < 0.05.
  const sig = rows.filter((r) => Number(r[9].replace('< ', '')) < 0.05);
  for (const month of [/2025-0[23]/, /2025-0[78]/, /2025-1[01]/]) assert.ok(sig.some((r) => month.test(r[1]) || month.test(r[2])), `${month}: ${JSON.stringify(rows)}`);
  assert.match(await page.textContent('#st-scan-details'), /1,500 events at \d[\d,]* places over 365 days \(2025-01-01 to 2025-12-31\)/);
  assert.match(await page.textContent('#st-scan-caveats'), /not a cause/);
  assert.match(await page.textContent('#st-scan-progress-text'), /39 permutations done/);
  // Drawn on the map in the scan's own colour.
  await settle(page);
  const after = await canvasCensus(page, [MAIN]);
  assert.ok(after.counts[0] > 20, `pixels in the scan colour: ${after.counts[0]}`);
  assert.ok(await page.locator('.legend').textContent().then((t) => /Space-time scan: strongest cluster/.test(t)));
  outDir();
  await page.locator('#st-scan-box').screenshot({ path: join(OUT, 'spacetime-scan.png') });
  // Save as CSV: no event's longitude/latitude in the file.
  const [dl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#st-scan-save'))]);
  const path = join(OUT, 'spacetime-clusters.csv');
  await dl.saveAs(path);
  const csv = readFileSync(path, 'utf8');
  assert.match(csv, /^rank,longitude,latitude,radius_m,start_date,end_date/);
  assert.match(dl.suggestedFilename(), /^cloister-spacetime-clusters-\d{4}-\d\d-\d\d\.csv$/);
  const events = readFileSync(join(DEMO_DIR, 'cases.csv'), 'utf8').trim().split('\n').slice(1).map((l) => l.split(','));
  for (const [, lon, lat] of events) assert.ok(!(csv.includes(lon) && csv.includes(lat)), `event at ${lon}, ${lat} in the file`);
  assert.doesNotMatch(csv, /internal use only/);
  assert.deepEqual(log.pageErrors, []);
});

test('a long space-time scan shows progress and can be cancelled', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  await page.selectOption('#st-scan-mode', 'prospective');
  await page.fill('#st-scan-nsim', '99999');
  await page.fill('#st-scan-seed', '5');
  await page.click('#st-scan-run');
  await page.waitForFunction(() => Number(document.getElementById('st-scan-progress').value) >= 1, null, { timeout: 120000 });
  assert.match(await page.textContent('#st-scan-progress-text'), /\/ 99,999 permutations/);
  const t0 = Date.now();
  await page.click('#st-scan-cancel');
  await page.waitForFunction(() => document.getElementById('st-scan-progress-text').textContent === 'Cancelled.', null, { timeout: 5000 });
  const ms = Date.now() - t0;
  assert.ok(ms < 1500, `cancelled after ${ms} ms`);
  assert.equal(await page.isDisabled('#st-scan-run'), false);
  assert.equal(await page.isVisible('#st-scan-result'), false);
  assert.deepEqual(log.pageErrors, []);
});

test('a space-time scan spread over helper workers gives exactly the one-worker result', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  const got = await page.evaluate(async () => {
    const spec = (parallel) => ({
      start: 'spaceTimeScanStart', step: 'spaceTimeScanStep', finish: 'spaceTimeScanFinish',
      params: { mode: 'prospective', n_sim: 199, seed: 4242 },
      ...(parallel ? { parallel: { share: 'spaceTimeScanShare', helperStart: 'spaceTimeScanHelperStart', simulate: 'spaceTimeScanSimulate', add: 'spaceTimeScanAdd' } } : {}),
    });
    let workers = 0;
    const a = await window.Cloister.runJob(spec(true), (p) => { workers = Math.max(workers, p.workers || 0); }).promise;
    const b = await window.Cloister.runJob(spec(false), () => {}).promise;
    return { workers, cores: navigator.hardwareConcurrency, a: JSON.stringify(a), b: JSON.stringify(b) };
  });
  if (got.cores > 1) assert.ok(got.workers >= 2, `workers: ${got.workers}`);
  assert.equal(got.a, got.b);
  assert.deepEqual(log.pageErrors, []);
});
