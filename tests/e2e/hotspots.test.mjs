// "Where are the hotspots?" in the page: the surface is drawn on the map and
// exported, DBSCAN hulls and table appear, the scan runs in the worker with
// progress, can be cancelled, and the page recovers.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { launch, openPage, loadDemo, act, frame, outDir, demoFacts, DEMO_DIR } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

/** Keeps a copy of the map's pixels in the page under `name` (returns the pixel count). */
async function mapPixels(page, name) {
  await frame(page);
  return page.evaluate((name) => {
    const c = document.getElementById('map');
    window.__px = window.__px || {};
    window.__px[name] = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    return c.width * c.height;
  }, name);
}

/** Pixels whose colour differs between two kept copies. */
async function changed(page, a, b) {
  return page.evaluate(([a, b]) => {
    const p = window.__px[a], q = window.__px[b];
    if (p.length !== q.length) return p.length / 4;
    let n = 0;
    for (let i = 0; i < p.length; i += 4) if (p[i] !== q[i] || p[i + 1] !== q[i + 1] || p[i + 2] !== q[i + 2]) n++;
    return n;
  }, [a, b]);
}

/** Great-circle distance in metres (spherical, R = 6 371 008.8 m): only
 * used to compare centres a few hundred metres apart. */
function metresApart(lon1, lat1, lon2, lat2) {
  const r = Math.PI / 180;
  const a = Math.sin(((lat2 - lat1) * r) / 2) ** 2 + Math.cos(lat1 * r) * Math.cos(lat2 * r) * Math.sin(((lon2 - lon1) * r) / 2) ** 2;
  return 2 * 6371008.8 * Math.asin(Math.sqrt(a));
}

test('surface on the map, isopleths exported; DBSCAN hulls and table', async () => {
  const { page, log } = await openPage(browser, { height: 1000 });
  await loadDemo(page);
  const total = await mapPixels(page, 'before');

  // 1. The surface: drawn as a raster overlay with isopleths.
  await page.selectOption('#hs-method', 'fixed');
  await page.fill('#hs-fixed', '250');
  await act(page, () => page.click('#hs-surface-run'));
  assert.equal(await page.getAttribute('#hs-surface', 'data-state'), 'done', await page.textContent('#hs-surface-out'));
  await mapPixels(page, 'surface');
  const diff = await changed(page, 'before', 'surface');
  assert.ok(diff > total * 0.05, `the surface changes at least 5 % of the map's pixels (${diff})`);
  assert.match(await page.textContent('#hs-surface-out dd[data-key="bandwidth"]'), /250\s*m/);
  assert.match(await page.textContent('#hs-surface-out dd[data-key="method"]'), /fixed/);
  // Jones–Diggle keeps the events inside: the surface holds n = 1500 (to the grid's quadrature).
  const held = Number((await page.textContent('#hs-surface-out dd[data-key="integral"]')).match(/[\d,.]+/)[0].replace(/,/g, ''));
  assert.ok(Math.abs(held - demoFacts().cases.in_area) < 0.01 * demoFacts().cases.in_area, `surface holds ${held}`);
  assert.equal(await page.locator('#hs-iso-table tbody tr').count(), 3);
  assert.match(await page.textContent('#legend'), /Events per km²/);
  assert.equal(await page.locator('#hs-ramp li').count(), 6);
  // Hiding the surface gives back the map as it was.
  await page.uncheck('#hs-surface-show');
  await mapPixels(page, 'hidden');
  assert.equal(await changed(page, 'before', 'hidden'), 0, 'hidden surface leaves no trace');
  await page.check('#hs-surface-show');
  await frame(page);
  await page.locator('#map-panel').screenshot({ path: join(outDir(), 'hotspots-surface-map.png') });

  // Export: a download made in the page, valid GeoJSON with polygons in lon/lat.
  const [download] = await Promise.all([page.waitForEvent('download'), page.click('#hs-export')]);
  assert.match(download.suggestedFilename(), /^cloister-isopleths-\d{4}-\d{2}-\d{2}\.geojson$/);
  const gj = JSON.parse(readFileSync(await download.path(), 'utf8'));
  assert.equal(gj.type, 'FeatureCollection');
  assert.equal(gj.features.length, 3);
  for (const f of gj.features) {
    assert.equal(f.geometry.type, 'MultiPolygon');
    assert.ok(f.geometry.coordinates.length >= 1);
    for (const poly of f.geometry.coordinates) for (const ring of poly) {
      assert.ok(ring.length >= 4);
      assert.deepEqual(ring[0], ring[ring.length - 1], 'rings are closed');
      for (const [lon, lat] of ring) assert.ok(Math.abs(lon + 32) < 0.2 && Math.abs(lat + 41.5) < 0.2, `${lon}, ${lat} in the invented town`);
    }
  }
  assert.deepEqual(gj.features.map((f) => f.properties.percent_volume), [0.5, 0.75, 0.95]);

  // A tiny bandwidth warns that single events show.
  await page.fill('#hs-fixed', '20');
  await act(page, () => page.click('#hs-surface-run'));
  assert.match(await page.textContent('#hs-privacy'), /single addresses/);

  // 2. DBSCAN: the chart suggests a reach; clusters get hulls and a table.
  await page.fill('#hs-min', '8');
  await act(page, () => page.click('#hs-kdist-run'));
  assert.equal(await page.isVisible('#hs-kdist-chart'), true);
  const chartInk = await page.evaluate(() => {
    const c = document.getElementById('hs-kdist-chart');
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let n = 0;
    for (let i = 0; i < d.length; i += 4) if (d[i] < 200 || d[i + 1] < 200 || d[i + 2] < 200) n++;
    return n;
  });
  assert.ok(chartInk > 500, `the chart has ink (${chartInk} dark pixels)`);
  assert.match(await page.textContent('#hs-use-knee'), /\d+\s*m/);
  await page.fill('#hs-eps', '150');
  await mapPixels(page, 'beforeHulls');
  await act(page, () => page.click('#hs-dbscan-run'));
  assert.equal(await page.getAttribute('#hs-dbscan', 'data-state'), 'done');
  const rows = await page.locator('#hs-cluster-table tbody tr').count();
  assert.ok(rows >= 3, `${rows} clusters in the table`);
  assert.match(await page.textContent('#hs-dbscan-summary'), /noise/);
  await mapPixels(page, 'hulls');
  assert.ok(await changed(page, 'beforeHulls', 'hulls') > 200, 'hulls drawn');
  assert.match(await page.textContent('#legend'), /Density clusters/);

  await page.screenshot({ path: join(outDir(), 'hotspots-surface-dbscan.png'), fullPage: true });
  await page.locator('#map-panel').screenshot({ path: join(outDir(), 'hotspots-map.png') });
  assert.deepEqual(log.pageErrors, []);
  assert.deepEqual(log.consoleErrors, []);
});

test('scan: circles and table; a long scan is cancelled and a new one runs', async () => {
  const { page, log } = await openPage(browser, { height: 1000 });
  await loadDemo(page);
  const truth = JSON.parse(readFileSync(join(DEMO_DIR, 'planted-truth.json'), 'utf8'));
  assert.match(await page.textContent('#hs-scan-model'), /Bernoulli/);
  const seed = await page.inputValue('#hs-seed');
  assert.match(seed, /^\d+$/, 'a fresh seed is shown');

  // A long scan: it asks first (the estimate); run it, and cancel it once it has started.
  await page.fill('#hs-sims', '100000');
  await page.click('#hs-scan-run');
  await page.waitForSelector('#hs-scan-estimate', { state: 'visible', timeout: 60000 });
  assert.match(await page.textContent('#hs-scan-estimate-text'), /^The 100,000 chance runs will take /);
  await page.click('#hs-scan-estimate-go');
  await page.waitForFunction(() => {
    const p = document.getElementById('hs-scan-progress');
    return p && !p.hidden && Number(p.value) > 0;
  }, null, { timeout: 60000 });
  await page.click('#hs-scan-cancel');
  await page.waitForFunction(() => document.getElementById('hs-scan').dataset.state === 'cancelled', null, { timeout: 10000 });
  assert.equal(await page.isEnabled('#hs-scan-run'), true, 'the run button is back');
  assert.equal(await page.locator('#hs-scan-table').count(), 0, 'nothing half-done is shown');

  // A short scan with a given seed now runs to the end.
  await page.fill('#hs-sims', '99');
  await page.fill('#hs-seed', '7');
  await mapPixels(page, 'beforeCircles');
  await page.click('#hs-scan-run');
  await page.waitForFunction(() => document.getElementById('hs-scan').dataset.state === 'done', null, { timeout: 120000 });
  const rows = await page.$$eval('#hs-scan-table tbody tr', (trs) => trs.map((tr) => Array.from(tr.cells).map((td) => td.textContent.trim())));
  assert.ok(rows.length >= 3);
  assert.match(rows[0][0], /strongest/);
  // Next circles are listed only when they could matter (two or more events, p < 0.5).
  for (const r of rows.slice(1)) {
    assert.match(r[0], /^next \d+$/);
    assert.ok(Number(r[3]) >= 2 && Number(r[6]) < 0.5, `listed next circle ${r.join(' | ')}`);
  }
  assert.match(await page.textContent('#hs-scan-out'), /Listed: next circles with at least two events inside and p below 0\.5/);
  // The strongest circle is at a planted cluster and p is the smallest 99 chance runs allow.
  const [lon, lat] = rows[0][1].split(',').map((t) => parseFloat(t));
  const near = truth.clusters.map((c) => metresApart(lon, lat, c.centre_lonlat.longitude, c.centre_lonlat.latitude));
  assert.ok(Math.min(...near) < 600, `strongest circle ${Math.round(Math.min(...near))} m from a planted centre`);
  assert.equal(Number(rows[0][6]), 0.01);
  assert.match(await page.textContent('#hs-scan-out dd[data-key="scan-seed"]'), /seed 7\b/);
  await mapPixels(page, 'circles');
  assert.ok(await changed(page, 'beforeCircles', 'circles') > 100, 'circles drawn');
  assert.match(await page.textContent('#legend'), /strongest circle/);
  assert.match(await page.textContent('#hs-scan'), /A cluster is not a cause/);
  await page.locator('#hotspots').screenshot({ path: join(outDir(), 'hotspots-section.png') });
  await page.locator('#map-panel').screenshot({ path: join(outDir(), 'hotspots-scan-map.png') });

  // New data clear the old answers.
  await act(page, () => page.click('#controls-clear'));
  assert.equal(await page.locator('#hs-scan-table').count(), 0, 'scan table cleared');
  assert.doesNotMatch(await page.textContent('#legend'), /strongest circle/);
  assert.match(await page.textContent('#hs-scan-model'), /Poisson/);
  assert.deepEqual(log.pageErrors, []);
  assert.deepEqual(log.consoleErrors, []);
});

test('on a high-density screen the distance chart has a pixel per screen pixel and the same layout', async () => {
  const census = {};
  for (const dpr of [1, 2]) {
    const { page, context, log } = await openPage(browser, { width: 1366, height: 900, deviceScaleFactor: dpr });
    await loadDemo(page);
    await page.fill('#hs-min', '8');
    await act(page, () => page.click('#hs-kdist-run'));
    await frame(page);
    const box = await page.locator('#hs-kdist-chart').boundingBox();
    census[dpr] = await page.evaluate(() => {
      const c = document.getElementById('hs-kdist-chart');
      const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
      let curve = 0;
      // The legend's knee marker: the leftmost knee-coloured pixel in the
      // top fifth (the legend box sits at the upper right).
      let markerX = Infinity;
      for (let i = 0; i < d.length; i += 4) {
        if (d[i] === 30 && d[i + 1] === 72 && d[i + 2] === 110) curve++;
        const px = (i / 4) % c.width;
        const py = Math.floor(i / 4 / c.width);
        if (py < c.height / 5 && px > c.width / 2 && d[i] > 140 && d[i + 1] < 120 && d[i + 2] < 80) markerX = Math.min(markerX, px);
      }
      return { curve, markerX: markerX / c.width, width: c.width, height: c.height };
    });
    census[dpr].css = [Math.round(box.width), Math.round(box.height)];
    assert.equal(census[dpr].width, census[dpr].css[0] * dpr, `canvas width at ${dpr}x`);
    assert.equal(census[dpr].height, census[dpr].css[1] * dpr, `canvas height at ${dpr}x`);
    assert.ok(Number.isFinite(census[dpr].markerX), `legend marker found at ${dpr}x`);
    if (dpr === 2) await page.locator('#hs-kdist-chart').screenshot({ path: join(outDir(), 'hotspots-kdist-2x.png') });
    assert.deepEqual(log.pageErrors, []);
    await context.close();
  }
  // The same picture scaled: the same shown size, the curve's colour on
  // about 4x the pixels (more where antialiased edges become solid), and
  // the legend marker at the same place relative to the width.
  assert.deepEqual(census[2].css, census[1].css);
  const ratio = census[2].curve / census[1].curve;
  assert.ok(ratio > 3 && ratio < 8, `curve pixels: ${census[1].curve} at 1x, ${census[2].curve} at 2x`);
  assert.ok(Math.abs(census[2].markerX - census[1].markerX) < 0.01, `legend marker at ${census[1].markerX} of the width at 1x, ${census[2].markerX} at 2x`);
});
