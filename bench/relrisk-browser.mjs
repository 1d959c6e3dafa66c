// The relative-risk surface in headless Chromium at the size the page aims
// for (5,000 cases, 20,000 controls, 256 × 256 grid, 99 random labellings;
// target under 10 s): the page's own worker runs the job (through
// window.Cloister.runJob from page.evaluate), so the figure includes the
// batches, progress messages and the hand-over of the result. Data from
// bench/relrisk-data.mjs. Prints JSON lines. Usage: node bench/relrisk-browser.mjs
import { launch, openPage } from '../tests/e2e/helpers.mjs';
import { casesCsv, controlsCsv } from './relrisk-data.mjs';

const browser = await launch();
try {
  const { page } = await openPage(browser);
  await page.evaluate(async ([ev, ctl]) => {
    const C = window.Cloister;
    const enc = (t) => new TextEncoder().encode(t);
    await C.call('loadEvents', enc(ev), { coords: { kind: 'planar', unit: 'metre' } });
    await C.call('setAreaFallback', 'bounding_box');
    await C.call('loadControls', enc(ctl), { coords: { kind: 'planar', unit: 'metre' } });
  }, [casesCsv(5000), controlsCsv(20000)]);
  // Each method spread over helper workers (as the page's button runs it)
  // and on one worker, side by side in one run.
  for (const method of ['pooled_rule', 'likelihood_cv']) {
    for (const spread of [true, false]) {
      const r = await page.evaluate(async ([method, spread]) => {
        const t0 = performance.now();
        const spec = { start: 'riskSurfaceStart', step: 'riskSurfaceStep', finish: 'riskSurfaceFinish', params: { method, n_sim: 99, seed: 1, cells: 256 } };
        if (spread) spec.parallel = { share: 'riskSurfaceShare', helperStart: 'riskSurfaceHelperStart', simulate: 'riskSurfaceSimulate', add: 'riskSurfaceAdd' };
        let workers = 1;
        const job = window.Cloister.runJob(spec, (p) => { workers = Math.max(workers, p.workers || 1); });
        const res = await job.promise;
        return { s: (performance.now() - t0) / 1000, workers, grid: `${res.nx}x${res.ny}`, bandwidth_m: Math.round(res.bandwidth_m), p: res.t_p_value };
      }, [method, spread]);
      console.log(JSON.stringify({ where: 'chromium page (worker)', cases: 5000, controls: 20000, n_sim: 99, method, spread, ...r, target_s: 10 }));
    }
  }
} finally {
  await browser.close();
}
