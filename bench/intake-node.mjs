// Intake benchmark in Node.js, through the same wasm core the page uses
// (dist/node, built by ./build.sh). Same CSV shape and seed idea as the native
// benchmark (examples/bench_intake.rs), generated here with a small seeded LCG.
// Usage: node bench/intake-node.mjs 1000 10000 100000 1000000
import { createRequire } from 'node:module';
const require = createRequire(import.meta.url);
const { Session } = require('../dist/node/cloister.js');

function makeCsv(n, seed) {
  let s = BigInt(seed);
  const next = () => { // 64-bit LCG (Knuth MMIX constants), top 53 bits
    s = (s * 6364136223846793005n + 1442695040888963407n) & 0xffffffffffffffffn;
    return Number(s >> 11n) / 2 ** 53;
  };
  const parts = ['id,longitude,latitude,onset_date,category\n'];
  for (let i = 0; i < n; i++) {
    const lon = (-32.06 + 0.12 * next()).toFixed(6);
    const lat = (-41.54 + 0.08 * next()).toFixed(6);
    const day = String(1 + Math.floor(next() * 28)).padStart(2, '0');
    const month = String(1 + Math.floor(next() * 12)).padStart(2, '0');
    const cat = next() < 0.3 ? 'enteric' : 'respiratory';
    parts.push(`${i},${lon},${lat},2025-${month}-${day},${cat}\n`);
  }
  return new TextEncoder().encode(parts.join(''));
}

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
