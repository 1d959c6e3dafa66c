// A user's walk through the page with a large file, in headless Chromium
// (dist/cloister.html opened from disk): load, map, summary, surface,
// DBSCAN, the quick tests, the envelope test with the page's own speed
// advice, and the scan. Every step is clicked as a user would and timed
// from the click until the page is idle again; the engine calls behind each
// step are timed too (from the page's request to the worker's answer).
// Timings are figures for README, never assertions.
//
// Data: invented and seeded, planar metres in a 20 km square, 70 % spread
// at random and 30 % in five Gaussian clumps (the same generator as
// bench/hotspots-browser.mjs). Usage:
//   node bench/walk-200k.mjs [events=200000] [--with-cv]
// --with-cv adds a surface with likelihood cross-validation (minutes).
import { writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir, loadavg } from 'node:os';
import { join } from 'node:path';
import { launch, openPage, act, settle, frame, summaryNumber, OUT } from '../tests/e2e/helpers.mjs';
import { makeClumpedCsv } from './events-csv.mjs';

const args = process.argv.slice(2);
const n = Number(args.find((a) => /^\d+$/.test(a)) || 200000);
const withCv = args.includes('--with-cv');
const dir = mkdtempSync(join(tmpdir(), 'cloister-walk-'));
const path = join(dir, `events-${n}.csv`);
writeFileSync(path, makeClumpedCsv(n, 20261203));

/** Records every engine request and how long its answer took. */
function recordCalls() {
  const W = window.Worker;
  window.__calls = [];
  window.Worker = class extends W {
    constructor(...a) {
      super(...a);
      const pend = new Map();
      this.addEventListener('message', (e) => {
        const m = e.data;
        if (!m || !pend.has(m.id) || m.progress) return;
        const c = pend.get(m.id);
        pend.delete(m.id);
        window.__calls.push({ method: c.method, s: +((performance.now() - c.t0) / 1000).toFixed(3) });
      });
      const post = this.postMessage.bind(this);
      this.postMessage = (msg, t) => {
        if (msg && msg.method && msg.id >= 0) pend.set(msg.id, { method: msg.method, t0: performance.now() });
        return post(msg, t);
      };
    }
  };
}

const rows = [];
async function step(page, name, fn, note = '') {
  await page.evaluate(() => { window.__calls = []; });
  const t0 = Date.now();
  await fn();
  const s = (Date.now() - t0) / 1000;
  const calls = await page.evaluate(() => window.__calls);
  const engine = calls.filter((c) => c.s >= 0.05).map((c) => `${c.method} ${c.s} s`).join(', ');
  const row = { step: name, seconds: +s.toFixed(2), engine, note };
  rows.push(row);
  console.log(JSON.stringify(row));
}

const browser = await launch();
try {
  const { page, log } = await openPage(browser, { init: recordCalls });

  await step(page, 'load the file (read, check, project, summary, map)', () => act(page, () => page.setInputFiles('#events-file', path), 300000));
  const events = await summaryNumber(page, 'n_events');
  await step(page, 'map: zoom in and draw', async () => { await page.click('#zoom-in'); await frame(page); await settle(page); });
  await step(page, 'map: back to the whole area', async () => { await page.click('#zoom-reset'); await frame(page); await settle(page); });
  await page.screenshot({ path: join(OUT, `walk-${n}-map.png`) });

  await step(page, 'surface, rule-of-thumb bandwidth (256 cells)', () => act(page, () => page.click('#hs-surface-run'), 600000));
  if (withCv) {
    await page.selectOption('#hs-method', 'likelihood_cv');
    await step(page, 'surface, likelihood cross-validation (256 cells)', () => act(page, () => page.click('#hs-surface-run'), 1800000));
    await page.selectOption('#hs-method', 'normal_reference');
  }
  await step(page, 'DBSCAN: distance chart (min points 8)', () => act(page, () => page.click('#hs-kdist-run'), 600000));
  const eps = await page.inputValue('#hs-eps');
  await step(page, `DBSCAN: clusters at the suggested reach (${eps} m)`, () => act(page, () => page.click('#hs-dbscan-run'), 600000));
  rows[rows.length - 1].note = (await page.textContent('#hs-dbscan-summary').catch(() => '')).trim();
  await page.screenshot({ path: join(OUT, `walk-${n}-dbscan.png`) });

  await step(page, 'counts in cells test (quadrats)', () => act(page, () => page.click('#clu-quad-run'), 600000));
  await step(page, 'nearest-neighbour ratio (Clark–Evans)', () => act(page, () => page.click('#clu-ce-run'), 600000));

  // The envelope test with the page's defaults: the page says how long it
  // would take and what makes it faster, before the long work.
  let advice = '';
  await step(page, 'envelope test, defaults: until the page says how long', async () => {
    await page.click('#clu-run');
    await page.waitForSelector('#clu-estimate', { state: 'visible', timeout: 1800000 });
    advice = (await page.textContent('#clu-estimate')).replace(/\s+/g, ' ').trim();
  });
  rows[rows.length - 1].note = advice;
  await page.screenshot({ path: join(OUT, `walk-${n}-estimate.png`) });
  // Follow the advice as a user would: the suggested largest distance (the
  // page aims it at a short run), which closes the question; then Run.
  const rmax = await page.$('#clu-faster [data-option="r_max_m"]');
  if (rmax) await rmax.click();
  else await page.click('#clu-estimate-stop');
  await settle(page);
  const settings = await page.evaluate(() => ['clu-function', 'clu-correction', 'clu-nsim', 'clu-rmax']
    .map((id) => document.getElementById(id)).filter(Boolean).map((e) => `${e.id.replace('clu-', '')}=${e.value}`).join(' '));
  await step(page, `envelope test with the advice (${settings})`, async () => {
    await page.click('#clu-run');
    // If the page still asks first, say yes: the run is what is measured.
    const asked = await page.waitForSelector('#clu-estimate', { state: 'visible', timeout: 5000 }).then(() => true).catch(() => false);
    if (asked) await page.click('#clu-estimate-go');
    await page.waitForFunction(() => document.getElementById('clu-env-result') && !document.getElementById('clu-env-result').hidden &&
      document.body.dataset.busy === '0', null, { timeout: 3600000 });
  });
  rows[rows.length - 1].note = (await page.textContent('#clu-verdict')).trim();
  await page.screenshot({ path: join(OUT, `walk-${n}-envelope.png`) });

  // The scan with the page's defaults (the page picks grid centres above a
  // size); if it asks first, the advice is recorded and the run goes ahead.
  let scanAdvice = '';
  await step(page, 'scan, defaults (999 chance runs)', async () => {
    await page.click('#hs-scan-run');
    const asked = await page.waitForSelector('#hs-scan-estimate', { state: 'visible', timeout: 60000 }).then(() => true).catch(() => false);
    if (asked) {
      scanAdvice = (await page.textContent('#hs-scan-estimate-text')).replace(/\s+/g, ' ').trim();
      await page.click('#hs-scan-estimate-go');
    }
    await page.waitForFunction(() => !document.getElementById('hs-scan-run').disabled && document.body.dataset.busy === '0', null, { timeout: 3600000 });
  });
  rows[rows.length - 1].note = [scanAdvice, (await page.textContent('#hs-scan-out')).replace(/\s+/g, ' ').trim().slice(0, 200)].filter(Boolean).join(' · ');

  console.log(JSON.stringify({ events, load_average: loadavg().map((v) => +v.toFixed(2)), page_errors: log.pageErrors }));
  // A Markdown table for README.
  console.log('\n| step | seconds | engine calls over 0.05 s | what the page said |\n|---|---|---|---|');
  for (const r of rows) console.log(`| ${r.step} | ${r.seconds} | ${r.engine || '—'} | ${String(r.note || '').replace(/\|/g, '/').slice(0, 300)} |`);
} finally {
  await browser.close();
}
