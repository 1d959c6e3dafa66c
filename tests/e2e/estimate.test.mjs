// Before a long run the page says roughly how long it will take, from a
// quick measurement, and offers faster settings that set the fields: the
// envelope test at 200,000 events (before its observed curve, which alone
// takes minutes) and the scan with many chance runs.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { launch, openPage, act, settle, summaryNumber, uniformCsv, OUT } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('200,000 events: the envelope estimate comes within seconds of Run, its buttons set the fields, the largest distance is checked', async () => {
  const { page, log } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', { name: 'many.csv', mimeType: 'text/csv', buffer: uniformCsv(200000) }));
  assert.equal(await summaryNumber(page, 'n_events'), 200000);
  // Every pair counted (automatic would count these on a fine grid, whose
  // estimate offers no border correction or smaller distance).
  await page.selectOption('#clu-estimator', 'exact');
  await page.fill('#clu-nsim', '199');
  const t0 = Date.now();
  await page.click('#clu-run');
  await page.waitForSelector('#clu-estimate', { state: 'visible', timeout: 20000 });
  const seconds = (Date.now() - t0) / 1000;
  assert.ok(seconds < 5, `the estimate took ${seconds.toFixed(1)} s`);
  // Before the observed curve: the sentence is the measured estimate.
  const text = await page.textContent('#clu-estimate-text');
  assert.match(text, /^This run will take (about \d[\d.,]* (min|h)|\d+ s): one curve takes (about \d+ min|\d+ s) with 200,000 events \(timed on 3,000 of them\), and 199 simulations follow/);
  console.log(`# estimate shown after ${seconds.toFixed(1)} s: ${text}`);
  assert.match(await page.textContent('#clu-estimate'), /fewer simulations/);
  for (const id of ['#clu-faster-n_sim-99', '#clu-faster-n_sim-39', '#clu-faster-correction-border']) {
    assert.equal(await page.isVisible(id), true, id);
  }
  const rButton = page.locator('#clu-faster [data-option="r_max_m"]');
  assert.equal(await rButton.count(), 1);
  await page.locator('#clu-estimate').screenshot({ path: join(OUT, 'envelope-estimate-200k.png') });
  await page.screenshot({ path: join(OUT, 'envelope-estimate-200k-page.png') });
  // A suggestion sets its field and ends the question; nothing runs.
  const label = await rButton.textContent();
  const metres = Number(/(\d[\d.,]*) (m|km)/.exec(label)[1].replace(/,/g, '')) * (/ km/.test(label) ? 1000 : 1);
  await rButton.click();
  assert.equal(Number(await page.inputValue('#clu-rmax')), metres);
  assert.equal(await page.isVisible('#clu-estimate'), false);
  assert.match(await page.textContent('#clu-progress-text'), /^Set to largest distance .*Press Run\.$/);
  assert.equal(await page.isDisabled('#clu-run'), false);
  // The automatic largest distance is shown beside the field once known.
  assert.match(await page.getAttribute('#clu-rmax', 'placeholder'), /^automatic: 2,500$/);
  // Back to the automatic distance: asks again; 39 simulations and the border correction.
  await page.fill('#clu-rmax', '');
  await page.click('#clu-run');
  await page.waitForSelector('#clu-estimate', { state: 'visible', timeout: 20000 });
  await page.click('#clu-faster-n_sim-39');
  assert.equal(await page.inputValue('#clu-nsim'), '39');
  await page.click('#clu-run');
  await page.waitForSelector('#clu-estimate', { state: 'visible', timeout: 20000 });
  await page.click('#clu-faster-correction-border');
  assert.equal(await page.inputValue('#clu-correction'), 'border');
  // Run it anyway: while the observed curve is computed, the time left counts down.
  await page.click('#clu-run');
  await page.waitForSelector('#clu-estimate', { state: 'visible', timeout: 20000 });
  await page.click('#clu-estimate-go');
  await page.waitForFunction(() => /Computing the observed curve · about \d+ (s|min) left/.test(document.getElementById('clu-progress-text').textContent), null, { timeout: 10000 });
  await page.click('#clu-cancel');
  await page.waitForFunction(() => document.getElementById('clu-progress-text').textContent === 'Cancelled.', null, { timeout: 5000 });
  await settle(page);
  // A bad largest distance: a clear message, and the events stay loaded.
  await page.fill('#clu-rmax', '-5');
  await page.click('#clu-run');
  await page.waitForSelector('#error-banner', { state: 'visible', timeout: 5000 });
  assert.match(await page.textContent('#error-text'), /largest distance must be a number of metres above 0/);
  assert.equal(await summaryNumber(page, 'n_events'), 200000);
  assert.deepEqual(log.pageErrors, []);
});

test('a long scan asks first with faster settings; while it runs it says how long is left', async () => {
  const { page, log } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', { name: 'many.csv', mimeType: 'text/csv', buffer: uniformCsv(20000, 99) }));
  await page.fill('#hs-sims', '99999');
  await page.click('#hs-scan-run');
  await page.waitForSelector('#hs-scan-estimate', { state: 'visible', timeout: 60000 });
  const text = await page.textContent('#hs-scan-estimate-text');
  assert.match(text, /^The 99,999 chance runs will take (about \d[\d.,]* (min|h)|\d+ s) \(one took/);
  console.log(`# scan: ${text}`);
  assert.equal(await page.isVisible('#hs-faster-n_sim-199'), true);
  assert.equal(await page.isVisible('#hs-faster-max_share-0_25'), true);
  await page.locator('#hs-scan').screenshot({ path: join(OUT, 'scan-estimate.png') });
  await page.click('#hs-faster-max_share-0_25');
  await page.waitForFunction(() => /^Set to biggest circle 25 % of the population/.test(document.getElementById('hs-scan-progress-text').textContent), null, { timeout: 5000 });
  assert.equal(await page.inputValue('#hs-share'), '25');
  assert.equal(await page.isVisible('#hs-scan-estimate'), false);
  await settle(page);
  await page.click('#hs-scan-run');
  await page.waitForSelector('#hs-scan-estimate', { state: 'visible', timeout: 60000 });
  await page.click('#hs-faster-n_sim-199');
  assert.equal(await page.inputValue('#hs-sims'), '199');
  await settle(page);
  // Run it when asked: the time left shows while it runs; then Cancel.
  await page.fill('#hs-sims', '99999');
  await page.click('#hs-scan-run');
  await page.waitForSelector('#hs-scan-estimate', { state: 'visible', timeout: 60000 });
  await page.click('#hs-scan-estimate-go');
  await page.waitForFunction(() => /^[\d,]+ of 99,999 chance runs · about [\d.,]+ (s|min|h) left$/.test(document.getElementById('hs-scan-progress-text').textContent), null, { timeout: 30000 });
  const running = await page.textContent('#hs-scan-progress-text');
  console.log(`# scan running: ${running}`);
  assert.equal(await page.isVisible('#hs-scan-estimate'), false);
  await page.click('#hs-scan-cancel');
  await page.waitForFunction(() => /^Cancelled/.test(document.getElementById('hs-scan-progress-text').textContent), null, { timeout: 5000 });
  assert.deepEqual(log.pageErrors, []);
});
