// Hotspot benchmark in headless Chromium: the page's own worker runs the
// Session methods (through window.Cloister.call / runJob from page.evaluate),
// so the figures include the hand-over to the worker and back.
//   surface: 100 000 events onto a 512 × 512 grid, fixed bandwidth (target < 2 s)
//   LCV: likelihood cross-validation over 20 bandwidths, 10 000 events (target < 10 s)
//   scan: 5 000 events × 999 replicates, Poisson against area (target < 30 s)
//   cancel: time from Cancel to the job's end during a long scan (target < 0.5 s)
// Data are invented and seeded (planar metres in a 20 km square, 30 % in
// five Gaussian clumps). Prints JSON lines. Usage: node bench/hotspots-browser.mjs
import { launch, openPage } from '../tests/e2e/helpers.mjs';
import { makeClumpedCsv as makeCsv } from './events-csv.mjs';

async function load(page, csv) {
  return page.evaluate(async (text) => {
    const C = window.Cloister;
    const bytes = new TextEncoder().encode(text);
    const rep = await C.call('loadEvents', bytes, { coords: { kind: 'planar', unit: 'metre' } });
    await C.call('setAreaFallback', 'bounding_box');
    return rep.accepted;
  }, csv);
}

async function timed(page, method, params) {
  return page.evaluate(async ([method, params]) => {
    const t0 = performance.now();
    const r = await window.Cloister.call(method, params);
    const s = (performance.now() - t0) / 1000;
    return { s, nx: r.nx, ny: r.ny, bandwidth_m: r.bandwidth_m, method: r.method };
  }, [method, params]);
}

const line = (o) => console.log(JSON.stringify({ where: 'chromium page (worker)', ...o }));

const browser = await launch();
try {
  const { page, context } = await openPage(browser);

  // 1. Surface, 100 000 events, 512 cells along the (square) area's side.
  let n = await load(page, makeCsv(100000, 20261202));
  for (const [label, privacy] of [['first (with the privacy count)', true], ['again (privacy count cached)', true], ['without the privacy count', false]]) {
    let best = Infinity, r = null;
    for (let rep = 0; rep < 3; rep++) {
      r = await timed(page, 'intensitySurface', { method: 'fixed', fixed_m: 150, cells: 512, privacy_check: privacy, kernel: 'gaussian', edge: 'jones_diggle' });
      best = Math.min(best, r.s);
      if (label.startsWith('first')) break;
    }
    line({ task: `surface ${label}`, n, grid: `${r.nx}x${r.ny}`, bandwidth_m: 150, kernel: 'gaussian', edge: 'jones_diggle', seconds: +best.toFixed(3), target_s: 2 });
  }
  {
    const r = await timed(page, 'intensitySurface', { method: 'fixed', fixed_m: 424, cells: 512, kernel: 'quartic', edge: 'jones_diggle' });
    line({ task: 'surface quartic (radius 424 m)', n, grid: `${r.nx}x${r.ny}`, seconds: +r.s.toFixed(3), target_s: 2 });
  }

  // 2. Likelihood cross-validation, 20 candidates, 10 000 events.
  n = await load(page, makeCsv(10000, 7));
  for (const edge of ['jones_diggle', 'none']) {
    const r = await timed(page, 'intensitySurface', { method: 'likelihood_cv', candidates: 20, edge });
    line({ task: 'likelihood cross-validation, 20 bandwidths (+ the surface)', n, edge, chosen_m: +r.bandwidth_m.toFixed(1), seconds: +r.s.toFixed(3), target_s: 10 });
  }
  {
    const r = await timed(page, 'intensitySurface', { method: 'diggle_mse', candidates: 20 });
    line({ task: 'mean-square-error criterion, 20 bandwidths (+ the surface)', n, chosen_m: r.bandwidth_m === undefined ? null : +r.bandwidth_m.toFixed(1), seconds: +r.s.toFixed(3) });
  }

  // 3. Scan, 5 000 events, 999 replicates, through the worker's job runner.
  n = await load(page, makeCsv(5000, 99));
  const scan = await page.evaluate(async () => {
    const t0 = performance.now();
    let tStart = null;
    const job = window.Cloister.runJob({ start: 'scanStart', step: 'scanStep', finish: 'scanFinish', params: { n_sim: 999, seed: 1 } },
      (p) => { if (tStart === null) tStart = performance.now(); });
    const r = await job.promise;
    const t1 = performance.now();
    return { s: (t1 - t0) / 1000, setup_s: ((tStart ?? t1) - t0) / 1000, windows: r.n_windows, regions: r.n_regions, p: r.p_value };
  });
  line({ task: 'scan, Poisson against area, 999 replicates', n, regions: scan.regions, windows: scan.windows, seconds: +scan.s.toFixed(3), setup_seconds: +scan.setup_s.toFixed(3), target_s: 30 });

  // 4. Cancel latency: a long scan, cancelled after it has run a while.
  const lat = [];
  for (let rep = 0; rep < 3; rep++) {
    lat.push(await page.evaluate(async () => {
      const job = window.Cloister.runJob({ start: 'scanStart', step: 'scanStep', finish: 'scanFinish', params: { n_sim: 100000, seed: 2 } }, () => {});
      await new Promise((r) => setTimeout(r, 1500));
      const t0 = performance.now();
      job.cancel();
      try { await job.promise; return null; } catch (e) { return e.code === 'cancelled' ? (performance.now() - t0) / 1000 : null; }
    }));
  }
  line({ task: 'cancel a running scan: time to stop', n, seconds: lat.map((v) => (v === null ? null : +v.toFixed(3))), target_s: 0.5 });
  await context.close();
} finally {
  await browser.close();
}
