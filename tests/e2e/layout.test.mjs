// (7) Screenshots at 1366×768 for a person to look at (test-output/), plus the
// layout checks that can be automated: nothing wider than the window, the
// steps and the map both visible without scrolling, no overlapping panels.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { launch, openPage, loadDemo, act, outDir } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

function overlaps(a, b) {
  return a.x < b.x + b.width - 1 && b.x < a.x + a.width - 1 && a.y < b.y + b.height - 1 && b.y < a.y + a.height - 1;
}

async function checkLayout(page, label) {
  const width = await page.evaluate(() => document.documentElement.scrollWidth);
  assert.ok(width <= 1366, `${label}: no horizontal scrolling (${width}px)`);
  const boxes = {};
  for (const sel of ['.steps', '#map-panel', '.panels', '.top']) boxes[sel] = await page.locator(sel).boundingBox();
  assert.ok(!overlaps(boxes['.steps'], boxes['#map-panel']), `${label}: steps and map apart`);
  assert.ok(!overlaps(boxes['#map-panel'], boxes['.panels']), `${label}: map and panels apart`);
  // No text cut off inside the summary, steps or quality panels.
  const clipped = await page.$$eval('.steps *, .panels dd, .panels p, .legend li, button', (els) => els
    .filter((e) => getComputedStyle(e).overflow === 'visible' && e.offsetParent !== null)
    .filter((e) => e.scrollWidth > e.clientWidth + 1 && e.clientWidth > 0 && getComputedStyle(e).display !== 'inline')
    .map((e) => `${e.tagName}#${e.id}.${e.className}`));
  assert.deepEqual(clipped, [], `${label}: nothing overflows its box`);
}

test('screenshots at 1366×768 and layout checks', async () => {
  const dir = outDir();
  const { page } = await openPage(browser);
  await checkLayout(page, 'start');
  await page.screenshot({ path: join(dir, '01-start.png') });

  await loadDemo(page);
  await checkLayout(page, 'demo');
  const map = await page.locator('#map').boundingBox();
  assert.ok(map.y + map.height <= 768 + 1, 'the whole map is visible without scrolling');
  assert.ok(map.width >= 700 && map.height >= 400, `map is large (${map.width}×${map.height})`);
  await page.screenshot({ path: join(dir, '02-demo.png') });
  await page.screenshot({ path: join(dir, '03-demo-full.png'), fullPage: true });

  await act(page, () => page.click('#problems-button'));
  await checkLayout(page, 'problems');
  await page.evaluate(() => document.getElementById('quality-title').scrollIntoView({ block: 'start' }));
  await page.screenshot({ path: join(dir, '04-problems-quality.png') });

  await act(page, () => page.setInputFiles('#events-file', { name: 'broken.csv', mimeType: 'text/csv', buffer: Buffer.from([0, 1, 2, 3, 0, 255]) }));
  assert.equal(await page.isVisible('#error-banner'), true);
  await page.evaluate(() => window.scrollTo(0, 0));
  await checkLayout(page, 'error');
  await page.screenshot({ path: join(dir, '05-error.png') });

  await act(page, () => page.check('#area-mode-box'));
  await page.evaluate(() => window.scrollTo(0, 0));
  await page.screenshot({ path: join(dir, '06-rectangle-area.png') });
  await page.evaluate(() => document.getElementById('summary-title').scrollIntoView({ block: 'start' }));
  await page.screenshot({ path: join(dir, '06b-rectangle-area-panels.png') });

  // High-DPI: the canvas backing store follows devicePixelRatio.
  const hi = await openPage(browser, { deviceScaleFactor: 2 });
  await loadDemo(hi.page);
  const dims = await hi.page.evaluate(() => {
    const c = document.getElementById('map');
    return { w: c.width, h: c.height, cw: c.clientWidth, ch: c.clientHeight };
  });
  assert.equal(dims.w, dims.cw * 2);
  assert.equal(dims.h, dims.ch * 2);
  await hi.page.screenshot({ path: join(dir, '07-demo-hidpi.png') });
});
