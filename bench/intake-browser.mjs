// Intake benchmark in headless Chromium: the whole path a user waits for when
// a file is chosen in dist/cloister.html (file read, hand-over to the worker,
// parse + validate + project in wasm, summary, map layers, drawing), timed
// from setInputFiles until the status line reports the rows used.
// Usage: node bench/intake-browser.mjs 1000 10000 100000 1000000
import { writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { launch, openPage } from '../tests/e2e/helpers.mjs';

import { makeCsv } from './events-csv.mjs';

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
