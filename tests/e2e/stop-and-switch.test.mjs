// The demo and one's own files replace each other cleanly; Cancel stops any
// work within half a second, also one long step on a large pattern; a long
// envelope run says how long it will take before it starts.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { readFileSync } from 'node:fs';
import { launch, openPage, loadDemo, act, settle, summaryNumber, uniformCsv, FIXTURES, OUT, DEMO_DIR } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('own events after the demo close the demo; events outside one\'s own study area are said plainly, and the area can be dropped', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  // One's own (planar) file after the demo: the demo's area and population go with it.
  await act(page, () => page.setInputFiles('#events-file', join(FIXTURES, 'user-points.csv')));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await summaryNumber(page, 'n_events'), 9);
  assert.equal(await page.textContent('#area-name'), '');
  assert.equal(await page.textContent('#controls-name'), '');
  // One's own lon/lat events and boundary, then events of another place: all outside it.
  const lines = readFileSync(join(DEMO_DIR, 'cases.csv'), 'utf8').trim().split(/\r?\n/);
  await act(page, () => page.setInputFiles('#events-file', { name: 'cases.csv', mimeType: 'text/csv', buffer: Buffer.from(lines.join('\n')) }));
  await act(page, () => page.setInputFiles('#area-file', { name: 'my-area.geojson', mimeType: 'application/geo+json', buffer: readFileSync(join(DEMO_DIR, 'town-boundary.geojson')) }));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await summaryNumber(page, 'n_events'), 1500);
  const lon = lines[0].split(',').indexOf('longitude');
  const moved = [lines[0], ...lines.slice(1).map((l) => { const f = l.split(','); f[lon] = String(Number(f[lon]) + 2); return f.join(','); })].join('\n');
  await act(page, () => page.setInputFiles('#events-file', { name: 'elsewhere.csv', mimeType: 'text/csv', buffer: Buffer.from(moved) }));
  assert.equal(await page.isVisible('#error-banner'), true);
  const text = await page.textContent('#error-text');
  assert.match(text, /elsewhere\.csv does not fit the study area my-area\.geojson/);
  assert.match(text, /lie outside the study area that is loaded now/);
  assert.doesNotMatch(text, /none of the .* rows could be used/);
  assert.equal(await summaryNumber(page, 'n_events'), 1500, 'the previous events are still loaded');
  assert.equal(await page.isVisible('#error-action'), true);
  assert.match(await page.textContent('#error-action'), /Drop that study area/);
  await page.screenshot({ path: join(OUT, 'switch-outside-area.png') });
  await act(page, () => page.click('#error-action'));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await summaryNumber(page, 'n_events'), 1500);
  assert.match(await page.textContent('#events-name'), /elsewhere\.csv/);
  assert.equal(await page.isChecked('#area-mode-hull'), true);
  // And the demo again, straight after: it replaces the whole session.
  await loadDemo(page);
  assert.equal(await summaryNumber(page, 'n_events'), 1500);
  assert.match(await page.textContent('#events-name'), /cases\.csv \(demo\)/);
  assert.match(await page.textContent('#area-name'), /town-boundary/);
  assert.deepEqual(log.pageErrors, []);
});

test('own events (planar) first, then the demo: the demo loads', async () => {
  const { page, log } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', join(FIXTURES, 'user-points.csv')));
  assert.equal(await summaryNumber(page, 'n_events'), 9);
  await loadDemo(page);
  assert.equal(await summaryNumber(page, 'n_events'), 1500);
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.deepEqual(log.pageErrors, []);
});

/** Clicks the Cancel beside the progress bar once it shows, and returns the
 * milliseconds from the click until the work has stopped. */
async function cancelAndTime(page) {
  await page.waitForSelector('#busy-cancel', { state: 'visible', timeout: 60000 });
  return page.evaluate(() => new Promise((resolve) => {
    const t0 = performance.now();
    document.getElementById('busy-cancel').click();
    // Stopped: the status line says so (the engine may then take a moment
    // to read the files again, which is not the work that was cancelled).
    const poll = () => {
      if (/cancelled/i.test(document.getElementById('status').textContent)) resolve(performance.now() - t0);
      else setTimeout(poll, 5);
    };
    poll();
  }));
}

test('a long single step (bandwidth cross-validation, 200,000 events) shows the share done, and Cancel stops it within half a second', async () => {
  const { page, log } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', { name: 'many.csv', mimeType: 'text/csv', buffer: uniformCsv(200000) }));
  assert.equal(await summaryNumber(page, 'n_events'), 200000);
  await page.selectOption('#hs-method', 'likelihood_cv');
  await page.click('#hs-surface-run');
  await page.waitForSelector('#busy', { state: 'visible', timeout: 60000 });
  assert.match(await page.textContent('#busy-text'), /computing the surface/);
  // The working line stays in view wherever the page is scrolled.
  assert.equal(await page.locator('#busy-cancel').isVisible(), true);
  const box = await page.locator('#busy-cancel').boundingBox();
  assert.ok(box && box.y >= 0 && box.y < 80, `Cancel at y = ${box && box.y}`);
  // One long step says how far it has got: the bar fills, the line gives the share done.
  await page.waitForSelector('#progress.known', { timeout: 60000 });
  const first = await page.evaluate(() => parseFloat(document.querySelector('#progress .progress-bar').style.width));
  await page.waitForFunction((w) => parseFloat(document.querySelector('#progress .progress-bar').style.width) > w, first, { timeout: 60000 });
  assert.match(await page.textContent('#busy-text'), /computing the surface… \d+ % done/);
  await page.screenshot({ path: join(OUT, 'cancel-busy.png') });
  const ms = await cancelAndTime(page);
  assert.ok(ms < 500, `Cancel took ${ms.toFixed(0)} ms`);
  // The engine comes back with the same events, and answers again.
  await page.waitForFunction(() => /Cancelled/.test(document.getElementById('status').textContent), null, { timeout: 120000 });
  await settle(page);
  assert.equal(await summaryNumber(page, 'n_events'), 200000);
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.deepEqual(log.pageErrors, []);
});

test('a long envelope run asks first, with the faster settings; Cancel there and while it runs stops it', async () => {
  const { page, log } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', { name: 'many.csv', mimeType: 'text/csv', buffer: uniformCsv(60000, 777) }));
  await page.fill('#clu-nsim', '999');
  await page.click('#clu-run');
  await page.waitForSelector('#clu-estimate', { state: 'visible', timeout: 120000 });
  const text = await page.textContent('#clu-estimate-text');
  // Said before the observed curve is computed, from a quick measurement;
  // at 60,000 uniform events the automatic choice counts pairs on a fine grid.
  assert.match(text, /This run will take (about \d[\d.,]* (min|h)|\d+ s): one curve takes (about \d+ min|\d+ s) with 60,000 events \(timed on 3,000 of them, pairs counted on a fine grid\)/);
  assert.match(await page.textContent('#clu-estimate'), /fewer simulations/);
  await page.screenshot({ path: join(OUT, 'envelope-estimate.png') });
  await page.click('#clu-estimate-stop');
  await page.waitForFunction(() => document.getElementById('clu-progress-text').textContent === 'Cancelled.', null, { timeout: 5000 });
  // Run it anyway, then stop it while it simulates.
  await settle(page);
  await page.click('#clu-run');
  await page.waitForSelector('#clu-estimate', { state: 'visible', timeout: 120000 });
  await page.click('#clu-estimate-go');
  await page.waitForFunction(() => Number(document.getElementById('clu-progress').value) >= 1 || document.body.dataset.busy === '1', null, { timeout: 120000 });
  const ms = await page.evaluate(() => new Promise((resolve) => {
    const t0 = performance.now();
    document.getElementById('clu-cancel').click();
    // Stopped: the status line says so (the engine may then take a moment
    // to read the files again, which is not the work that was cancelled).
    const poll = () => {
      if (/cancelled/i.test(document.getElementById('status').textContent)) resolve(performance.now() - t0);
      else setTimeout(poll, 5);
    };
    poll();
  }));
  assert.ok(ms < 500, `Cancel took ${ms.toFixed(0)} ms`);
  await page.waitForFunction(() => document.getElementById('clu-progress-text').textContent === 'Cancelled.', null, { timeout: 5000 });
  assert.deepEqual(log.pageErrors, []);
});
