// "Close in space and time": the near-repeat table and the Knox test on the
// demo in the page: the shaded table and its verdict, the Knox line, the CSV
// (counts only, no coordinate), Cancel, and a run spread over helper
// workers equal to the one-worker run.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { readFileSync } from 'node:fs';
import { launch, openPage, loadDemo, settle, act, OUT } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('near-repeat table on the demo: a shaded grid with numbers, raised cells outlined, the verdict, the Knox line, a CSV without coordinates', async () => {
  const { page, log } = await openPage(browser);
  assert.equal(await page.isVisible('#st-nr-box'), true);
  assert.equal(await page.isDisabled('#st-nr-run'), true, 'nothing loaded: cannot run');
  await loadDemo(page);
  assert.equal(await page.isDisabled('#st-nr-run'), false);
  // Limits come from the engine's parameter list.
  assert.equal(await page.getAttribute('#st-nr-nperm', 'max'), '9999');
  await page.fill('#st-nr-band-m', '100');
  await page.fill('#st-nr-max-m', '400');
  await page.fill('#st-nr-band-days', '7');
  await page.fill('#st-nr-max-days', '28');
  await page.fill('#st-nr-nperm', '49');
  await page.fill('#st-nr-seed', '2');
  await page.click('#st-nr-run');
  await page.waitForFunction(() => !document.getElementById('st-nr-result').hidden, null, { timeout: 120000 });
  await settle(page);
  const verdict = await page.textContent('#st-nr-verdict');
  assert.match(verdict, /^After an event, the risk of another within \d+ m stays raised for about \d+ days/);
  assert.equal(await page.getAttribute('#st-nr-verdict', 'data-outcome'), 'raised');
  const cells = await page.$$eval('#st-nr-table td', (tds) => tds.map((td) => ({
    text: td.textContent, raised: td.classList.contains('raised'), bg: getComputedStyle(td).backgroundColor, fg: getComputedStyle(td).color,
  })));
  assert.equal(cells.length, 5 * 4);
  assert.ok(cells.some((c) => c.raised), 'some cells outlined');
  for (const c of cells) assert.match(c.text, /^\d[\d,]*(×[\d.,]+|–)$/, c.text);
  // Readable: text colour contrasts with the fill (WCAG relative luminance ratio ≥ 4.5).
  const lum = (rgb) => {
    const [r, g, b] = rgb.match(/\d+(\.\d+)?/g).slice(0, 3).map((v) => Number(v) / 255).map((v) => (v <= 0.03928 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4));
    return 0.2126 * r + 0.7152 * g + 0.0722 * b;
  };
  for (const c of cells) {
    const [a, b] = [lum(c.bg), lum(c.fg)].sort((x, y) => y - x);
    assert.ok((a + 0.05) / (b + 0.05) >= 4.5, `contrast ${c.bg} / ${c.fg}`);
  }
  assert.match(await page.textContent('#st-nr-progress-text'), /49 permutations done/);
  assert.match(await page.textContent('#st-nr-box'), /not a cause|does not say why/);

  // The CSV: one row per cell, counts and band limits only.
  const [dl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#st-nr-csv'))]);
  const path = join(OUT, 'near-repeat-table.csv');
  await dl.saveAs(path);
  const lines = readFileSync(path, 'utf8').trim().split(/\r?\n/);
  assert.match(lines[0], /^distance_band,time_band,/);
  assert.equal(lines.length, 21);
  const coords = new Set();
  for (const line of readFileSync(new URL('../../demo-data/cases.csv', import.meta.url), 'utf8').trim().split(/\r?\n/).slice(1)) {
    const f = line.split(',');
    coords.add(f[1]); coords.add(f[2]);
    coords.add(String(Number(f[1]))); coords.add(String(Number(f[2])));
  }
  for (const line of lines.slice(1)) for (const v of line.split(',')) assert.ok(!coords.has(v), `CSV holds ${v}, a coordinate`);

  // The Knox line.
  await page.fill('#st-knox-m', '100');
  await page.fill('#st-knox-days', '7');
  await page.fill('#st-knox-nperm', '49');
  await page.click('#st-knox-run');
  await page.waitForFunction(() => !document.getElementById('st-knox-result').hidden, null, { timeout: 120000 });
  assert.match(await page.textContent('#st-knox-line'), /^More pairs of events are within 100 m and 7 days of each other than chance gives/);
  assert.match(await page.textContent('#st-knox-details'), /Permutation p0\.020? \(0 of 49/);
  await page.locator('#st-nr-box').screenshot({ path: join(OUT, 'spacetime-near-repeat.png') });
  assert.deepEqual(log.pageErrors, []);
});

test('a long near-repeat run shows progress and can be cancelled', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  await page.fill('#st-nr-band-m', '100');
  await page.fill('#st-nr-max-m', '2000');
  await page.fill('#st-nr-band-days', '7');
  await page.fill('#st-nr-max-days', '70');
  await page.fill('#st-nr-nperm', '9999');
  await page.fill('#st-nr-seed', '5');
  await page.click('#st-nr-run');
  await page.waitForFunction(() => Number(document.getElementById('st-nr-progress').value) >= 1, null, { timeout: 120000 });
  assert.match(await page.textContent('#st-nr-progress-text'), /\/ 9,999 permutations/);
  const t0 = Date.now();
  await page.click('#st-nr-cancel');
  await page.waitForFunction(() => document.getElementById('st-nr-progress-text').textContent === 'Cancelled.', null, { timeout: 5000 });
  assert.ok(Date.now() - t0 < 2000, `cancel took ${Date.now() - t0} ms`);
  assert.equal(await page.isDisabled('#st-nr-run'), false);
  assert.equal(await page.isVisible('#st-nr-result'), false);
  assert.deepEqual(log.pageErrors, []);
});

test('near-repeat and Knox runs spread over helper workers give exactly the one-worker results', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  const got = await page.evaluate(async () => {
    const out = {};
    for (const [m, params] of [['nearRepeat', { n_perm: 199, seed: 99, band_m: 100, max_distance_m: 500, band_days: 7, max_days: 35 }], ['knox', { n_perm: 199, seed: 99 }]]) {
      const spec = (parallel) => ({
        start: `${m}Start`, step: `${m}Step`, finish: `${m}Finish`, params,
        ...(parallel ? { parallel: { share: `${m}Share`, helperStart: `${m}HelperStart`, simulate: `${m}Simulate`, add: `${m}Add` } } : {}),
      });
      let workers = 0;
      const a = await window.Cloister.runJob(spec(true), (p) => { workers = Math.max(workers, p.workers || 0); }).promise;
      const b = await window.Cloister.runJob(spec(false), () => {}).promise;
      out[m] = { workers, a: JSON.stringify(a), b: JSON.stringify(b) };
    }
    out.cores = navigator.hardwareConcurrency;
    return out;
  });
  for (const m of ['nearRepeat', 'knox']) {
    if (got.cores > 1) assert.ok(got[m].workers >= 2, `${m} workers: ${got[m].workers}`);
    assert.equal(got[m].a, got[m].b, m);
  }
  assert.deepEqual(log.pageErrors, []);
});
