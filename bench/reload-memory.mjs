// Memory when the same large events file is chosen again and again in the
// page (headless Chromium, dist/cloister.html): after each load, the summed
// resident memory of the browser's processes and the page's JS heap.
// Usage: node bench/reload-memory.mjs [rows=1000000] [loads=6]
import { writeFileSync, mkdtempSync, readFileSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { launch, openPage, act } from '../tests/e2e/helpers.mjs';
import { makeCsv } from './events-csv.mjs';

const n = Number(process.argv[2] || 1e6);
const loads = Number(process.argv[3] || 6);
const dir = mkdtempSync(join(tmpdir(), 'cloister-reload-'));
const path = join(dir, `events-${n}.csv`);
writeFileSync(path, makeCsv(n, 20261203));

/** Resident memory (MiB) of every process whose command line names chromium. */
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

const browser = await launch();
try {
  const { page } = await openPage(browser);
  const cdp = await page.context().newCDPSession(page);
  await cdp.send('Performance.enable');
  const rows = [];
  for (let i = 1; i <= loads; i++) {
    await act(page, () => page.setInputFiles('#events-file', path), 300000);
    await page.waitForTimeout(1500);
    await cdp.send('HeapProfiler.collectGarbage');
    await page.waitForTimeout(500);
    const m = Object.fromEntries((await cdp.send('Performance.getMetrics')).metrics.map((x) => [x.name, x.value]));
    rows.push({ load: i, browser_rss_mib: Math.round(chromiumRss()), page_js_heap_mib: +(m.JSHeapUsedSize / 2 ** 20).toFixed(1) });
    console.log(JSON.stringify(rows[rows.length - 1]));
  }
} finally {
  await browser.close();
}
