// "Close in space and time" → time on the map, in the page: the time line
// of the invented incidents with from/to windows (demo-data/
// incidents-windows.csv) is drawn, a date range changes what the map draws,
// the bar length can be changed, and Play steps through time, pauses, and
// stops at the end.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { launch, openPage, act, settle, frame, DEMO_DIR, OUT } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

const incidents = () => readFileSync(join(DEMO_DIR, 'incidents-windows.csv'));

async function load(page) {
  await act(page, () => page.setInputFiles('#events-file', { name: 'incidents-windows.csv', mimeType: 'text/csv', buffer: incidents() }));
  await page.waitForSelector('#st-tl-chart[data-drawn="1"]', { timeout: 60000 });
  await settle(page);
  await frame(page);
}

const drawn = (page) => page.$eval('#map', (c) => Number(c.dataset.eventsDrawn));
const shown = (page) => page.$eval('#st-tl-shown', (n) => Number(n.dataset.shown));
const bars = (page) => page.$eval('#st-tl-chart', (c) => Number(c.dataset.bars));

test('the time line draws, a date range filters the map, the bar length changes', async () => {
  const { page, log } = await openPage(browser);
  await load(page);
  // 2025-01-07 to 2025-03-16 (the latest date, a "to"): one bar per day, 69 bars.
  assert.equal(await bars(page), 69);
  assert.match(await page.textContent('#st-tl-statement'), /160 events from 2025-01-07 to 2025-03-16; 54 known only within a from–to window/);
  assert.match(await page.textContent('#st-tl-bintext'), /One bar per day \(chosen for a span of 68 days/);
  assert.equal(await drawn(page), 160);
  assert.equal(await page.$eval('#map', (c) => c.dataset.timeFiltered), '0');
  // The data-quality panel counts the windows.
  assert.match(await page.textContent('#quality-counts'), /known only within a from–to window: 54/);
  const before = await page.locator('#map').screenshot();

  // The planted burst's two weeks (3 to 16 February).
  await page.fill('#st-tl-from', '2025-02-03');
  await page.fill('#st-tl-to', '2025-02-16');
  await page.dispatchEvent('#st-tl-to', 'change');
  await frame(page);
  const n = await drawn(page);
  assert.ok(n > 40 && n < 160, `events drawn in the range: ${n}`);
  assert.equal(await shown(page), n, 'the panel says how many the map draws');
  assert.equal(await page.$eval('#map', (c) => c.dataset.timeFiltered), '1');
  assert.match(await page.textContent('#st-tl-shown'), /2025-02-03 to 2025-02-16/);
  const after = await page.locator('#map').screenshot();
  assert.notDeepEqual(after, before, 'the map picture changed');
  await page.locator('#st-tl-box').screenshot({ path: join(OUT, 'spacetime-timeline.png') });

  // Weekly bars: Monday 2025-01-06 to the week of Monday 2025-03-10, 10 bars; the range stays.
  await act(page, () => page.selectOption('#st-tl-bin', 'week')).catch(() => {});
  await page.waitForFunction(() => Number(document.getElementById('st-tl-chart').dataset.bars) === 10, null, { timeout: 30000 });
  assert.match(await page.textContent('#st-tl-bintext'), /One bar per week \(Monday to Sunday\)\./);
  assert.equal(await page.inputValue('#st-tl-from'), '2025-02-03');

  // The whole period again: every event.
  await page.click('#st-tl-all');
  await frame(page);
  assert.equal(await drawn(page), 160);
  assert.deepEqual(log.pageErrors, []);
});

test('Play steps the range through time, Pause holds it, and it stops at the end', async () => {
  const { page, log } = await openPage(browser);
  await load(page);
  await page.selectOption('#st-tl-bin', 'week');
  await page.waitForFunction(() => Number(document.getElementById('st-tl-chart').dataset.bars) === 10, null, { timeout: 30000 });
  await page.selectOption('#st-tl-speed', { label: 'slow' });
  await page.click('#st-tl-play');
  assert.equal(await page.textContent('#st-tl-play'), 'Pause');
  // The first step shows the first week only.
  assert.equal(await page.inputValue('#st-tl-from'), '2025-01-06');
  assert.equal(await page.inputValue('#st-tl-to'), '2025-01-12');
  await frame(page);
  const first = await drawn(page);
  assert.ok(first < 160, `first week: ${first} events`);
  await page.waitForFunction(() => Number(document.getElementById('st-tl-box').dataset.step) >= 1, null, { timeout: 10000 });
  // Pause: the step no longer moves.
  await page.click('#st-tl-play');
  assert.equal(await page.textContent('#st-tl-play'), 'Play');
  const held = await page.$eval('#st-tl-box', (b) => b.dataset.step);
  await page.waitForTimeout(1500);
  assert.equal(await page.$eval('#st-tl-box', (b) => b.dataset.step), held);
  // Play on, fast, to the end: the last week, and the button is Play again.
  await page.selectOption('#st-tl-speed', { label: 'fast' });
  await page.click('#st-tl-play');
  await page.waitForFunction(() => document.getElementById('st-tl-play').textContent === 'Play', null, { timeout: 20000 });
  assert.equal(await page.$eval('#st-tl-box', (b) => b.dataset.step), '9');
  assert.equal(await page.inputValue('#st-tl-from'), '2025-03-10');
  assert.match(await page.textContent('#status'), /reached its end/);
  // Keyboard: the play button is a button reached by Tab and pressed by Enter.
  await page.focus('#st-tl-play');
  await page.keyboard.press('Enter');
  assert.equal(await page.textContent('#st-tl-play'), 'Pause');
  await page.keyboard.press('Enter');
  assert.equal(await page.textContent('#st-tl-play'), 'Play');
  assert.deepEqual(log.pageErrors, []);
});

test('sharing: masked points saved with dates shifted by up to 5 days, said in the preview and the file', async () => {
  const { page, log } = await openPage(browser, { width: 1366, height: 900 });
  await load(page);
  await page.fill('#share-rmin', '50');
  await page.fill('#share-rmax', '200');
  await act(page, () => page.click('#share-mask'));
  assert.match(await page.textContent('#share-mask-summary'), /160 of 160 points masked/);
  // Without a shift: no dates in the file (as before).
  await act(page, () => page.click('[data-export="masked_points:csv"]'));
  assert.doesNotMatch(await page.textContent('#share-preview-list'), /\bdate\b/);
  await page.click('#share-cancel');

  await page.fill('#share-date-shift', '5');
  await page.fill('#share-date-seed', '7');
  await act(page, () => page.click('[data-export="masked_points:csv"]'));
  const list = await page.textContent('#share-preview-list');
  assert.match(list, /x_m, y_m, date, date_to/);
  assert.match(list, /each moved by a random whole number of days from \u22125 to \+5/);
  assert.match(await page.textContent('#share-preview'), /Dates are shifted by up to 5 days each way/);
  const [dl] = await Promise.all([page.waitForEvent('download'), act(page, () => page.click('#share-save'))]);
  const text = readFileSync(await dl.path(), 'utf8');
  const lines = text.split('\n').filter((l) => l.length > 0);
  assert.match(lines[0], /^x_m,y_m,date,date_to,about_this_file$/);
  assert.match(text, /dates shifted: each event's date was moved by a random whole number of days from -5 to \+5/);
  const day = (t) => Math.round(Date.parse(`${t}T00:00:00Z`) / 86400000);
  const rows = lines.slice(1, 161).map((l) => l.split(','));
  assert.equal(rows.length, 160);
  // The incidents run from 2025-01-07 to 2025-03-16: shifted dates stay within 5 days of that.
  const lo = day('2025-01-07') - 5;
  const hi = day('2025-03-16') + 5;
  let windows = 0;
  for (const r of rows) {
    const a = day(r[2]);
    assert.ok(a >= lo && a <= hi, r.join(','));
    if (r[3] !== '') {
      windows++;
      const len = day(r[3]) - a;
      assert.ok(len >= 1 && len <= 4, `a window keeps its length: ${r.join(',')}`);
    }
  }
  assert.equal(windows, 54);
  assert.deepEqual(log.pageErrors, []);
});
