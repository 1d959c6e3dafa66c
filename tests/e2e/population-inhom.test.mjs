// "Compared with the population": the inhomogeneous K test on the demo in
// the page (cases.csv against population.csv) with few simulations: chart
// drawn, verdict in words, the caveat that the answer depends on how the
// intensity was estimated; the intensity from the events without a
// population file; Cancel stops a run.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { launch, openPage, loadDemo, act, settle, OUT } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('inhomogeneous K on the demo: chart, verdict and the bandwidth caveat; then from the events alone', async () => {
  const { page, log } = await openPage(browser);
  assert.equal(await page.isVisible('#pop-inhom-box'), true);
  assert.equal(await page.isDisabled('#pin-run'), true, 'nothing loaded: cannot run');
  assert.equal(await page.isVisible('#pin-needs'), true);
  await loadDemo(page);
  assert.equal(await page.isVisible('#pin-needs'), false);
  assert.equal(await page.inputValue('#pin-source'), 'population');
  await page.fill('#pin-nsim', '19');
  await page.fill('#pin-rmax', '1500');
  await page.fill('#pin-seed', '7');
  await page.click('#pin-run');
  await page.waitForFunction(() => !document.getElementById('pin-result').hidden, null, { timeout: 180000 });
  await settle(page);
  // Same settings as the Node test of the demo (tests/node/inhom.test.mjs),
  // apart from the number of distances.
  assert.match(await page.textContent('#pin-verdict'), /^Cases cluster beyond what the population layer explains, at distances/);
  assert.equal(await page.getAttribute('#pin-verdict', 'data-outcome'), 'clustered');
  assert.match(await page.textContent('#pin-depends'), /The answer depends on how the intensity was estimated/);
  assert.match(await page.textContent('#pin-depends'), /bandwidth \(\d+ m\)/);
  assert.match(await page.textContent('#pin-caveats'), /population layer stands for the population at risk/);
  assert.equal(await page.getAttribute('#pin-chart', 'data-drawn'), '1');
  assert.match(await page.getAttribute('#pin-chart', 'aria-label'), /inhomogeneous L\(r\) − r/);
  const details = await page.textContent('#pin-details');
  assert.match(details, /population file \(3,000 rows, 3,000 people in all\), scaled to the 1,500 events/);
  assert.match(details, /rule of thumb/);
  assert.match(details, /p = 0\.05 \(0 of 19 simulations/);
  assert.match(await page.textContent('#pin-progress-text'), /19 simulations done/);
  const inked = await page.evaluate(() => {
    const c = document.getElementById('pin-chart');
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let n = 0;
    for (let i = 0; i < d.length; i += 4) if (d[i] < 200) n++;
    return n;
  });
  assert.ok(inked > 2000, `${inked} dark pixels`);
  await page.locator('#pop-inhom-box').screenshot({ path: join(OUT, 'population-inhom.png') });
  // Without the population file the intensity comes from the events.
  await act(page, () => page.click('#controls-clear'));
  assert.equal(await page.isVisible('#pin-result'), false);
  assert.equal(await page.inputValue('#pin-source'), 'events');
  assert.equal(await page.isDisabled('#pin-run'), false);
  await page.fill('#pin-nsim', '9');
  await page.fill('#pin-rmax', '1000');
  await page.click('#pin-run');
  await page.waitForFunction(() => !document.getElementById('pin-result').hidden, null, { timeout: 180000 });
  assert.match(await page.textContent('#pin-details'), /the 1,500 events, each left out of its own estimate/);
  assert.match(await page.textContent('#pin-caveats'), /cannot be told apart/);
  // Asking for the population without one: the run waits for a file.
  await page.selectOption('#pin-source', 'population');
  assert.equal(await page.isDisabled('#pin-run'), true);
  assert.equal(await page.isVisible('#pin-needs'), true);
  assert.deepEqual(log.pageErrors, []);
});

test('a long inhomogeneous K run can be cancelled', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  await page.fill('#pin-nsim', '9999');
  await page.fill('#pin-seed', '5');
  await page.click('#pin-run');
  await page.waitForFunction(() => Number(document.getElementById('pin-progress').value) >= 2, null, { timeout: 120000 });
  await page.click('#pin-cancel');
  await page.waitForFunction(() => document.getElementById('pin-progress-text').textContent === 'Cancelled.', null, { timeout: 10000 });
  assert.equal(await page.isDisabled('#pin-run'), false);
  assert.deepEqual(log.pageErrors, []);
});

test('an inhomogeneous K run spread over helper workers gives exactly the one-worker result, for both intensity sources', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  const got = await page.evaluate(async () => {
    const out = [];
    for (const from of ['population', 'events']) {
      const spec = (parallel) => ({
        start: 'inhomKStart', step: 'inhomKStep', finish: 'inhomKFinish',
        params: { intensity_from: from, n_sim: 11, seed: 424242, r_max_m: 1200, n_steps: 20 },
        ...(parallel ? { parallel: { share: 'inhomKShare', helperStart: 'inhomKHelperStart', simulate: 'inhomKSimulate', add: 'inhomKAdd' } } : {}),
      });
      let workers = 0;
      const a = await window.Cloister.runJob(spec(true), (p) => { workers = Math.max(workers, p.workers || 0); }).promise;
      const b = await window.Cloister.runJob(spec(false), () => {}).promise;
      const pick = (r) => JSON.stringify([r.observed, r.sim_mean, r.pointwise_lo, r.pointwise_hi, r.mad, r.dclf, r.warnings, r.verdict]);
      out.push({ from, workers, a: pick(a), b: pick(b) });
    }
    return { cores: navigator.hardwareConcurrency, out };
  });
  for (const r of got.out) {
    if (got.cores > 1) assert.ok(r.workers >= 2, `${r.from}: workers ${r.workers}`);
    assert.equal(r.a, r.b, r.from);
  }
  assert.deepEqual(log.pageErrors, []);
  assert.deepEqual(log.requests.filter((u) => !u.startsWith('file:') && !u.startsWith('blob:') && !u.startsWith('data:')), []);
});
