// (6) Keyboard use: Tab reaches the file inputs and the demo button with a
// visible focus ring, and the map answers its keys.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { launch, openPage, act, frame } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('Tab reaches the file inputs and the demo button, in reading order, with a visible focus ring', async () => {
  const { page } = await openPage(browser);
  const seen = [];
  const rings = {};
  for (let i = 0; i < 40; i++) {
    await page.keyboard.press('Tab');
    const info = await page.evaluate(() => {
      const a = document.activeElement;
      const cs = getComputedStyle(a);
      return { id: a.id, outline: cs.outlineStyle, width: parseFloat(cs.outlineWidth) };
    });
    if (info.id && !seen.includes(info.id)) seen.push(info.id);
    rings[info.id] = info;
  }
  const want = ['events-file', 'demo-button', 'area-file', 'controls-file', 'map'];
  for (const id of want) assert.ok(seen.includes(id), `Tab reaches #${id} (seen: ${seen.join(', ')})`);
  const order = want.map((id) => seen.indexOf(id));
  assert.deepEqual([...order].sort((a, b) => a - b), order, 'steps are reached in reading order');
  assert.ok(rings['demo-button'].outline !== 'none' && rings['demo-button'].width >= 2, 'focus ring on the demo button');

  // Every form control has a label.
  const unlabelled = await page.$$eval('input, select, button', (els) => els
    .filter((e) => e.type !== 'hidden' && !e.hidden)
    .filter((e) => !(e.labels && e.labels.length) && !e.getAttribute('aria-label') && !e.textContent.trim())
    .map((e) => e.id || e.outerHTML.slice(0, 60)));
  assert.deepEqual(unlabelled, []);
});

test('the map pans and zooms with the keyboard, and 0 resets the view', async () => {
  const { page } = await openPage(browser);
  await page.focus('#demo-button');
  await act(page, () => page.keyboard.press('Enter'));
  assert.match(await page.textContent('#status'), /Demo loaded/);
  const snap = () => page.evaluate(() => document.getElementById('map').toDataURL());
  const start = await snap();
  await page.focus('#map');
  await page.keyboard.press('+');
  await frame(page);
  const zoomed = await snap();
  assert.notEqual(zoomed, start, '+ zooms');
  await page.keyboard.press('ArrowLeft');
  await frame(page);
  assert.notEqual(await snap(), zoomed, 'arrow pans');
  await page.keyboard.press('0');
  await frame(page);
  assert.equal(await snap(), start, '0 resets the view');
  // The buttons do the same.
  await page.click('#zoom-in');
  await frame(page);
  assert.notEqual(await snap(), start);
  await page.click('#zoom-reset');
  await frame(page);
  assert.equal(await snap(), start);
});

test('the map pans with a mouse drag and zooms with the wheel', async () => {
  const { page } = await openPage(browser);
  await act(page, () => page.click('#demo-button'));
  const snap = () => page.evaluate(() => document.getElementById('map').toDataURL());
  const start = await snap();
  const box = await page.locator('#map').boundingBox();
  const cx = box.x + box.width / 2;
  const cy = box.y + box.height / 2;
  await page.mouse.move(cx, cy);
  await page.mouse.down();
  await page.mouse.move(cx + 120, cy + 40, { steps: 5 });
  await page.mouse.up();
  await frame(page);
  const dragged = await snap();
  assert.notEqual(dragged, start, 'drag moves the map');
  await page.mouse.wheel(0, -300);
  await frame(page);
  assert.notEqual(await snap(), dragged, 'wheel zooms');
  await page.click('#zoom-reset');
  await frame(page);
  assert.equal(await snap(), start, 'reset view restores the first view');
});
