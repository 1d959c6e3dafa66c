// How long does the relative-risk surface take at the size the page aims
// for? 5,000 cases and 20,000 controls (seeded, invented: controls spread
// over a 20 km × 20 km square (so the grid is 256 × 256) with a denser band, cases following them
// plus two small groups), 256 cells on the longer side, 99 random
// labellings; times the start (bandwidth choice, observed surface), the
// labellings and the finish (contours, verdict) for each bandwidth method,
// one JSON line each. Runs the Node build (dist/node, release wasm) on one
// thread, as the page's worker does.
// Usage: node bench/relrisk.mjs [cases] [controls] [n_sim] [cells]
// Never run from the tests.
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session } = require('../dist/node/cloister.js');

function rng(seed) {
  let s = seed >>> 0;
  return () => { s = (Math.imul(s, 1103515245) + 12345) >>> 0; return s / 2 ** 32; };
}

function pointsCsv(n, seed, groups) {
  const rnd = rng(seed);
  const lines = ['x,y'];
  while (lines.length <= n) {
    let x, y;
    const g = groups.length && rnd() < 0.06 ? groups[Math.floor(rnd() * groups.length)] : null;
    if (g) {
      x = g[0] + (rnd() - 0.5) * 800;
      y = g[1] + (rnd() - 0.5) * 800;
    } else {
      x = rnd() * 20000;
      y = rnd() * 20000;
      // A denser band across the middle: kept with probability 1 there, 0.4 elsewhere.
      if (Math.abs(y - 10000) > 3000 && rnd() > 0.4) continue;
    }
    if (x > 0 && x < 20000 && y > 0 && y < 20000) lines.push(`${x.toFixed(1)},${y.toFixed(1)}`);
  }
  return new TextEncoder().encode(lines.join('\n'));
}

const [nc, n0, nSim, cells] = process.argv.slice(2).map(Number);
const cases = nc || 5000;
const controls = n0 || 20000;
const n_sim = nSim || 99;
const s = new Session();
s.loadEvents(pointsCsv(cases, 7, [[5000, 6000], [14000, 14000]]), {});
s.setAreaFallback('bounding_box');
s.loadControls(pointsCsv(controls, 11, []), {});
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
