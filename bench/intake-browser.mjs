// Intake benchmark in headless Chromium: the whole path a user waits for when
// a file is chosen in dist/cloister.html (file read, hand-over to the worker,
// parse + validate + project in wasm, summary, map layers, drawing), timed
// from setInputFiles until the status line reports the rows used.
// Usage: node bench/intake-browser.mjs 1000 10000 100000 1000000
import { writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { launch, openPage } from '../tests/e2e/helpers.mjs';

function makeCsv(n, seed) { // same generator as bench/intake-node.mjs
  let s = BigInt(seed);
  const next = () => {
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
  return parts.join('');
}

const sizes = process.argv.slice(2).map(Number).filter(Boolean);
const dir = mkdtempSync(join(tmpdir(), 'cloister-bench-'));
const browser = await launch();
try {
  for (const n of (sizes.length ? sizes : [1e3, 1e4, 1e5, 1e6])) {
    const path = join(dir, `events-${n}.csv`);
    writeFileSync(path, makeCsv(n, 20261202));
    let best = Infinity;
    const reps = n >= 1e6 ? 2 : 3;
    for (let r = 0; r < reps; r++) {
      const { page, context } = await openPage(browser);
      const want = `events-${n}.csv: ${n.toLocaleString('en-US')} of`;
      const t0 = Date.now();
      await page.setInputFiles('#events-file', path);
      await page.waitForFunction((w) => document.getElementById('status').textContent.includes(w), want, { timeout: 300000 });
      best = Math.min(best, (Date.now() - t0) / 1000);
      await context.close();
    }
    console.log(JSON.stringify({ where: 'chromium page (worker)', n, total_s: +best.toFixed(3) }));
  }
} finally {
  await browser.close();
}
