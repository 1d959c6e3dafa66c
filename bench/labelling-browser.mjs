// Random labelling test in headless Chromium, through the page and its
// worker: the cases and controls written by
//   cargo run --release --example bench_labelling -- export
// (target/bench-data/labelling-<cases>-<controls>.csv, an invented uneven
// population in a 10 km x 6 km rectangle; x, y in metres) are read with the
// events and population file inputs, then Cloister.runJob (labellingStart /
// Step / Finish) is timed as the Run button uses it: spread over helper
// workers (one piece per worker) and on one worker, side by side in one run.
// Isotropic correction, largest distance 1,500 m (a quarter of the shorter
// side), 50 steps. Usage: node bench/labelling-browser.mjs [n_sim]
// Prints one JSON line per run. Never run from the tests.
import { readFileSync, readdirSync, writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { launch, openPage, act } from '../tests/e2e/helpers.mjs';

const nSim = Number(process.argv[2]) || 199;

/** Resident memory (MiB) of every process whose command line names chromium
 * (as bench/reload-memory.mjs). The worker's wasm memory only grows, so the
 * growth over a one-worker run is about the run's peak memory. */
function chromiumRss() {
  let kb = 0;
  for (const pid of readdirSync('/proc').filter((d) => /^\d+$/.test(d))) {
    try {
      const cmd = readFileSync(`/proc/${pid}/cmdline`, 'utf8');
      if (!/chrom/i.test(cmd)) continue;
      const m = /VmRSS:\s+(\d+)/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
      if (m) kb += Number(m[1]);
    } catch { /* gone */ }
  }
  return kb / 1024;
}
const dir = mkdtempSync(join(tmpdir(), 'cloister-labelling-'));
const browser = await launch();
try {
  for (const tag of ['2000-8000', '5000-20000']) {
    const rows = readFileSync(`target/bench-data/labelling-${tag}.csv`, 'utf8').trim().split('\n').slice(1);
    const cases = ['x,y'];
    const controls = ['x,y'];
    for (const r of rows) {
      const [x, y, c] = r.split(',');
      (c === '1' ? cases : controls).push(`${x},${y}`);
    }
    const casesFile = join(dir, `cases-${tag}.csv`);
    const controlsFile = join(dir, `controls-${tag}.csv`);
    writeFileSync(casesFile, cases.join('\n'));
    writeFileSync(controlsFile, controls.join('\n'));
    const { page } = await openPage(browser);
    await act(page, () => page.setInputFiles('#events-file', casesFile));
    await act(page, () => page.setInputFiles('#controls-file', controlsFile));
    for (const parallel of [false, true]) {
      const rss0 = chromiumRss();
      const got = await page.evaluate(async ({ nSim, parallel }) => {
        const workers = parallel ? window.Cloister.jobWorkers?.() ?? navigator.hardwareConcurrency : 1;
        const params = { n_sim: nSim, seed: 7, r_max_m: 1500, n_steps: 50, correction: 'isotropic' };
        const spec = { start: 'labellingStart', step: 'labellingStep', finish: 'labellingFinish', params };
        if (parallel) spec.parallel = { share: 'labellingShare', helperStart: 'labellingHelperStart', simulate: 'labellingSimulate', add: 'labellingAdd', minPiece: Math.min(256, Math.ceil(nSim / Math.max(1, Math.min(navigator.hardwareConcurrency || 1, 8)))) };
        let used = 1;
        const t0 = performance.now();
        const res = await window.Cloister.runJob(spec, (p) => { used = Math.max(used, p.workers || 1); }).promise;
        return { seconds: (performance.now() - t0) / 1000, workers: used, n_cases: res.n_cases, n_controls: res.n_controls, n_sim: res.n_sim, mad_p: res.mad.p_value, cores: navigator.hardwareConcurrency, requested: workers };
      }, { nSim, parallel });
      const grew = Math.round(chromiumRss() - rss0);
      console.log(JSON.stringify({ what: 'random labelling in the page', spread: parallel, ...got, browser_rss_growth_mib: grew }));
    }
    await page.close();
  }
} finally {
  await browser.close();
}
