// The Mantel test and the space–time K function in headless Chromium,
// through the page and its worker: the events written by
//   cargo run --release --example bench_mantel_stk -- export
// (target/bench-data/spacetime-5000.csv: 5,000 invented events uniform in a
// 10 km x 6 km rectangle, dates uniform over one year; x, y in metres) are
// read with the events file input, then Cloister.runJob is timed as the Run
// buttons use it: spread over helper workers and on one worker.
// Mantel: 999 permutations, reciprocal transforms. Space–time K: 20 x 20
// grid, 199 permutations, default largest distance and time.
// Usage: node bench/mantel-stk-browser.mjs. Prints one JSON line per run.
// Never run from the tests.
import { launch, openPage, act } from '../tests/e2e/helpers.mjs';

const file = 'target/bench-data/spacetime-5000.csv';
const browser = await launch();
try {
  const { page } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', file));
  for (const [what, start, params, minPiece] of [
    ['Mantel', 'mantelStart', { n_sim: 999, seed: 7 }, 8],
    ['space-time K, 20 x 20', 'spaceTimeKStart', { n_sim: 199, seed: 7, s_steps: 20, t_steps: 20 }, 4],
  ]) {
    for (const parallel of [true, false]) {
      const got = await page.evaluate(async ({ start, params, parallel, minPiece }) => {
        const p = start.replace('Start', '');
        const spec = { start, step: `${p}Step`, finish: `${p}Finish`, params };
        if (parallel) spec.parallel = { share: `${p}Share`, helperStart: `${p}HelperStart`, simulate: `${p}Simulate`, add: `${p}Add`, minPiece };
        let used = 1;
        const t0 = performance.now();
        const res = await window.Cloister.runJob(spec, (q) => { used = Math.max(used, q.workers || 1); }).promise;
        return { seconds: (performance.now() - t0) / 1000, workers: used, cores: navigator.hardwareConcurrency, n_events: res.n_events, n_sim: res.n_sim, p: res.p_value ?? res.global_p, pairs: res.pairs_within_s_max ?? res.pairs };
      }, { start, params, parallel, minPiece });
      console.log(JSON.stringify({ what: `${what} in the page`, spread: parallel, ...got }));
    }
  }
  await page.close();
} finally {
  await browser.close();
}
