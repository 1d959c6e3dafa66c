// Kulldorff's scan in headless Chromium, through the page and its worker, on
// the demo (Load the demo: cases against one control per person, Bernoulli),
// the demo with the population as counts (Poisson against the counts) and
// 20,000 invented uniform events without a population file (Poisson against
// area, 800 grid cells; the helper tests' uniformCsv(20000, 99)):
// Cloister.runJob (scanStart / Step / Finish) timed as the Run button uses
// it, spread over helper workers and on one worker, side by side, and the
// two results compared. Usage: node bench/scan-browser.mjs [n_sim] [repeats]
// With a third argument `large`: instead, 10,000 invented events at
// distinct places (5,000 cases from uniformCsv(5000, 11), 5,000 controls
// from uniformCsv(5000, 12)), cases against controls with circles centred
// on every place (`centres: 'events'`, exact) and, for comparison, on grid
// cells (`large 5000`: 5,000 events, 2,500 of each); the time to set up (scanStart: circles, data scored, a few chance
// runs timed) is printed apart.
// A sixth argument `two` (e.g. `999 1 large 10000 two`) times only the run
// spread over helper workers with circles at every place.
// Prints one JSON line per run. Never run from the tests.
import { launch, openPage, act, uniformCsv } from '../tests/e2e/helpers.mjs';

const nSim = Number(process.argv[2]) || 999;
const repeats = Number(process.argv[3]) || 2;
const large = process.argv[4] === 'large';
// `large N`: N events instead of 10,000 (half cases, half controls).
const half = Math.round((Number(process.argv[5]) || 10000) / 2);
const twoOnly = process.argv[6] === 'two';
const scenarios = large
  ? [['large', 'bernoulli', 'events'], ['large', 'bernoulli', 'grid']].slice(0, twoOnly ? 1 : 2)
  : [['#demo-button', 'bernoulli'], ['#demo-counts-button', 'poisson_population'], [null, 'poisson']];
const browser = await launch();
try {
  const { page } = await openPage(browser);
  let loaded = null;
  for (const [button, model, centres] of scenarios) {
    if (button === 'large') {
      if (loaded !== 'large') {
        await act(page, () => page.setInputFiles('#events-file', { name: 'cases.csv', mimeType: 'text/csv', buffer: uniformCsv(half, 11) }));
        await act(page, () => page.setInputFiles('#controls-file', { name: 'controls.csv', mimeType: 'text/csv', buffer: uniformCsv(half, 12) }));
      }
    } else if (button) await act(page, () => page.click(button));
    else await act(page, () => page.setInputFiles('#events-file', { name: 'many.csv', mimeType: 'text/csv', buffer: uniformCsv(20000, 99) }));
    loaded = button;
    await page.waitForFunction((m) => document.getElementById('hs-scan-model').dataset.model === m, model, { timeout: 30000 });
    let base = null;
    for (let r = 0; r < repeats; r++) {
      for (const parallel of twoOnly ? [true] : [false, true]) {
        const got = await page.evaluate(async ({ nSim, parallel, centres }) => {
          const params = { n_sim: nSim, seed: 7 };
          if (centres) params.centres = centres;
          // As the page's scan panel asks (www/analyses/hotspots.js).
          const spec = { start: 'scanStart', step: 'scanStep', finish: 'scanFinish', params, batchMultiple: 8 };
          if (parallel) spec.parallel = { share: 'scanShare', helperStart: 'scanHelperStart', simulate: 'scanSimulate', add: 'scanAdd' };
          let workers = 1;
          let startMs = null;
          let regions = null;
          const t0 = performance.now();
          const res = await window.Cloister.runJob(spec, (p) => {
            workers = Math.max(workers, p.workers || 1);
            if (startMs === null && p.start_ms !== undefined) startMs = p.start_ms;
            if (p.started) regions = p.started.n_regions;
          }).promise;
          return { ms: performance.now() - t0, startMs, regions, workers, cores: navigator.hardwareConcurrency, p: res.p_value, json: JSON.stringify(res) };
        }, { nSim, parallel, centres });
        base ??= got.json;
        console.log(JSON.stringify({ model, centres: centres || 'auto', regions: got.regions, n_sim: nSim, parallel, workers: got.workers, cores: got.cores, seconds: +(got.ms / 1000).toFixed(2), start_seconds: got.startMs === null ? null : +(got.startMs / 1000).toFixed(2), p_value: got.p, same_as_first: got.json === base }));
      }
    }
  }
} finally {
  await browser.close();
}
