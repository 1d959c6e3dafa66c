// (Is it clustered?) In the page: load the demo, run an envelope test with a
// few simulations and see the chart drawn and the verdict "clustered"; start
// a long run and cancel it, then run again; save the CSV and the PNG and read
// them back; quadrat and Clark–Evans boxes; results cleared when data change.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { launch, openPage, loadDemo, act, settle, frame, outDir } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

const OBSERVED = [176, 58, 18]; // colour of the observed curve (src/web/clustering.rs)

/** Pixels of the chart canvas: non-white, and of the observed-curve colour. */
async function chartCensus(page) {
  return page.evaluate((obs) => {
    const c = document.getElementById('clu-chart');
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let ink = 0;
    let observed = 0;
    for (let i = 0; i < d.length; i += 4) {
      if (d[i] !== 255 || d[i + 1] !== 255 || d[i + 2] !== 255) ink++;
      if (d[i] === obs[0] && d[i + 1] === obs[1] && d[i + 2] === obs[2]) observed++;
    }
    return { ink, observed, width: c.width, height: c.height };
  }, OBSERVED);
}

async function runEnvelope(page, nSim) {
  await page.fill('#clu-nsim', String(nSim));
  await page.click('#clu-run');
  await page.waitForFunction(() => ['done', 'error', 'cancelled'].includes(document.getElementById('clustering-body').dataset.run), null, { timeout: 180000 });
  assert.equal(await page.getAttribute('#clustering-body', 'data-run'), 'done', await page.textContent('#error-text'));
  await frame(page);
}

test('envelope run on the demo: chart drawn, verdict "clustered", CSV and PNG saved', async () => {
  const out = outDir();
  const { page, log } = await openPage(browser, { width: 1366, height: 900 });
  await loadDemo(page);
  assert.equal(await page.isDisabled('#clu-run'), false);
  // A fresh seed from the browser's generator is shown and editable.
  const seed0 = await page.inputValue('#clu-seed');
  assert.match(seed0, /^\d+$/);
  await page.fill('#clu-seed', '777');
  assert.equal(await page.isChecked('#clu-fresh'), false, 'typing a seed keeps it for the next run');
  await runEnvelope(page, 19);
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  const verdict = await page.textContent('#clu-verdict');
  assert.match(verdict, /^Clustered/, verdict);
  assert.equal(await page.getAttribute('#clu-verdict', 'data-outcome'), 'clustered');
  assert.match(await page.textContent('#clu-caveats'), /population at risk is uneven/);
  assert.equal((await page.textContent('#clu-details dd[data-key="seed"]')).trim(), '777');
  assert.match(await page.textContent('#clu-details dd[data-key="mad_p"]'), /p = 0\.05 /, 'with 19 simulations the smallest p is 1/20');
  assert.equal(await page.getAttribute('#clu-chart', 'data-drawn'), '1');
  const census = await chartCensus(page);
  assert.ok(census.ink > census.width * census.height * 0.05, `chart mostly blank: ${JSON.stringify(census)}`);
  assert.ok(census.observed > 100, `observed curve not drawn: ${JSON.stringify(census)}`);
  assert.match(await page.getAttribute('#clu-chart', 'aria-label'), /L\(r\) − r \(m\)/);
  await page.locator('#clustering').screenshot({ path: join(out, 'clustering-envelope.png') });

  // Same seed again: identical verdict text (reproducible).
  await runEnvelope(page, 19);
  assert.equal(await page.textContent('#clu-verdict'), verdict);

  // Views: K as itself in km, pointwise band labelled as not a test.
  await page.selectOption('#clu-function', 'k');
  await runEnvelope(page, 19);
  await page.selectOption('#clu-units', 'km');
  await page.check('#clu-kind-pointwise');
  await frame(page);
  assert.match(await page.getAttribute('#clu-chart', 'aria-label'), /K\(r\) − πr² \(km²\).*pointwise band — not a test/);
  assert.match(await page.textContent('#clu-band-note'), /not a test/);
  await page.selectOption('#clu-view', 'function');
  await frame(page);
  assert.match(await page.getAttribute('#clu-chart', 'aria-label'), /K\(r\) \(km²\) against distance r \(km\)/);
  assert.ok((await chartCensus(page)).observed > 100);
  await page.locator('#clustering').screenshot({ path: join(out, 'clustering-k-pointwise-km.png') });

  // CSV: one row per distance, numbers as the engine returned them.
  const [csvDl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#clu-csv'))]);
  const csvPath = join(out, 'clustering-envelope.csv');
  await csvDl.saveAs(csvPath);
  assert.match(csvDl.suggestedFilename(), /^cloister-envelope-k-19sims-\d{4}-\d{2}-\d{2}-seed777\.csv$/);
  const lines = readFileSync(csvPath, 'utf8').trim().split(/\r?\n/);
  assert.equal(lines[0], 'r_m,observed,csr,global_low,global_high,pointwise_low,pointwise_high,simulation_mean');
  assert.equal(lines.length, 52, '51 distances + header');
  const row = lines[10].split(',').map(Number);
  assert.ok(Math.abs(row[2] - Math.PI * row[0] * row[0]) < 1e-6 * row[2], 'CSR column of K is πr²');
  assert.ok(row[5] <= row[6] && row[1] > 0);

  // PNG: a real PNG of the canvas size.
  const [pngDl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#clu-png'))]);
  const pngPath = join(out, 'clustering-downloaded-chart.png');
  await pngDl.saveAs(pngPath);
  const png = readFileSync(pngPath);
  assert.deepEqual([...png.subarray(1, 4)], [0x50, 0x4e, 0x47]);
  assert.equal(png.readUInt32BE(16), census.width);
  assert.equal(png.readUInt32BE(20), census.height);

  // The drawing export on the page's thread: a missing canvas or an incomplete
  // result is a thrown error with a code, and the engine keeps working.
  const errs = await page.evaluate(() => {
    const out = [];
    const eng = window.Cloister.engine();
    for (const [id, res] of [['no-such-canvas', { r: [0, 1], observed: [0, 1] }], ['clu-chart', { function: 'l', r: [0, 1, 2], observed: [0, 1] }]]) {
      try { eng.drawEnvelopeChart(id, res, {}); out.push('no error'); } catch (e) { out.push(`${e.code}: ${e.message}`); }
    }
    out.push(eng.version());
    return out;
  });
  assert.match(errs[0], /^chart: .*no canvas with id "no-such-canvas"/);
  assert.match(errs[1], /^chart: .*incomplete/);
  assert.match(errs[2], /^\d/);

  // New data clear the results.
  await act(page, () => page.click('#area-mode-box'));
  assert.equal(await page.isVisible('#clu-env-result'), false);
  assert.equal(await page.getAttribute('#clustering-body', 'data-run'), 'idle');
  assert.deepEqual(log.pageErrors, []);
  assert.equal(log.requests.filter((u) => !/^(file|blob|data):/.test(u)).length, 0);
});

test('a long run can be cancelled and the page recovers', async () => {
  const out = outDir();
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  await page.fill('#clu-nsim', '9999');
  await page.click('#clu-run');
  // So many simulations take long: the page asks first (the estimate), then runs.
  await page.waitForSelector('#clu-estimate', { state: 'visible', timeout: 60000 });
  await page.click('#clu-estimate-go');
  await page.waitForFunction(() => Number(document.getElementById('clu-progress').value) > 0, null, { timeout: 60000 });
  assert.equal(await page.getAttribute('#clustering-body', 'data-run'), 'running');
  assert.equal(await page.isDisabled('#clu-run'), true);
  assert.match(await page.textContent('#clu-progress-text'), /\/ 9,999 simulations/);
  await page.locator('#clu-env-box').screenshot({ path: join(out, 'clustering-running.png') });
  await page.click('#clu-cancel');
  await page.waitForFunction(() => document.getElementById('clustering-body').dataset.run === 'cancelled', null, { timeout: 30000 });
  await settle(page);
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.equal(await page.isDisabled('#clu-run'), false);
  assert.equal(await page.isDisabled('#clu-cancel'), true);
  // A new run works; with "new seed for every run" ticked (the default) it
  // uses a fresh seed, and the result names the seed it used.
  assert.equal(await page.isChecked('#clu-fresh'), true);
  const before = await page.inputValue('#clu-seed');
  await runEnvelope(page, 19);
  assert.match(await page.textContent('#clu-verdict'), /^Clustered/);
  const used = await page.inputValue('#clu-seed');
  assert.notEqual(used, before);
  assert.equal((await page.textContent('#clu-details dd[data-key="seed"]')).trim(), used);
  assert.deepEqual(log.pageErrors, []);
});

test('a run spread over helper workers gives exactly the one-worker result', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  const got = await page.evaluate(async () => {
    const spec = (parallel) => ({
      start: 'envelopeStart', step: 'envelopeStep', finish: 'envelopeFinish',
      params: { n_sim: 39, seed: 1234567, function: 'l' },
      ...(parallel ? { parallel: { share: 'envelopeShare', helperStart: 'envelopeHelperStart', simulate: 'envelopeSimulate', add: 'envelopeAdd' } } : {}),
    });
    let workers = 0;
    const a = await window.Cloister.runJob(spec(true), (p) => { workers = Math.max(workers, p.workers || 0); }).promise;
    const b = await window.Cloister.runJob(spec(false), () => {}).promise;
    return { workers, cores: navigator.hardwareConcurrency, a: JSON.stringify([a.pointwise_lo, a.pointwise_hi, a.mad, a.dclf]), b: JSON.stringify([b.pointwise_lo, b.pointwise_hi, b.mad, b.dclf]) };
  });
  // With more than one core the worker starts helpers (progress reports
  // how many workers computed); the results must not depend on it.
  if (got.cores > 1) assert.ok(got.workers >= 2, `workers: ${got.workers}`);
  assert.equal(got.a, got.b);
  assert.deepEqual(log.pageErrors, []);
  assert.deepEqual(log.requests.filter((u) => !u.startsWith('file:') && !u.startsWith('blob:') && !u.startsWith('data:')), []);
});

test('pair counting on a fine grid: chosen in the form, said in the result, split runs equal one-worker runs', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  // Choosing the grid sets the translation correction (the only one it has).
  await page.selectOption('#clu-estimator', 'binned');
  assert.equal(await page.inputValue('#clu-correction'), 'translation');
  assert.match(await page.textContent('#clu-estimator + small'), /translation correction only/);
  await page.fill('#clu-seed', '4242');
  await runEnvelope(page, 19);
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  const said = await page.textContent('#clu-details dd[data-key="estimator"]');
  assert.match(said, /^counts on a fine grid \(chosen\); cells of [\d.,]+\s(m|km); K and L within 0\.1 % of counting every pair from [\d.,]+\s(m|km) on/, said);
  assert.match(await page.textContent('#clu-verdict'), /^Clustered/);
  // Another correction goes back to automatic, which counts every pair on the demo.
  await page.selectOption('#clu-correction', 'isotropic');
  assert.equal(await page.inputValue('#clu-estimator'), 'auto');
  await runEnvelope(page, 19);
  assert.match(await page.textContent('#clu-details dd[data-key="estimator"]'), /^every pair \(automatic: about [\d,]+ pairs/);
  // G has no grid: the choice is off.
  await page.selectOption('#clu-function', 'nearest_neighbour');
  assert.equal(await page.isDisabled('#clu-estimator'), true);
  const got = await page.evaluate(async () => {
    const spec = (parallel) => ({
      start: 'envelopeStart', step: 'envelopeStep', finish: 'envelopeFinish',
      params: { n_sim: 19, seed: 99, function: 'l', estimator: 'binned', correction: 'translation' },
      ...(parallel ? { parallel: { share: 'envelopeShare', helperStart: 'envelopeHelperStart', simulate: 'envelopeSimulate', add: 'envelopeAdd' } } : {}),
    });
    const a = await window.Cloister.runJob(spec(true), () => {}).promise;
    const b = await window.Cloister.runJob(spec(false), () => {}).promise;
    return { est: [a.estimator, b.estimator], a: JSON.stringify([a.pointwise_lo, a.pointwise_hi, a.mad, a.dclf]), b: JSON.stringify([b.pointwise_lo, b.pointwise_hi, b.mad, b.dclf]) };
  });
  assert.deepEqual(got.est, ['binned', 'binned']);
  assert.equal(got.a, got.b);
  assert.deepEqual(log.pageErrors, []);
  assert.deepEqual(log.requests.filter((u) => !/^(file|blob|data):/.test(u)), []);
});

test('quadrat and Clark–Evans boxes show finite numbers for the demo', async () => {
  const out = outDir();
  const { page, log } = await openPage(browser, { width: 1366, height: 900 });
  await loadDemo(page);
  await page.fill('#clu-quad-nsim', '99');
  await act(page, () => page.click('#clu-quad-run'));
  assert.equal(await page.isVisible('#error-banner'), false, await page.textContent('#error-text'));
  assert.match(await page.textContent('#clu-quad-result dd[data-key="chi_square"]'), /^[\d,.]+ on \d+ degrees of freedom/);
  assert.match(await page.textContent('#clu-quad-result dd[data-key="p_mc"]'), /0\.01 for clustering/);
  assert.match(await page.textContent('#clu-quad-warnings'), /fewer than 5/);
  await page.fill('#clu-nx', '4');
  await page.fill('#clu-ny', '3');
  await act(page, () => page.click('#clu-quad-run'));
  assert.match(await page.textContent('#clu-quad-result dd[data-key="grid"]'), /^4 × 3 cells/);
  await page.fill('#clu-ce-nsim', '99');
  await act(page, () => page.click('#clu-ce-run'));
  const ce = await page.textContent('#clu-ce-result dd[data-key="donnelly"]');
  const m = /R = ([\d.]+), z = (−|-)?([\d.]+)/.exec(ce);
  assert.ok(m, ce);
  assert.ok(Number(m[1]) < 1 && Number(m[1]) > 0.5, ce);
  assert.match(await page.textContent('#clu-ce-result dd[data-key="naive"]'), /R = 0\.\d+/);
  await page.locator('#clu-quad-box').screenshot({ path: join(out, 'clustering-quadrat.png') });
  await page.locator('#clu-ce-box').screenshot({ path: join(out, 'clustering-clark-evans.png') });
  // Bad input: a clear message, no crash.
  await page.fill('#clu-ce-nsim', '100000');
  await act(page, () => page.click('#clu-ce-run'));
  assert.match(await page.textContent('#error-text'), /number of simulations must be a whole number from 0 to 9999/);
  assert.deepEqual(log.pageErrors, []);
});

test('on a high-density screen the chart has a pixel per screen pixel and the same layout', async () => {
  const out = outDir();
  const census = {};
  for (const dpr of [1, 2]) {
    const { page, context, log } = await openPage(browser, { width: 1366, height: 900, deviceScaleFactor: dpr });
    await loadDemo(page);
    await page.fill('#clu-seed', '777');
    await runEnvelope(page, 19);
    assert.equal(await page.getAttribute('#clu-chart', 'data-drawn'), '1');
    const box = await page.locator('#clu-chart').boundingBox();
    census[dpr] = { ...(await chartCensus(page)), css: [Math.round(box.width), Math.round(box.height)] };
    assert.equal(census[dpr].width, census[dpr].css[0] * dpr, `canvas width at ${dpr}x`);
    assert.equal(census[dpr].height, census[dpr].css[1] * dpr, `canvas height at ${dpr}x`);
    if (dpr === 2) await page.locator('#clu-chart').screenshot({ path: join(out, 'clustering-chart-2x.png') });
    assert.deepEqual(log.pageErrors, []);
    await context.close();
  }
  // Same picture, scaled: the same shown size and about 4x the pixels of
  // ink (everything twice as wide and twice as long). The observed curve's
  // exact colour grows more than 4x, because a wider line has relatively
  // fewer antialiased edge pixels; it must at least not shrink relatively.
  assert.deepEqual(census[2].css, census[1].css);
  const inkRatio = census[2].ink / census[1].ink;
  assert.ok(inkRatio > 3 && inkRatio < 5, `ink: ${census[1].ink} px at 1x, ${census[2].ink} px at 2x`);
  const obsRatio = census[2].observed / census[1].observed;
  assert.ok(obsRatio > 3 && obsRatio < 8, `observed: ${census[1].observed} px at 1x, ${census[2].observed} px at 2x`);
});

test('at the narrowest page width the chart legend wraps instead of running off the canvas', async () => {
  // The page lays out at 1000 px at least; the chart then has about 560 px.
  const { page, context, log } = await openPage(browser, { width: 1000, height: 900 });
  await loadDemo(page);
  await page.fill('#clu-seed', '777');
  await runEnvelope(page, 19);
  const edge = await page.evaluate(() => {
    const c = document.getElementById('clu-chart');
    const w = 6;
    const d = c.getContext('2d').getImageData(c.width - w, 0, w, c.height).data;
    let ink = 0;
    for (let i = 0; i < d.length; i += 4) if (d[i] !== 255 || d[i + 1] !== 255 || d[i + 2] !== 255) ink++;
    return { ink, width: c.width };
  });
  assert.ok(edge.width < 700, `a narrow chart (${edge.width} px)`);
  assert.equal(edge.ink, 0, 'nothing is drawn in the last 6 px columns (no clipped legend text)');
  await page.locator('#clu-chart').screenshot({ path: join(outDir(), 'clustering-chart-narrow.png') });
  assert.deepEqual(log.pageErrors, []);
  await context.close();
});
