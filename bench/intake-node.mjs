// Intake benchmark in Node.js, through the same wasm core the page uses
// (dist/node, built by ./build.sh). Same CSV shape and seed idea as the native
// benchmark (examples/bench_intake.rs), generated here with a small seeded LCG.
// Usage: node bench/intake-node.mjs 1000 10000 100000 1000000
import { createRequire } from 'node:module';
const require = createRequire(import.meta.url);
const { Session } = require('../dist/node/cloister.js');

import { makeCsv as makeCsvText } from './events-csv.mjs';
const makeCsv = (n, seed) => new TextEncoder().encode(makeCsvText(n, seed));

const sizes = process.argv.slice(2).map(Number).filter(Boolean);
for (const n of (sizes.length ? sizes : [1e3, 1e4, 1e5, 1e6])) {
  const bytes = makeCsv(n, 20261202);
  let best = Infinity, peak = 0;
  const reps = n >= 1e6 ? 3 : 5;
  for (let r = 0; r < reps; r++) {
    const s = new Session();
    const t0 = performance.now();
    s.loadEvents(bytes, {});
    const sm = s.summary();
    const t = (performance.now() - t0) / 1000;
    if (sm.n_events !== n) throw new Error(`expected ${n} events, got ${sm.n_events}`);
    best = Math.min(best, t);
    peak = Math.max(peak, process.memoryUsage().rss / 2 ** 20);
    s.free();
  }
  console.log(JSON.stringify({ where: 'node', n, bytes: bytes.length, total_s: +best.toFixed(4), peak_rss_mb: +peak.toFixed(1) }));
}
