// Envelope benchmark in headless Chromium, through the page and its worker:
// a generated CSV of CSR points is read with the events file input, then
// Cloister.runJob (envelopeStart / envelopeStep / envelopeFinish) is timed in
// the page, as the Run button uses it. Also timed: how long a Cancel takes to
// stop a long run (click to rejection).
// Target A: K and L, isotropic correction, n = 10,000 CSR points in a
// 1000 m square, 199 simulations, 50 distance steps. Target: under 15 s.
// Usage: node bench/clustering-browser.mjs [n] [n_sim] [functions...]
//   e.g. node bench/clustering-browser.mjs 10000 199 k l
//   add "demo" as a function to also time L on the demo (1,500 events, town
//   boundary polygon).
// Prints one JSON line per run. Never run from the tests.
import { writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { launch, openPage, loadDemo } from '../tests/e2e/helpers.mjs';

function makeCsv(n, seed) {
  let s = BigInt(seed);
  const next = () => {
    s = (s * 6364136223846793005n + 1442695040888963407n) & 0xffffffffffffffffn;
    return Number(s >> 11n) / 2 ** 53;
  };
  const parts = ['id,x,y\n'];
  for (let i = 0; i < n; i++) parts.push(`${i},${(1000 * next()).toFixed(3)},${(1000 * next()).toFixed(3)}\n`);
  return parts.join('');
}

// Large patterns: `node bench/clustering-browser.mjs large [n] [n_sim]`
// (default 100000 199): CSR events in an invented polygon with a hole
// (1000 m square with a corner cut, triangular hole), loaded as a boundary
// file; L envelope, translation correction, r up to 250 m (a quarter of the
// shorter side), pairs counted on the fine grid, helper workers as the page
// uses them (target under 60 s). Then, at 10,000 events: the observed L of
// every pair against the grid's (largest relative error from 20 cells on,
// same settings), and 199-simulation runs both ways, timed side by side.
const OUTER = [[0, 0], [1000, 0], [1000, 700], [600, 1000], [0, 1000]];
const HOLE = [[400, 400], [550, 400], [500, 600]];
function inRing(x, y, ring) {
  let inside = false;
  for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) {
    const [xi, yi] = ring[i];
    const [xj, yj] = ring[j];
    if ((yi > y) !== (yj > y) && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = !inside;
  }
  return inside;
}
function makeHoleCsv(n, seed) {
  let s = BigInt(seed);
  const next = () => {
    s = (s * 6364136223846793005n + 1442695040888963407n) & 0xffffffffffffffffn;
    return Number(s >> 11n) / 2 ** 53;
  };
  const parts = ['id,x,y\n'];
  for (let i = 0; i < n;) {
    const x = 1000 * next();
    const y = 1000 * next();
    if (inRing(x, y, OUTER) && !inRing(x, y, HOLE)) parts.push(`${i++},${x.toFixed(3)},${y.toFixed(3)}\n`);
  }
  return parts.join('');
}

async function loadHole(browser, n) {
  const { page } = await openPage(browser);
  const ring = (r) => [...r, r[0]];
  const area = { type: 'Polygon', coordinates: [ring(OUTER), ring(HOLE)] };
  await page.setInputFiles('#area-file', { name: 'hole.geojson', mimeType: 'application/geo+json', buffer: Buffer.from(JSON.stringify(area)) });
  await page.waitForFunction(() => document.body.dataset.busy === '0', null, { timeout: 120000 });
  await page.setInputFiles('#events-file', { name: `hole-${n}.csv`, mimeType: 'text/csv', buffer: Buffer.from(makeHoleCsv(n, 42)) });
  const want = `hole-${n}.csv: ${n.toLocaleString('en-US')} of`;
  await page.waitForFunction((w) => document.getElementById('status').textContent.includes(w), want, { timeout: 300000 });
  await page.waitForFunction(() => document.body.dataset.busy === '0', null, { timeout: 120000 });
  return page;
}

/** One run without helpers, returning the result (for the observed curves). */
async function observed(page, params) {
  return page.evaluate(async (params) => {
    const res = await window.Cloister.runJob({ start: 'envelopeStart', step: 'envelopeStep', finish: 'envelopeFinish', params }, () => {}).promise;
    return { r: res.r, observed: res.observed, cell_m: res.cell_m, estimator: res.estimator };
  }, params);
}

if (process.argv[2] === 'large') {
  const nLarge = Number(process.argv[3]) || 100000;
  const sims = Number(process.argv[4]) || 199;
  const browser = await launch();
  try {
    const base = { function: 'l', correction: 'translation', r_max_m: 250, n_steps: 50, seed: 7 };
    const page = await loadHole(browser, nLarge);
    const big = await timeJob(page, { ...base, n_sim: sims, estimator: 'binned' });
    console.log(JSON.stringify({ where: 'chromium page (worker + helpers)', what: 'L envelope on a fine grid', window: 'polygon with a hole, 1000 m', estimator: 'binned', ...big, target_s: 60 }));
    const small = await loadHole(browser, 10000);
    const a = await observed(small, { ...base, n_sim: 1, estimator: 'exact' });
    const b = await observed(small, { ...base, n_sim: 1, estimator: 'binned' });
    let worst = 0;
    for (let i = 1; i < a.r.length; i++) {
      if (a.r[i] >= 20 * b.cell_m) worst = Math.max(worst, Math.abs(b.observed[i] - a.observed[i]) / a.observed[i]);
    }
    console.log(JSON.stringify({ where: 'chromium page', what: 'observed L, grid against every pair, 10,000 events', cell_m: b.cell_m, from_m: 20 * b.cell_m, max_relative_error: worst }));
    const exact = await timeJob(small, { ...base, n_sim: sims, estimator: 'exact' });
    const grid = await timeJob(small, { ...base, n_sim: sims, estimator: 'binned' });
    console.log(JSON.stringify({ where: 'chromium page (worker + helpers)', what: `L envelope, 10,000 events, ${sims} simulations`, exact_s: exact.seconds, binned_s: grid.seconds, ratio_exact_over_binned: exact.seconds / grid.seconds }));
  } finally {
    await browser.close();
  }
  process.exit(0);
}

const args = process.argv.slice(2);
const n = Number(args[0]) || 10000;
const nSim = Number(args[1]) || 199;
const functions = args.slice(2).length ? args.slice(2) : ['k', 'l'];

/** Times one job in the page; returns seconds and what the engine reported. */
async function timeJob(page, params) {
  return page.evaluate(async (params) => {
    const t0 = performance.now();
    let first = null;
    const job = window.Cloister.runJob({ start: 'envelopeStart', step: 'envelopeStep', finish: 'envelopeFinish', params, parallel: { share: 'envelopeShare', helperStart: 'envelopeHelperStart', simulate: 'envelopeSimulate', add: 'envelopeAdd' } }, (p) => {
      if (first === null && p.done > 0) first = performance.now() - t0;
    });
    const res = await job.promise;
    return { seconds: (performance.now() - t0) / 1000, first_batch_s: first / 1000, n: res.n, n_sim: res.n_sim, distances: res.r.length, r_max_m: res.r[res.r.length - 1], outcome: res.verdict.outcome };
  }, params);
}

/** Starts a long run, cancels after the first progress report, times the stop. */
async function timeCancel(page, params) {
  return page.evaluate(async (params) => {
    let cancelAt = null;
    let job = null;
    const firstProgress = new Promise((resolve) => {
      job = window.Cloister.runJob({ start: 'envelopeStart', step: 'envelopeStep', finish: 'envelopeFinish', params, parallel: { share: 'envelopeShare', helperStart: 'envelopeHelperStart', simulate: 'envelopeSimulate', add: 'envelopeAdd' } }, (p) => { if (p.done > 0) resolve(); });
    });
    await firstProgress;
    await new Promise((r) => setTimeout(r, 300));
    cancelAt = performance.now();
    job.cancel();
    try { await job.promise; return { stopped: false }; } catch (e) { return { stopped: e.code === 'cancelled', cancel_to_stop_s: (performance.now() - cancelAt) / 1000 }; }
  }, params);
}

const dir = mkdtempSync(join(tmpdir(), 'cloister-bench-'));
const path = join(dir, `csr-${n}.csv`);
writeFileSync(path, makeCsv(n, 42));
const browser = await launch();
try {
  const { page } = await openPage(browser);
  const want = `csr-${n}.csv: ${n.toLocaleString('en-US')} of`;
  await page.setInputFiles('#events-file', path);
  await page.waitForFunction((w) => document.getElementById('status').textContent.includes(w), want, { timeout: 300000 });
  // The square itself: a rectangle around the points (the points fill it).
  await page.click('#area-mode-box');
  await page.waitForFunction(() => document.body.dataset.busy === '0', null, { timeout: 120000 });
  for (const f of functions.filter((f) => f !== 'demo')) {
    const r = await timeJob(page, { function: f, correction: 'isotropic', n_sim: nSim, seed: 7, n_steps: 50 });
    console.log(JSON.stringify({ where: 'chromium page (worker)', target: 'A', window: 'rectangle around CSR points in a 1000 m square', function: f, correction: 'isotropic', ...r, target_s: 15 }));
  }
  const c = await timeCancel(page, { function: 'l', correction: 'isotropic', n_sim: 9999, seed: 8 });
  console.log(JSON.stringify({ where: 'chromium page (worker)', what: 'cancel a 9999-simulation run', n, ...c }));
  if (functions.includes('demo')) {
    const { page: p2 } = await openPage(browser);
    await loadDemo(p2);
    const r = await timeJob(p2, { function: 'l', n_sim: nSim, seed: 7 });
    console.log(JSON.stringify({ where: 'chromium page (worker)', window: 'demo town boundary (polygon)', function: 'l', correction: 'isotropic', ...r }));
    const c2 = await timeCancel(p2, { function: 'l', n_sim: 9999, seed: 8 });
    console.log(JSON.stringify({ where: 'chromium page (worker)', what: 'cancel a 9999-simulation run (demo)', ...c2 }));
  }
} finally {
  await browser.close();
}
