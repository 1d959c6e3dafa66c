// "Close in space and time": the Mantel test and the space–time K function
// in the page on the demo: options, verdicts, the shaded grid, the CSV,
// progress and Cancel, and a run spread over helper workers equal to the
// one-worker run.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { readFileSync } from 'node:fs';
import { launch, openPage, loadDemo, settle, act, OUT } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('Mantel test on the demo: verdict, numbers and the tail used', async () => {
  const { page, log } = await openPage(browser);
  assert.equal(await page.isVisible('#stm-box'), true);
  assert.equal(await page.isDisabled('#stm-run'), true, 'nothing loaded: cannot run');
  await loadDemo(page);
  assert.equal(await page.isDisabled('#stm-run'), false);
  // Limits from the engine's parameter list.
  assert.equal(await page.getAttribute('#stm-nsim', 'max'), '9999');
  await page.fill('#stm-nsim', '99');
  await page.fill('#stm-seed', '5');
  await page.click('#stm-run');
  await page.waitForFunction(() => !document.getElementById('stm-result').hidden, null, { timeout: 120000 });
  await settle(page);
  // Same settings as tests/node/spacetime-mantelk.test.mjs.
  assert.match(await page.textContent('#stm-verdict'), /^Events close together on the map also tend to be close together in time/);
  assert.equal(await page.getAttribute('#stm-verdict', 'data-outcome'), 'interaction');
  const details = await page.textContent('#stm-details');
  assert.match(details, /1,500 events, 1,124,250 pairs/);
  assert.match(details, /0\.01 for a larger statistic/);
  assert.match(await page.textContent('#stm-progress-text'), /99 permutations done/);
  assert.deepEqual(log.pageErrors, []);
});

test('space–time K on the demo: shaded grid drawn, global p, plain verdict, CSV saved', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  await page.fill('#stk-smax', '1000');
  await page.fill('#stk-tmax', '60');
  await page.fill('#stk-ns', '5');
  await page.fill('#stk-nt', '6');
  await page.fill('#stk-nsim', '39');
  await page.fill('#stk-seed', '2');
  await page.click('#stk-run');
  await page.waitForFunction(() => !document.getElementById('stk-result').hidden, null, { timeout: 120000 });
  await settle(page);
  assert.match(await page.textContent('#stk-verdict'), /more common than if times and places were unrelated/);
  assert.match(await page.textContent('#stk-details'), /Global testp = 0\.025 \(0 of 39 permutations/);
  // The grid is drawn: red cells (more close pairs than chance) appear.
  const census = await page.evaluate(() => {
    const c = document.getElementById('stk-chart');
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let red = 0;
    for (let i = 0; i < d.length; i += 4) if (d[i] > 150 && d[i + 1] < 120 && d[i + 2] < 110) red++;
    return { red, w: c.width };
  });
  assert.ok(census.w >= 420 && census.red > 500, JSON.stringify(census));
  await page.locator('#stk-box').screenshot({ path: join(OUT, 'spacetime-k.png') });
  const [dl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#stk-csv'))]);
  assert.match(dl.suggestedFilename(), /^cloister-space-time-k-.*-seed2\.csv$/);
  const csv = readFileSync(await dl.path(), 'utf8');
  const lines = csv.trim().split('\n');
  assert.equal(lines.length, 31);
  assert.match(lines[0], /^distance_m,days,k,d,/);
  assert.deepEqual(log.pageErrors, []);
});

test('a long Mantel run shows progress and stops within moments of Cancel', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  // 9,999 permutations of the demo's 1,124,250 pairs: many seconds, in steps.
  await page.fill('#stm-nsim', '9999');
  await page.fill('#stm-seed', '7');
  await page.click('#stm-run');
  await page.waitForFunction(() => Number(document.getElementById('stm-progress').value) >= 1, null, { timeout: 120000 });
  assert.match(await page.textContent('#stm-progress-text'), /\/ 9,999 permutations/);
  const t0 = Date.now();
  await page.click('#stm-cancel');
  await page.waitForFunction(() => document.getElementById('stm-progress-text').textContent === 'Cancelled.', null, { timeout: 5000 });
  const ms = Date.now() - t0;
  assert.ok(ms < 1500, `cancel took ${ms} ms`);
  assert.equal(await page.isDisabled('#stm-run'), false);
  assert.equal(await page.isVisible('#stm-result'), false);
  assert.deepEqual(log.pageErrors, []);
});

test('Mantel and space–time K spread over helper workers give exactly the one-worker results', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  const got = await page.evaluate(async () => {
    const run = (start, params, parallel) => {
      const p = start.replace('Start', '');
      const spec = { start, step: `${p}Step`, finish: `${p}Finish`, params,
        ...(parallel ? { parallel: { share: `${p}Share`, helperStart: `${p}HelperStart`, simulate: `${p}Simulate`, add: `${p}Add` } } : {}) };
      let workers = 0;
      return window.Cloister.runJob(spec, (q) => { workers = Math.max(workers, q.workers || 0); }).promise.then((r) => ({ r: JSON.stringify(r), workers }));
    };
    const m = { n_sim: 199, seed: 31 };
    const k = { n_sim: 49, seed: 32, s_steps: 6, t_steps: 6 };
    const ma = await run('mantelStart', m, true);
    const mb = await run('mantelStart', m, false);
    const ka = await run('spaceTimeKStart', k, true);
    const kb = await run('spaceTimeKStart', k, false);
    return { cores: navigator.hardwareConcurrency, mw: ma.workers, kw: ka.workers, m: ma.r === mb.r, k: ka.r === kb.r };
  });
  if (got.cores > 1) assert.ok(got.mw >= 2 && got.kw >= 2, JSON.stringify(got));
  assert.equal(got.m, true, 'Mantel');
  assert.equal(got.k, true, 'space–time K');
  assert.deepEqual(log.pageErrors, []);
});
