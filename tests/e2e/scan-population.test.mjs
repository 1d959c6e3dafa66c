// The scan against population counts in the page: after the demo, the
// population file is replaced by demo-data/population-blocks.csv (a count of
// residents at each block centroid); the scan names its model, runs in the
// worker, and finds a planted cluster.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { launch, openPage, loadDemo, act, outDir, DEMO_DIR } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

/** Great-circle distance in metres (spherical, R = 6 371 008.8 m). */
function metresApart(lon1, lat1, lon2, lat2) {
  const r = Math.PI / 180;
  const a = Math.sin(((lat2 - lat1) * r) / 2) ** 2 + Math.cos(lat1 * r) * Math.cos(lat2 * r) * Math.sin(((lon2 - lon1) * r) / 2) ** 2;
  return 2 * 6371008.8 * Math.asin(Math.sqrt(a));
}

test('scan: a population file of counts is scanned with the Poisson model against the counts', async () => {
  const { page, log } = await openPage(browser, { height: 1000 });
  await loadDemo(page);
  const truth = JSON.parse(readFileSync(join(DEMO_DIR, 'planted-truth.json'), 'utf8'));
  assert.equal(await page.getAttribute('#hs-scan-model', 'data-model'), 'bernoulli');
  const blocks = readFileSync(join(DEMO_DIR, 'population-blocks.csv'));
  await act(page, () => page.setInputFiles('#controls-file', { name: 'population-blocks.csv', mimeType: 'text/csv', buffer: blocks }));
  await page.waitForFunction(() => document.getElementById('hs-scan-model').dataset.model === 'poisson_population', null, { timeout: 30000 });
  const model = await page.textContent('#hs-scan-model');
  assert.match(model, /Model: cases against the population counts \(Poisson/);
  assert.equal(await page.locator('#hs-scan-model .term[data-term="poisson_population"]').count(), 1);

  await page.fill('#hs-sims', '99');
  await page.fill('#hs-seed', '7');
  await page.click('#hs-scan-run');
  await page.waitForFunction(() => document.getElementById('hs-scan').dataset.state === 'done', null, { timeout: 120000 });
  const out = await page.textContent('#hs-scan-out');
  assert.match(out, /cases against the population counts \(Poisson\)/);
  assert.match(out, /population points/);
  assert.match(await page.textContent('#hs-scan-out dd[data-key="scan-people"]'), /^24,000$/);
  assert.match(await page.textContent('#hs-scan-out dd[data-key="scan-reach"]'), /^at most \d+(\.\d)?\sm\s/);
  const rows = await page.$$eval('#hs-scan-table tbody tr', (trs) => trs.map((tr) => Array.from(tr.cells).map((td) => td.textContent.trim())));
  assert.match(rows[0][0], /strongest/);
  const [lon, lat] = rows[0][1].split(',').map((t) => parseFloat(t));
  const near = truth.clusters.map((c) => metresApart(lon, lat, c.centre_lonlat.longitude, c.centre_lonlat.latitude));
  assert.ok(Math.min(...near) < 600, `strongest circle ${Math.round(Math.min(...near))} m from a planted centre`);
  assert.equal(Number(rows[0][6]), 0.01);
  assert.match(await page.textContent('#hs-scan'), /A cluster is not a cause/);
  await page.locator('#hotspots').screenshot({ path: join(outDir(), 'scan-population-counts.png') });
  assert.deepEqual(log.pageErrors, []);
  assert.deepEqual(log.consoleErrors, []);
});

test('the demo with the population as counts loads in one click', async () => {
  const { page, log } = await openPage(browser);
  await act(page, () => page.click('#demo-counts-button'));
  assert.match(await page.textContent('#status'), /Demo loaded/);
  assert.match(await page.textContent('#controls-name'), /population-blocks\.csv \(demo\)/);
  await page.waitForFunction(() => document.getElementById('hs-scan-model').dataset.model === 'poisson_population', null, { timeout: 30000 });
  // The ordinary demo still loads one point per person.
  await act(page, () => page.click('#demo-button'));
  await page.waitForFunction(() => document.getElementById('hs-scan-model').dataset.model === 'bernoulli', null, { timeout: 30000 });
  assert.match(await page.textContent('#controls-name'), /^population\.csv \(demo\)/);
  assert.deepEqual(log.pageErrors, []);
  assert.deepEqual(log.consoleErrors, []);
});

test('scan: chance runs spread over helper workers give exactly the one-worker result (both demo models)', async () => {
  const { page, log } = await openPage(browser);
  const runs = [];
  for (const button of ['#demo-button', '#demo-counts-button']) {
    await act(page, () => page.click(button));
    const model = button === '#demo-button' ? 'bernoulli' : 'poisson_population';
    await page.waitForFunction((m) => document.getElementById('hs-scan-model').dataset.model === m, model, { timeout: 30000 });
    runs.push(await page.evaluate(async () => {
      const spec = (parallel) => ({
        start: 'scanStart', step: 'scanStep', finish: 'scanFinish',
        params: { n_sim: 199, seed: 31337 },
        ...(parallel ? { parallel: { share: 'scanShare', helperStart: 'scanHelperStart', simulate: 'scanSimulate', add: 'scanAdd' } } : {}),
      });
      let workers = 0;
      const a = await window.Cloister.runJob(spec(true), (p) => { workers = Math.max(workers, p.workers || 0); }).promise;
      const b = await window.Cloister.runJob(spec(false), () => {}).promise;
      return { workers, cores: navigator.hardwareConcurrency, model: a.model, n: a.null_maxima.length, a: JSON.stringify(a), b: JSON.stringify(b) };
    }));
  }
  assert.deepEqual(runs.map((r) => r.model), ['bernoulli', 'poisson_population']);
  for (const r of runs) {
    if (r.cores > 1) assert.ok(r.workers >= 2, `${r.model} workers: ${r.workers}`);
    assert.equal(r.n, 199);
    assert.equal(r.a, r.b, r.model);
  }
  assert.deepEqual(log.pageErrors, []);
});
