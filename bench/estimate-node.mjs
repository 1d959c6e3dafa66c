// How good is the envelope time estimate? For n uniform events in a
// 20 km × 10 km rectangle (seeded), times envelopeEstimate, then the
// observed curve (envelopeStart) and one simulation (envelopeStep(1)) for
// each setting, and prints estimate against measurement, one JSON line per
// setting. Runs the Node build (dist/node) on one thread.
// Usage: node bench/estimate-node.mjs [n] [settings...]
//   settings: default | border | rmax=<metres> | g | G   (default: all of default, border, rmax=500)
//   e.g. node bench/estimate-node.mjs 200000 default
// Never run from the tests.
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session } = require('../dist/node/cloister.js');

function uniformCsv(n, seed) {
  let s = seed;
  const rnd = () => { s = (Math.imul(s, 1103515245) + 12345) >>> 0; return s / 2 ** 32; };
  const lines = ['x,y'];
  for (let i = 0; i < n; i++) lines.push(`${(rnd() * 20000).toFixed(1)},${(rnd() * 10000).toFixed(1)}`);
  return new TextEncoder().encode(lines.join('\n'));
}

const args = process.argv.slice(2);
const n = Number(args[0]) || 50000;
const wanted = args.slice(1).length ? args.slice(1) : ['default', 'border', 'rmax=500'];
const s = new Session();
s.loadEvents(uniformCsv(n, 12345), {});
for (const w of wanted) {
  const params = { n_sim: 199, seed: 1 };
  if (w === 'border') params.correction = 'border';
  if (w.startsWith('rmax=')) params.r_max_m = Number(w.slice(5));
  if (w === 'g') params.function = 'pair_correlation';
  if (w === 'G') params.function = 'nearest_neighbour';
  let t = performance.now();
  const e = s.envelopeEstimate(params, 1);
  const estimateMs = performance.now() - t;
  t = performance.now();
  s.envelopeStart(params);
  const curveMs = performance.now() - t;
  t = performance.now();
  s.envelopeStep(1);
  const simMs = performance.now() - t;
  console.log(JSON.stringify({
    n, setting: w, estimate_took_ms: Math.round(estimateMs),
    curve_estimated_ms: Math.round(e.curve_ms), curve_measured_ms: Math.round(curveMs),
    simulation_estimated_ms: Math.round(e.simulation_ms), simulation_measured_ms: Math.round(simMs),
    ratio_curve: +(e.curve_ms / curveMs).toFixed(2), ratio_simulation: +(e.simulation_ms / simMs).toFixed(2),
  }));
}
