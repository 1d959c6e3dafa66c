// How long does the relative-risk surface take at the size the page aims
// for? 5,000 cases and 20,000 controls (seeded, invented, from
// bench/relrisk-data.mjs: a 20 km square, so the grid is 256 × 256),
// 256 cells on the longer side, 99 random
// labellings; times the start (bandwidth choice, observed surface), the
// labellings and the finish (contours, verdict) for each bandwidth method,
// one JSON line each. Runs the Node build (dist/node, release wasm) on one
// thread, as the page's worker does.
// Usage: node bench/relrisk.mjs [cases] [controls] [n_sim] [cells]
// Never run from the tests.
import { createRequire } from 'node:module';
import { casesCsv, controlsCsv } from './relrisk-data.mjs';

const require = createRequire(import.meta.url);
const { Session } = require('../dist/node/cloister.js');

const [nc, n0, nSim, cells] = process.argv.slice(2).map(Number);
const cases = nc || 5000;
const controls = n0 || 20000;
const n_sim = nSim || 99;
const s = new Session();
s.loadEvents(new TextEncoder().encode(casesCsv(cases)), {});
s.setAreaFallback('bounding_box');
s.loadControls(new TextEncoder().encode(controlsCsv(controls)), {});
for (const method of ['pooled_rule', 'likelihood_cv']) {
  const params = { method, n_sim, seed: 1, cells: cells || 256 };
  let t = performance.now();
  const st = s.riskSurfaceStart(params);
  const startMs = performance.now() - t;
  t = performance.now();
  let done = 0;
  while (done < st.total) done = s.riskSurfaceStep(10);
  const simMs = performance.now() - t;
  t = performance.now();
  const r = s.riskSurfaceFinish();
  const finishMs = performance.now() - t;
  console.log(JSON.stringify({
    cases, controls, n_sim, grid: `${r.nx}x${r.ny}`, method, bandwidth_m: Math.round(r.bandwidth_m),
    start_ms: Math.round(startMs), labellings_ms: Math.round(simMs), finish_ms: Math.round(finishMs),
    total_s: +((startMs + simMs + finishMs) / 1000).toFixed(2), global_p: r.t_p_value, raised_places: r.raised_regions.length,
  }));
}
