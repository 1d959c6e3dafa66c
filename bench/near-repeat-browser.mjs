// The near-repeat table and the Knox test in headless Chromium, through the
// page and its worker: Cloister.runJob (nearRepeatStart / Step / Finish and
// knoxStart / ...) timed as the Run buttons use it, spread over helper
// workers and on one worker, side by side, and the two results compared.
// Data: invented, seeded: 20,000 events over 20 km × 20 km and one year
// (70 % uniform, the rest in chains of near repeats within 150 m and 14
// days), dates as whole days; the table has "same location" + 10 distance
// bands of 100 m × 10 time bands of 7 days. Knox: the first 5,000 of a second
// such set, 100 m and 7 days. Usage: node bench/near-repeat-browser.mjs
// [n_perm] [repeats]. Prints one JSON line per run. Never run from the tests.
import { launch, openPage, act } from '../tests/e2e/helpers.mjs';

const nPerm = Number(process.argv[2]) || 999;
const repeats = Number(process.argv[3]) || 1;

function eventsCsv(n, seed) {
  let s = seed;
  const rnd = () => { s = (Math.imul(s, 1103515245) + 12345) >>> 0; return s / 2 ** 32; };
  const day0 = Date.UTC(2025, 0, 1);
  const rows = [];
  const bg = Math.floor(n * 0.7);
  for (let i = 0; i < bg; i++) rows.push([rnd() * 20000, rnd() * 20000, rnd() * 365]);
  while (rows.length < n) {
    const [x0, y0, t0] = rows[Math.floor(rnd() * bg)];
    for (let k = 0; k < 4 && rows.length < n; k++) {
      const a = rnd() * 2 * Math.PI;
      const r = rnd() * 150;
      rows.push([x0 + r * Math.cos(a), y0 + r * Math.sin(a), Math.min(364, t0 + rnd() * 14)]);
    }
  }
  const date = (d) => new Date(day0 + Math.floor(d) * 86400000).toISOString().slice(0, 10);
  return Buffer.from(['x,y,date', ...rows.map(([x, y, t]) => `${x.toFixed(1)},${y.toFixed(1)},${date(t)}`)].join('\n'));
}

const browser = await launch();
try {
  const { page } = await openPage(browser);
  for (const [method, n, seed, params] of [
    ['nearRepeat', 20000, 2026, { band_m: 100, max_distance_m: 1000, band_days: 7, max_days: 70, same_location: true, n_perm: nPerm, seed: 1 }],
    ['knox', 5000, 7, { distance_m: 100, days: 7, n_perm: nPerm, seed: 1 }],
  ]) {
    await act(page, () => page.setInputFiles('#events-file', { name: `events-${n}.csv`, mimeType: 'text/csv', buffer: eventsCsv(n, seed) }));
    let base = null;
    for (let r = 0; r < repeats; r++) {
      for (const parallel of [false, true]) {
        const got = await page.evaluate(async ({ method, params, parallel }) => {
          const spec = { start: `${method}Start`, step: `${method}Step`, finish: `${method}Finish`, params };
          if (parallel) spec.parallel = { share: `${method}Share`, helperStart: `${method}HelperStart`, simulate: `${method}Simulate`, add: `${method}Add` };
          let workers = 1;
          const t0 = performance.now();
          const res = await window.Cloister.runJob(spec, (p) => { workers = Math.max(workers, p.workers || 1); }).promise;
          return { ms: performance.now() - t0, workers, cores: navigator.hardwareConcurrency, events: res.n_events, json: JSON.stringify(res) };
        }, { method, params, parallel });
        base ??= got.json;
        console.log(JSON.stringify({ method, events: got.events, n_perm: nPerm, parallel, workers: got.workers, cores: got.cores, seconds: +(got.ms / 1000).toFixed(2), same_as_first: got.json === base }));
      }
    }
  }
} finally {
  await browser.close();
}
