// The space–time permutation scan in headless Chromium, through the page
// and its worker: invented events (N at L distinct places uniform in a
// 10 km square, dates uniform over 2025, seeded; no space–time
// interaction), Cloister.runJob (spaceTimeScanStart / Step / Finish) timed
// as the Run button uses it, spread over helper workers and on one worker,
// and the two results compared. Prospective: periods of up to 30 days
// ending on the last day, n_sim permutations; retrospective: periods of up
// to 30 days anywhere, fewer permutations (its time per permutation is the
// figure). Usage:
//   node bench/st-scan-browser.mjs [events] [places] [n_sim prospective] [n_sim retrospective]
// Prints one JSON line per run. Never run from the tests.
import { launch, openPage, act } from '../tests/e2e/helpers.mjs';

const n = Number(process.argv[2]) || 10000;
const places = Number(process.argv[3]) || 1000;
const nPro = Number(process.argv[4]) || 999;
const nRetro = Number(process.argv[5]) || 3;

function csv() {
  let s = 20250601;
  const rnd = () => { s = (Math.imul(s, 1103515245) + 12345) >>> 0; return s / 2 ** 32; };
  const at = Array.from({ length: places }, () => [(rnd() * 10000).toFixed(1), (rnd() * 10000).toFixed(1)]);
  const t0 = Date.UTC(2025, 0, 1);
  const lines = ['x,y,date'];
  for (let i = 0; i < n; i++) {
    const [x, y] = at[Math.min(places - 1, Math.floor(rnd() * places))];
    const d = new Date(t0 + Math.floor(rnd() * 365) * 86400000).toISOString().slice(0, 10);
    lines.push(`${x},${y},${d}`);
  }
  return Buffer.from(lines.join('\n'));
}

const browser = await launch();
try {
  const { page } = await openPage(browser);
  await act(page, () => page.setInputFiles('#events-file', { name: 'st.csv', mimeType: 'text/csv', buffer: csv() }));
  for (const [mode, nSim] of [['prospective', nPro], ['retrospective', nRetro]]) {
    let base = null;
    for (const parallel of [true, false]) {
      const got = await page.evaluate(async ({ mode, nSim, parallel }) => {
        const spec = { start: 'spaceTimeScanStart', step: 'spaceTimeScanStep', finish: 'spaceTimeScanFinish', params: { mode, n_sim: nSim, seed: 7, max_days: 30 } };
        if (parallel) spec.parallel = { share: 'spaceTimeScanShare', helperStart: 'spaceTimeScanHelperStart', simulate: 'spaceTimeScanSimulate', add: 'spaceTimeScanAdd' };
        let workers = 1;
        let startMs = null;
        const t0 = performance.now();
        const res = await window.Cloister.runJob(spec, (p) => { workers = Math.max(workers, p.workers || 1); if (startMs === null && p.start_ms != null) startMs = p.start_ms; }).promise;
        return { ms: performance.now() - t0, startMs, workers, cores: navigator.hardwareConcurrency, p: res.p_value, circles: res.n_circles, json: JSON.stringify(res) };
      }, { mode, nSim, parallel });
      base ??= got.json;
      console.log(JSON.stringify({ mode, events: n, places, n_sim: nSim, parallel, workers: got.workers, cores: got.cores, circles: got.circles, start_s: +(got.startMs / 1000).toFixed(2), seconds: +(got.ms / 1000).toFixed(2), p_value: got.p, same_as_first: got.json === base }));
    }
  }
} finally {
  await browser.close();
}
