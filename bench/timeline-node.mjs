// The time line through the JS API (dist/node, release wasm): reading a file
// of N invented events with from/to dates (a third known only within a
// window of 1 to 4 days, over two years), then timeline() by day, week and
// month, and eventTimes(). Prints one JSON line per size.
// Run: node bench/timeline-node.mjs 10000 100000 1000000
import { createRequire } from 'node:module';
import { performance } from 'node:perf_hooks';

const require = createRequire(import.meta.url);
const { Session } = require('../dist/node/cloister.js');
const sizes = process.argv.slice(2).map(Number).filter((n) => n > 0);
const DAY = 86400000;
const t0 = Date.UTC(2024, 0, 1);

function file(n) {
  // A small seeded generator (LCG), so the file is the same every run.
  let s = 12345;
  const r = () => ((s = (s * 1103515245 + 12345) % 2147483648) / 2147483648);
  const rows = ['x,y,date_from,date_to'];
  for (let i = 0; i < n; i++) {
    const d = Math.floor(r() * 730);
    const from = new Date(t0 + d * DAY).toISOString().slice(0, 10);
    const to = r() < 1 / 3 ? new Date(t0 + (d + 1 + Math.floor(r() * 4)) * DAY).toISOString().slice(0, 10) : '';
    rows.push(`${(r() * 10000).toFixed(1)},${(r() * 10000).toFixed(1)},${from},${to}`);
  }
  return new TextEncoder().encode(rows.join('\n'));
}

const ms = (f) => { const a = performance.now(); const v = f(); return [performance.now() - a, v]; };
for (const n of sizes.length ? sizes : [10000, 100000, 1000000]) {
  const bytes = file(n);
  const s = new Session();
  const [load] = ms(() => s.loadEvents(bytes, {}));
  const out = { n, load_ms: Math.round(load) };
  for (const bin of ['day', 'week', 'month']) {
    const [t, res] = ms(() => s.timeline({ bin }));
    out[`timeline_${bin}_ms`] = Math.round(t * 10) / 10;
    out[`${bin}_bars`] = res.whole.length;
  }
  const [et] = ms(() => s.eventTimes());
  out.event_times_ms = Math.round(et * 10) / 10;
  console.log(JSON.stringify(out));
  s.free();
}
