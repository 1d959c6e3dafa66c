// How long does the scan against population counts take? Times scanStart
// (windows and data) and the 999 chance runs on the Node build (dist/node,
// one thread): the demo with demo-data/population-blocks.csv, and invented
// counts layers of 2 000 points (circles at the points) and 20 000 points
// (summed into grid cells) in a 20 km × 10 km rectangle with 5 000 cases
// placed in proportion to the counts (seeded LCG). One JSON line per case.
// Usage: node bench/scan-population-node.mjs
// Never run from the tests.
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session } = require('../dist/node/cloister.js');
const root = new URL('../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));

function layers(nPop, nCases, seed) {
  let s = seed;
  const rnd = () => { s = (Math.imul(s, 1103515245) + 12345) >>> 0; return s / 2 ** 32; };
  const pop = [];
  for (let i = 0; i < nPop; i++) pop.push([rnd() * 20000, rnd() * 10000, 1 + Math.floor(rnd() * 200)]);
  const total = pop.reduce((a, p) => a + p[2], 0);
  const cum = [];
  let acc = 0;
  for (const p of pop) { acc += p[2]; cum.push(acc); }
  const cases = ['x,y'];
  for (let i = 0; i < nCases; i++) {
    const u = rnd() * total;
    let lo = 0, hi = cum.length - 1;
    while (lo < hi) { const m = (lo + hi) >> 1; if (cum[m] > u) hi = m; else lo = m + 1; }
    cases.push(`${(pop[lo][0] + (rnd() - 0.5) * 20).toFixed(1)},${(pop[lo][1] + (rnd() - 0.5) * 20).toFixed(1)}`);
  }
  const ctl = ['x,y,residents', ...pop.map((p) => `${p[0].toFixed(1)},${p[1].toFixed(1)},${p[2]}`)];
  const enc = (l) => new TextEncoder().encode(l.join('\n'));
  return [enc(cases), enc(ctl)];
}

function time(label, s) {
  let t = performance.now();
  const st = s.scanStart({ n_sim: 999, seed: 1 });
  const setup = (performance.now() - t) / 1000;
  t = performance.now();
  let done = 0;
  while (done < st.total) done = s.scanStep(50);
  const r = s.scanFinish();
  const run = (performance.now() - t) / 1000;
  console.log(JSON.stringify({ case: label, model: r.model, centres: r.centres, regions: r.n_regions, circles: r.n_windows,
    setup_s: +setup.toFixed(3), chance_runs_s: +run.toFixed(3), estimate_s: +(st.estimate_ms / 1000).toFixed(3), p: r.p_value }));
}

const demo = new Session();
demo.loadArea(file('demo-data/town-boundary.geojson'), {});
demo.loadEvents(file('demo-data/cases.csv'), {});
demo.loadControls(file('demo-data/population-blocks.csv'), {});
time('demo, 1 500 cases, 364 blocks', demo);
for (const nPop of [2000, 20000]) {
  const [cases, ctl] = layers(nPop, 5000, 777 + nPop);
  const s = new Session();
  const planar = { coords: { kind: 'planar', unit: 'metre' } };
  s.loadEvents(cases, planar);
  s.loadControls(ctl, planar);
  time(`5 000 cases, ${nPop} population points`, s);
}
