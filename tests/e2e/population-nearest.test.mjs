// "Compared with the population": the Cuzick–Edwards k-nearest-neighbour
// test on the demo in the page (cases against the population file): the
// table over k, the combined test and the verdict in words.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { launch, openPage, loadDemo, settle, OUT } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('Cuzick–Edwards on the demo: a row per k, the combined p, the verdict', async () => {
  const { page, log } = await openPage(browser);
  assert.equal(await page.isVisible('#pop-nn-box'), true);
  assert.equal(await page.isDisabled('#pop-nn-run'), true, 'nothing loaded: cannot run');
  await loadDemo(page);
  assert.equal(await page.isDisabled('#pop-nn-run'), false);
  // The limits come from the engine's parameter list.
  assert.equal(await page.getAttribute('#pop-nn-k', 'max'), '50');
  await page.fill('#pop-nn-k', '6');
  await page.fill('#pop-nn-nsim', '99');
  await page.fill('#pop-nn-seed', '3');
  await page.click('#pop-nn-run');
  await page.waitForFunction(() => !document.getElementById('pop-nn-result').hidden, null, { timeout: 120000 });
  await settle(page);
  // Same settings as tests/node/risk-nearest.test.mjs (k up to 10 there).
  assert.match(await page.textContent('#pop-nn-verdict'), /^Cases have more cases among their nearest neighbours than the population would give, for k = /);
  assert.equal(await page.getAttribute('#pop-nn-verdict', 'data-outcome'), 'more_case_neighbours');
  const rows = await page.$$eval('#pop-nn-rows tr', (trs) => trs.map((tr) => [...tr.children].map((td) => td.textContent)));
  assert.equal(rows.length, 6);
  assert.deepEqual(rows.map((r) => r[0]), ['1', '2', '3', '4', '5', '6']);
  // Relabelling p of 99 relabellings: 0.01 at the smallest.
  for (const r of rows) assert.match(r[5], /^0\.\d+$/);
  const details = await page.textContent('#pop-nn-details');
  assert.match(details, /1,500 events, 3,000 controls/);
  assert.match(details, /p = 0\.01 \(largest z = /);
  assert.match(await page.textContent('#pop-nn-progress-text'), /99 relabellings done/);
  await page.locator('#pop-nn-box').screenshot({ path: join(OUT, 'population-nearest.png') });
  assert.deepEqual(log.pageErrors, []);
});

test('a long nearest-neighbour run shows progress and can be cancelled', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  // 9,999 relabellings of 50 neighbours: several seconds, in steps.
  await page.fill('#pop-nn-k', '50');
  await page.fill('#pop-nn-nsim', '9999');
  await page.fill('#pop-nn-seed', '5');
  await page.click('#pop-nn-run');
  await page.waitForFunction(() => Number(document.getElementById('pop-nn-progress').value) >= 1, null, { timeout: 120000 });
  assert.match(await page.textContent('#pop-nn-progress-text'), /\/ 9,999 relabellings/);
  await page.click('#pop-nn-cancel');
  await page.waitForFunction(() => document.getElementById('pop-nn-progress-text').textContent === 'Cancelled.', null, { timeout: 5000 });
  assert.equal(await page.isDisabled('#pop-nn-run'), false);
  assert.equal(await page.isVisible('#pop-nn-result'), false);
  assert.deepEqual(log.pageErrors, []);
});

test('a Cuzick–Edwards run spread over helper workers gives exactly the one-worker result', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  const got = await page.evaluate(async () => {
    const spec = (parallel) => ({
      start: 'nearestCasesStart', step: 'nearestCasesStep', finish: 'nearestCasesFinish',
      params: { n_sim: 499, seed: 8080, k_max: 5 },
      ...(parallel ? { parallel: { share: 'nearestCasesShare', helperStart: 'nearestCasesHelperStart', simulate: 'nearestCasesSimulate', add: 'nearestCasesAdd' } } : {}),
    });
    let workers = 0;
    const a = await window.Cloister.runJob(spec(true), (p) => { workers = Math.max(workers, p.workers || 0); }).promise;
    const b = await window.Cloister.runJob(spec(false), () => {}).promise;
    return { workers, cores: navigator.hardwareConcurrency, a: JSON.stringify([a.rows, a.combined]), b: JSON.stringify([b.rows, b.combined]) };
  });
  if (got.cores > 1) assert.ok(got.workers >= 2, `workers: ${got.workers}`);
  assert.equal(got.a, got.b);
  assert.deepEqual(log.pageErrors, []);
});
