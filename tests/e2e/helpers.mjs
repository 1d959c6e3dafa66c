// Shared set-up for the browser end-to-end tests: headless Debian chromium
// driven by playwright-core, opening dist/cloister.html from disk (file://).
import { chromium } from 'playwright-core';
import { existsSync, mkdirSync, readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import assert from 'node:assert/strict';

export const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
export const PAGE = process.env.CLOISTER_PAGE ? resolve(process.env.CLOISTER_PAGE) : join(ROOT, 'dist', 'cloister.html');
export const PAGE_URL = pathToFileURL(PAGE).href;
export const DEMO_DIR = process.env.CLOISTER_DEMO_DIR ? resolve(process.env.CLOISTER_DEMO_DIR) : join(ROOT, 'demo-data');
export const FIXTURES = join(ROOT, 'tests', 'e2e', 'fixtures');
export const OUT = join(ROOT, 'test-output');

export const CHROMIUM_ARGS = [
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  // Nothing resolves except loopback (used by the network canary).
  '--host-resolver-rules=MAP * ~NOTFOUND , EXCLUDE 127.0.0.1',
];

export async function launch() {
  assert.ok(existsSync(PAGE), `build the page first (./build.sh build): ${PAGE} is missing`);
  return chromium.launch({ executablePath: '/usr/bin/chromium', headless: true, args: CHROMIUM_ARGS });
}

/**
 * Opens the page in a fresh context at 1366×768 and waits until the engine is
 * ready. Collects every request, page error and console error.
 */
export async function openPage(browser, { width = 1366, height = 768, deviceScaleFactor = 1, init = null } = {}) {
  const context = await browser.newContext({ viewport: { width, height }, deviceScaleFactor });
  // A script to run in the page before its own (benchmarks use it to time engine calls).
  if (init) await context.addInitScript(init);
  const page = await context.newPage();
  const log = { requests: [], pageErrors: [], consoleErrors: [] };
  page.on('request', (r) => log.requests.push(r.url()));
  page.on('pageerror', (e) => log.pageErrors.push(String(e)));
  page.on('console', (m) => { if (m.type() === 'error') log.consoleErrors.push(m.text()); });
  await page.goto(PAGE_URL);
  await page.waitForSelector('body[data-ready="1"]', { timeout: 60000 });
  return { context, page, log };
}

/** Waits until no request to the engine is outstanding (checked twice, 100 ms apart). */
export async function settle(page) {
  for (let i = 0; i < 2; i++) {
    await page.waitForFunction(() => document.body.dataset.busy === '0', null, { timeout: 120000 });
    await page.waitForTimeout(100);
  }
}

/**
 * Does something in the page and waits until the page has finished the user
 * action it started (the page counts finished actions in body[data-done]).
 */
export async function act(page, fn, timeout = 120000) {
  const before = await page.evaluate(() => Number(document.body.dataset.done || 0));
  await fn();
  await page.waitForFunction((n) => Number(document.body.dataset.done || 0) > n, before, { timeout });
  await settle(page);
}

/** Waits for the map to draw what was asked of it (two animation frames). */
export async function frame(page) {
  await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
}

export async function loadDemo(page) {
  await act(page, () => page.click('#demo-button'));
  const status = await page.textContent('#status');
  assert.match(status, /Demo loaded/, `the demo did not load: ${status} ${await page.textContent('#error-text')}`);
}

/** The figure shown in the summary for a key, as a number (thousands separators removed). */
export async function summaryNumber(page, key) {
  const text = await page.textContent(`#summary dd[data-key="${key}"]`);
  return parseNumber(text);
}

export function parseNumber(text) {
  const m = /-?[\d,]+(\.\d+)?/.exec(String(text));
  assert.ok(m, `no number in "${text}"`);
  return Number(m[0].replace(/,/g, ''));
}

/** {read, used, rejected} from the data-quality line of a layer. */
export async function qualityCounts(page, layer = 'events') {
  const get = async (k) => parseNumber(await page.textContent(`#quality-counts p[data-layer="${layer}"] [data-count="${k}"]`));
  return { read: await get('read'), used: await get('used'), rejected: await get('rejected') };
}

/** Rows of the rejection table currently shown. */
export async function rejectionRows(page) {
  return page.$$eval('#rej-body tr', (trs) => trs.map((tr) => Array.from(tr.cells).map((td) => td.textContent.trim())));
}

/**
 * Pixel census of the map canvas: how many pixels have each of the given
 * colours exactly, and how many differ from the background.
 */
export async function canvasCensus(page, colours) {
  return page.evaluate((colours) => {
    const c = document.getElementById('map');
    const ctx = c.getContext('2d');
    const d = ctx.getImageData(0, 0, c.width, c.height).data;
    const want = colours.map((h) => [parseInt(h.slice(1, 3), 16), parseInt(h.slice(3, 5), 16), parseInt(h.slice(5, 7), 16)]);
    const counts = new Array(want.length).fill(0);
    let notBackground = 0;
    const bg = [d[0], d[1], d[2]];
    for (let i = 0; i < d.length; i += 4) {
      if (d[i] !== bg[0] || d[i + 1] !== bg[1] || d[i + 2] !== bg[2]) notBackground++;
      for (let k = 0; k < want.length; k++) {
        if (d[i] === want[k][0] && d[i + 1] === want[k][1] && d[i + 2] === want[k][2]) counts[k]++;
      }
    }
    return { counts, notBackground, total: d.length / 4, width: c.width, height: c.height };
  }, colours);
}

/** Palette of the page, read from the page itself (so tests follow design changes). */
export async function palette(page) {
  return page.evaluate(() => window.Cloister.palette);
}

export function outDir() {
  mkdirSync(OUT, { recursive: true });
  return OUT;
}

/**
 * Facts about the demo files, from the demo generator's own machine-readable
 * record (demo-data/planted-truth.json; demo-data/README.md explains it):
 * every event and population point lies inside the study area, so n equals
 * the row counts; the problems file lists its spoiled rows.
 */
const optionalColumn = (p) => p.column === 'onset_date' || p.column === 'count';

export function demoFacts() {
  const path = join(DEMO_DIR, 'planted-truth.json');
  assert.ok(existsSync(path), `missing ${path}`);
  const truth = JSON.parse(readFileSync(path, 'utf8'));
  return {
    cases: { rows: truth.cases.n, in_area: truth.cases.n, categories: ['respiratory', 'enteric'] },
    population: { rows: truth.population.n, in_area: truth.population.n },
    area_km2: truth.window.net_area_km2,
    // cases-with-problems.csv: rows 2–41 are 40 records (README), the spoiled ones listed in
    // truth.problems. A spoiled optional value (the date or the count) keeps its row as a
    // point without that value; the other spoiled rows are not used.
    problems: {
      rows: 40,
      rejected: truth.problems.filter((p) => !optionalColumn(p)),
      incomplete: truth.problems.filter(optionalColumn),
    },
  };
}

/** A seeded file of n uniform points in a 20 km × 10 km rectangle (metres). */
export function uniformCsv(n, seed = 12345) {
  let s = seed;
  const rnd = () => { s = (Math.imul(s, 1103515245) + 12345) >>> 0; return s / 2 ** 32; };
  const lines = ['x,y'];
  for (let i = 0; i < n; i++) lines.push(`${(rnd() * 20000).toFixed(1)},${(rnd() * 10000).toFixed(1)}`);
  return Buffer.from(lines.join('\n'));
}
