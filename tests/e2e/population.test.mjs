// "Compared with the population": the random labelling test on the demo in
// the page (cases against the population file), its chart, verdict and
// details; the section waits for a population file; Cancel stops a run.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { launch, openPage, loadDemo, act, settle, OUT } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('random labelling on the demo: D above the band at short distances, chart drawn, verdict in words', async () => {
  const { page, log } = await openPage(browser);
  assert.equal(await page.isVisible('#population'), true);
  assert.equal(await page.isDisabled('#pop-run'), true, 'nothing loaded: cannot run');
  assert.equal(await page.isVisible('#pop-needs'), true);
  await loadDemo(page);
  assert.equal(await page.isVisible('#pop-needs'), false);
  await page.fill('#pop-nsim', '99');
  await page.fill('#pop-rmax', '1500');
  await page.fill('#pop-seed', '11');
  await page.click('#pop-run');
  await page.waitForFunction(() => !document.getElementById('pop-result').hidden, null, { timeout: 120000 });
  await settle(page);
  const verdict = await page.textContent('#pop-verdict');
  // Same settings as the Node test of the demo (tests/node/hotspots.test.mjs).
  assert.match(verdict, /^Cases cluster beyond the population at distances/);
  assert.equal(await page.getAttribute('#pop-verdict', 'data-outcome'), 'beyond_population');
  assert.equal(await page.getAttribute('#pop-chart', 'data-drawn'), '1');
  assert.match(await page.getAttribute('#pop-chart', 'aria-label'), /D\(r\) = K cases − K controls/);
  const details = await page.textContent('#pop-details');
  assert.match(details, /1,500 events, 3,000 controls/);
  assert.match(details, /p = 0\.01 \(0 of 99 relabellings/);
  assert.match(await page.textContent('#pop-progress-text'), /99 relabellings done/);
  // Ink in the chart: the canvas is not blank.
  const inked = await page.evaluate(() => {
    const c = document.getElementById('pop-chart');
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let n = 0;
    for (let i = 0; i < d.length; i += 4) if (d[i] < 200) n++;
    return n;
  });
  assert.ok(inked > 2000, `${inked} dark pixels`);
  await page.locator('#population').screenshot({ path: join(OUT, 'population-labelling.png') });
  // The cross-type L instead of D: the same demo, cases keep apart from the
  // controls at short distances (as the Node test of the same settings).
  await page.selectOption('#pop-statistic', 'cross_l');
  await page.click('#pop-run');
  await page.waitForFunction(() => document.getElementById('pop-verdict').dataset.outcome === 'apart_from_controls', null, { timeout: 120000 });
  await settle(page);
  assert.match(await page.textContent('#pop-verdict'), /keep apart from the population/);
  assert.match(await page.getAttribute('#pop-chart', 'aria-label'), /cross-type L − its relabelled mean/);
  assert.match(await page.textContent('#pop-band-note'), /around the mean of the relabelled curves/);
  await page.locator('#population').screenshot({ path: join(OUT, 'population-cross-l.png') });
  await page.selectOption('#pop-statistic', 'difference');
  // Without the population file, two categories of the events can still be
  // compared; the population comparison is no longer offered.
  await act(page, () => page.click('#controls-clear'));
  assert.equal(await page.isVisible('#pop-result'), false);
  const offered = await page.$$eval('#pop-compare option', (os) => os.map((o) => o.textContent));
  assert.deepEqual(offered.sort(), ['enteric against respiratory', 'enteric against the other categories', 'respiratory against enteric', 'respiratory against the other categories']);
  await page.selectOption('#pop-compare', { label: 'enteric against respiratory' });
  await page.fill('#pop-nsim', '19');
  await page.click('#pop-run');
  await page.waitForFunction(() => !document.getElementById('pop-result').hidden, null, { timeout: 120000 });
  assert.match(await page.textContent('#pop-details'), /686 "enteric", 814 "respiratory"/);
  const catVerdict = await page.textContent('#pop-verdict');
  assert.match(catVerdict, /[Ee]vents of "enteric"/);
  assert.match(catVerdict, /those of "respiratory"/);
  assert.deepEqual(log.pageErrors, []);
});

test('the section says what it needs when there is neither a population file nor categories', async () => {
  const { page, log } = await openPage(browser);
  const lines = ['x,y'];
  for (let i = 0; i < 60; i++) lines.push(`${(i * 137) % 1000},${(i * 71) % 700}`);
  await act(page, () => page.setInputFiles('#events-file', { name: 'plain.csv', mimeType: 'text/csv', buffer: Buffer.from(lines.join('\n')) }));
  assert.equal(await page.isVisible('#pop-needs'), true);
  assert.equal(await page.isDisabled('#pop-run'), true);
  assert.deepEqual(log.pageErrors, []);
});

test('a long random labelling run can be cancelled', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  await page.fill('#pop-nsim', '9999');
  await page.fill('#pop-seed', '5');
  await page.click('#pop-run');
  await page.waitForFunction(() => Number(document.getElementById('pop-progress').value) >= 64, null, { timeout: 120000 });
  await page.click('#pop-cancel');
  await page.waitForFunction(() => document.getElementById('pop-progress-text').textContent === 'Cancelled.', null, { timeout: 5000 });
  assert.equal(await page.isDisabled('#pop-run'), false);
  assert.deepEqual(log.pageErrors, []);
});

test('a random labelling run spread over helper workers gives exactly the one-worker result', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  const got = await page.evaluate(async () => {
    const spec = (parallel) => ({
      start: 'labellingStart', step: 'labellingStep', finish: 'labellingFinish',
      params: { n_sim: 99, seed: 424242, r_max_m: 600 },
      ...(parallel ? { parallel: { share: 'labellingShare', helperStart: 'labellingHelperStart', simulate: 'labellingSimulate', add: 'labellingAdd', minPiece: 50 } } : {}),
    });
    let workers = 0;
    const a = await window.Cloister.runJob(spec(true), (p) => { workers = Math.max(workers, p.workers || 0); }).promise;
    const b = await window.Cloister.runJob(spec(false), () => {}).promise;
    return { workers, cores: navigator.hardwareConcurrency, a: JSON.stringify([a.sim_mean, a.global_hi, a.mad, a.dclf]), b: JSON.stringify([b.sim_mean, b.global_hi, b.mad, b.dclf]) };
  });
  if (got.cores > 1) assert.ok(got.workers >= 2, `workers: ${got.workers}`);
  assert.equal(got.a, got.b);
  assert.deepEqual(log.pageErrors, []);
});

test('a population file of counts: the section says what it allows, and the labelling test does not offer it', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  assert.match(await page.textContent('#pop-layer'), /3,000 controls, one point per person/);
  // The demo population, grouped four by four into points with a count.
  const counts = ['longitude,latitude,count'];
  const rows = (await import('node:fs')).readFileSync(join(process.cwd(), 'demo-data/population.csv'), 'utf8').trim().split('\n').slice(1);
  for (let i = 0; i < rows.length; i += 4) counts.push(`${rows[i]},${1 + (i % 7)}`);
  await act(page, () => page.setInputFiles('#controls-file', { name: 'blocks.csv', mimeType: 'text/csv', buffer: Buffer.from(counts.join('\n')) }));
  await page.waitForFunction(() => /count column/.test(document.getElementById('pop-layer').textContent), null, { timeout: 30000 });
  const note = await page.textContent('#pop-layer');
  assert.match(note, /750 points with a count column/);
  const offered = await page.$$eval('#pop-compare option', (os) => os.map((o) => o.value));
  assert.ok(!offered.includes('population'), offered.join(' | '));
  assert.deepEqual(log.pageErrors, []);
});
