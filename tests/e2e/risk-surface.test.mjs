// "Compared with the population": the relative-risk surface on the demo in
// the page: drawn on the map with its legend, verdict in words, a long run
// cancelled, the contours exported with no case or control location.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { launch, openPage, loadDemo, act, frame, settle, outDir, DEMO_DIR, ROOT } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

async function mapPixels(page, name) {
  await frame(page);
  return page.evaluate((name) => {
    const c = document.getElementById('map');
    window.__px = window.__px || {};
    window.__px[name] = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    return c.width * c.height;
  }, name);
}

async function changed(page, a, b) {
  return page.evaluate(([a, b]) => {
    const p = window.__px[a], q = window.__px[b];
    if (p.length !== q.length) return p.length / 4;
    let n = 0;
    for (let i = 0; i < p.length; i += 4) if (p[i] !== q[i] || p[i + 1] !== q[i + 1] || p[i + 2] !== q[i + 2]) n++;
    return n;
  }, [a, b]);
}

test('relative-risk surface on the demo: map layer, legend in risk ratios, pointwise label, verdict, export without locations', async () => {
  const { page, log } = await openPage(browser, { height: 1000 });
  assert.equal(await page.isDisabled('#rr-run'), true, 'nothing loaded: cannot run');
  await loadDemo(page);
  assert.equal(await page.isDisabled('#rr-run'), false);
  const total = await mapPixels(page, 'before');
  await page.fill('#rr-nsim', '19');
  await page.fill('#rr-seed', '3');
  await page.selectOption('#rr-cells', '128');
  await page.click('#rr-run');
  await page.waitForFunction(() => !document.getElementById('rr-result').hidden, null, { timeout: 120000 });
  await settle(page);
  const verdict = await page.textContent('#rr-verdict');
  // Same settings as the Node test (tests/node/risk-surface.test.mjs).
  assert.match(verdict, /^The risk is not the same everywhere: the global test of constant risk gives p = 0\.050 \(19 random labellings\)\./);
  assert.match(verdict, /A raised risk is not a cause\./);
  assert.match(await page.textContent('#rr-progress-text'), /19 random labellings done/);
  // Legend in risk ratios (not logs), the masked class and the POINTWISE lines.
  const legend = await page.textContent('#rr-legend');
  assert.match(legend, /below 0\.5/);
  assert.match(legend, /2 or more/);
  assert.match(legend, /too few controls/);
  assert.match(legend, /POINTWISE raised risk/);
  assert.match(await page.textContent('#rr-pointwise'), /POINTWISE/);
  assert.match(await page.textContent('#legend'), /Risk ratio: blue lower, orange higher/);
  assert.match(await page.textContent('#legend'), /Raised risk, POINTWISE/);
  assert.match(await page.textContent('#rr-details'), /1,500 events, 3,000 controls/);
  // The layer changes the map; hiding it gives the map back.
  await mapPixels(page, 'surface');
  const diff = await changed(page, 'before', 'surface');
  assert.ok(diff > total * 0.05, `the surface changes at least 5 % of the map's pixels (${diff})`);
  await page.locator('#map-panel').screenshot({ path: join(outDir(), 'risk-surface-map.png') });
  await page.locator('#rr-box').screenshot({ path: join(outDir(), 'risk-surface-panel.png') });
  await page.uncheck('#rr-show');
  await mapPixels(page, 'hidden');
  assert.equal(await changed(page, 'before', 'hidden'), 0, 'hidden surface leaves no trace');
  await page.check('#rr-show');
  // Export: a download made in the page, contours only.
  const [download] = await Promise.all([page.waitForEvent('download'), page.click('#rr-export')]);
  assert.match(download.suggestedFilename(), /^cloister-risk-contours-\d{4}-\d{2}-\d{2}-seed3\.geojson$/);
  const text = readFileSync(await download.path(), 'utf8');
  const gj = JSON.parse(text);
  assert.deepEqual(gj.features.map((f) => f.properties.kind), ['raised', 'lowered', 'too_few_controls']);
  assert.ok(gj.features[0].geometry.coordinates.length >= 3, 'a raised contour at each planted cluster at least');
  const places = new Set();
  for (const f of ['cases.csv', 'population.csv']) {
    for (const line of readFileSync(join(DEMO_DIR, f), 'utf8').split('\n').slice(1)) {
      const m = line.match(/(-\d+\.\d{6}),(-\d+\.\d{6})/);
      if (m) places.add(`${m[1]},${m[2]}`);
    }
  }
  let vertices = 0;
  for (const f of gj.features) for (const poly of f.geometry.coordinates) for (const ring of poly) for (const [lon, lat] of ring) {
    vertices++;
    assert.ok(!places.has(`${lon.toFixed(6)},${lat.toFixed(6)}`), `a vertex is an original location: ${lon}, ${lat}`);
  }
  assert.ok(vertices > 50);
  // The sharing report can carry the surface's summary, in numbers only.
  await act(page, () => page.click('#share-mask'));
  await page.check('#share-risk');
  await act(page, () => page.click('[data-export="report:html"]'));
  assert.match(await page.textContent('#share-preview-list'), /relative-risk summary/);
  const [rep] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#share-save'))]);
  const html = readFileSync(await rep.path(), 'utf8');
  assert.match(html, /Relative risk compared with the population/);
  assert.match(html, /p = 0\.050 \(19 random labellings\)/);
  for (const place of places) assert.ok(!html.includes(place.split(',')[0]), `an original longitude in the report: ${place}`);
  assert.deepEqual(log.pageErrors, []);
});

test('a long relative-risk run can be cancelled, and what was loaded stays', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  await page.fill('#rr-nsim', '1999');
  await page.fill('#rr-seed', '5');
  await page.click('#rr-run');
  await page.waitForFunction(() => Number(document.getElementById('rr-progress').value) >= 5, null, { timeout: 120000 });
  await page.click('#rr-cancel');
  await page.waitForFunction(() => document.getElementById('rr-progress-text').textContent === 'Cancelled.', null, { timeout: 5000 });
  assert.equal(await page.isDisabled('#rr-run'), false);
  assert.equal(await page.isVisible('#rr-result'), false);
  // The data are still there: a short run works afterwards.
  await page.fill('#rr-nsim', '19');
  await page.click('#rr-run');
  await page.waitForFunction(() => !document.getElementById('rr-result').hidden, null, { timeout: 120000 });
  assert.deepEqual(log.pageErrors, []);
});

test('the risk-ratio colours: lightness falls evenly away from 1 and neighbouring classes stay apart for normal vision and the three dichromacies', () => {
  // Dichromacy matrices of Machado, Oliveira & Fernandes (2009) as in
  // palette.test.mjs (tests/e2e/fixtures/cvd-matrices.json); sRGB → CIELAB
  // (D65) by the standard formulas. Thresholds are common practice, not from
  // a source: neighbouring classes ΔE*ab ≥ 15, a class and its mirror on the
  // other side of 1 (e.g. below 0.5 against 2 or more) ≥ 25.
  const CVD = JSON.parse(readFileSync(join(ROOT, 'tests', 'e2e', 'fixtures', 'cvd-matrices.json'), 'utf8')).matrices;
  const VISION = { normal: [[1, 0, 0], [0, 1, 0], [0, 0, 1]], ...CVD };
  const text = readFileSync(join(ROOT, 'www', 'analyses', 'risk-surface.js'), 'utf8');
  const colours = JSON.parse(text.match(/const RR_COLOURS = (\[[^\]]*\]);/)[1].replace(/'/g, '"'));
  assert.equal(colours.length, 7);
  const toLinear = (c) => (c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4);
  const mul = (m, v) => m.map((row) => row[0] * v[0] + row[1] * v[1] + row[2] * v[2]);
  const XYZ = [[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]];
  const WHITE = XYZ.map((row) => row[0] + row[1] + row[2]);
  const lab = (h, v) => {
    const lin = mul(VISION[v], [1, 3, 5].map((i) => toLinear(parseInt(h.slice(i, i + 2), 16) / 255))).map((x) => Math.min(1, Math.max(0, x)));
    const f = mul(XYZ, lin).map((x, i) => x / WHITE[i]).map((t) => (t > 216 / 24389 ? Math.cbrt(t) : (24389 / 27 * t + 16) / 116));
    return [116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])];
  };
  const dE = (a, b, v) => Math.hypot(...lab(a, v).map((x, i) => x - lab(b, v)[i]));
  for (const v of Object.keys(VISION)) {
    const L = colours.map((c) => lab(c, v)[0]);
    for (let i = 0; i < 3; i++) {
      assert.ok(L[i] < L[i + 1], `${v}: lightness rises towards the middle on the lower side (${L})`);
      assert.ok(L[6 - i] < L[5 - i], `${v}: and on the upper side (${L})`);
    }
    for (let i = 0; i < 6; i++) assert.ok(dE(colours[i], colours[i + 1], v) >= 15, `${v}: classes ${i} and ${i + 1}`);
    for (let i = 0; i < 3; i++) assert.ok(dE(colours[i], colours[6 - i], v) >= 25, `${v}: class ${i} and its mirror`);
  }
});

test('relative-risk labellings spread over helper workers give exactly the one-worker surface', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  const got = await page.evaluate(async () => {
    const spec = (parallel) => ({
      start: 'riskSurfaceStart', step: 'riskSurfaceStep', finish: 'riskSurfaceFinish',
      params: { n_sim: 39, seed: 2468, cells: 64 },
      ...(parallel ? { parallel: { share: 'riskSurfaceShare', helperStart: 'riskSurfaceHelperStart', simulate: 'riskSurfaceSimulate', add: 'riskSurfaceAdd' } } : {}),
    });
    let workers = 0;
    const a = await window.Cloister.runJob(spec(true), (p) => { workers = Math.max(workers, p.workers || 0); }).promise;
    const b = await window.Cloister.runJob(spec(false), () => {}).promise;
    return { workers, cores: navigator.hardwareConcurrency, a: JSON.stringify([Array.from(a.p_value), a.t_p_value]), b: JSON.stringify([Array.from(b.p_value), b.t_p_value]) };
  });
  if (got.cores > 1) assert.ok(got.workers >= 2, `workers: ${got.workers}`);
  assert.equal(got.a, got.b);
  assert.deepEqual(log.pageErrors, []);
});
