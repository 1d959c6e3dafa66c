// (5) Nothing leaves the page: during a whole session every request is to the
// page itself (file:, data:, blob:), and a loopback canary that the page and
// its worker try hard to reach receives nothing. A control page without the
// page's Content-Security-Policy reaches the same canary, which shows the
// canary would have caught a leak.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import http from 'node:http';
import { join } from 'node:path';
import { readFileSync } from 'node:fs';
import { launch, openPage, loadDemo, act, FIXTURES, ROOT, PAGE } from './helpers.mjs';

let browser;
let server;
let hits = [];
let base;

before(async () => {
  browser = await launch();
  server = http.createServer((req, res) => {
    hits.push(`${req.method} ${req.url}`);
    res.writeHead(200, { 'content-type': 'text/plain', 'access-control-allow-origin': '*' });
    res.end('canary');
  });
  await new Promise((r) => server.listen(0, '127.0.0.1', r));
  base = `http://127.0.0.1:${server.address().port}`;
});
after(async () => {
  await browser?.close();
  await new Promise((r) => server.close(r));
});

/** Every way we can think of to send something out, run in the given context. */
const attempts = async (base) => {
  const tries = [];
  const attempt = async (what, fn) => {
    try { await fn(); tries.push(`${what}: no error`); } catch (e) { tries.push(`${what}: ${e && e.name}`); }
  };
  await attempt('fetch', () => fetch(`${base}/fetch`));
  await attempt('fetch no-cors', () => fetch(`${base}/fetch-no-cors`, { mode: 'no-cors' }));
  await attempt('xhr', () => new Promise((resolve, reject) => {
    const x = new XMLHttpRequest();
    x.open('GET', `${base}/xhr`);
    x.onload = resolve;
    x.onerror = () => reject(new Error('xhr error'));
    x.send();
  }));
  await attempt('websocket', () => new Promise((resolve, reject) => {
    const ws = new WebSocket(`${base.replace('http', 'ws')}/ws`);
    ws.onopen = resolve;
    ws.onerror = () => reject(new Error('ws error'));
  }));
  await attempt('eventsource', () => new Promise((resolve, reject) => {
    const es = new EventSource(`${base}/sse`);
    es.onopen = () => { es.close(); resolve(); };
    es.onerror = () => { es.close(); reject(new Error('sse error')); };
  }));
  await attempt('import', () => import(`${base}/module.js`));
  if (typeof document !== 'undefined') {
    await attempt('img', () => new Promise((resolve, reject) => {
      const img = new Image();
      img.onload = resolve;
      img.onerror = () => reject(new Error('img error'));
      img.src = `${base}/img.png`;
    }));
    await attempt('beacon', () => navigator.sendBeacon(`${base}/beacon`, 'x'));
    await attempt('script', () => new Promise((resolve, reject) => {
      const s = document.createElement('script');
      s.src = `${base}/script.js`;
      s.onload = resolve;
      s.onerror = () => reject(new Error('script error'));
      document.head.append(s);
    }));
    await attempt('stylesheet', () => new Promise((resolve, reject) => {
      const l = document.createElement('link');
      l.rel = 'stylesheet';
      l.href = `${base}/style.css`;
      l.onload = resolve;
      l.onerror = () => reject(new Error('css error'));
      document.head.append(l);
    }));
    await attempt('iframe', () => new Promise((resolve) => {
      const f = document.createElement('iframe');
      f.src = `${base}/frame`;
      document.body.append(f);
      setTimeout(resolve, 300);
    }));
    await attempt('worker from url', () => new Promise((resolve, reject) => {
      const w = new Worker(`${base}/worker.js`);
      w.onerror = () => reject(new Error('worker error'));
      setTimeout(resolve, 300);
    }));
  } else {
    await attempt('importScripts', () => importScripts(`${base}/import-scripts.js`));
  }
  return tries;
};

test('no request leaves the page, from the page or from its worker', async () => {
  hits = [];
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  await act(page, () => page.setInputFiles('#events-file', join(FIXTURES, 'user-points.csv')));
  await act(page, () => page.click('#problems-button'));

  const fromPage = await page.evaluate(attempts, base);
  const workers = page.workers();
  assert.ok(workers.length >= 1, 'the engine worker is running');
  const fromWorker = await workers[0].evaluate(attempts, base);
  await page.waitForTimeout(1000);

  assert.deepEqual(hits, [], `canary was reached: ${hits.join(', ')}\npage: ${fromPage.join('; ')}\nworker: ${fromWorker.join('; ')}`);
  const outside = log.requests.filter((u) => !/^(file|data|blob):/.test(u) && !u.startsWith(base));
  assert.deepEqual(outside, [], 'only file:, data: and blob: requests (canary attempts are listed separately)');
  // Nothing was stored either.
  const stored = await page.evaluate(async () => ({
    local: localStorage.length,
    session: sessionStorage.length,
    cookie: document.cookie,
    databases: (await indexedDB.databases()).length,
    caches: typeof caches === 'undefined' ? 0 : (await caches.keys()).length,
  }));
  assert.deepEqual(stored, { local: 0, session: 0, cookie: '', databases: 0, caches: 0 });

  // Control: the same attempts from a page without the policy do reach the canary.
  const control = await browser.newPage();
  await control.goto(`${base}/control`);
  await control.evaluate(attempts, base);
  await control.close();
  assert.ok(hits.length >= 3, `the canary works (${hits.length} hits from the control page)`);
});

test('the page\'s own code has no storage or network calls, and the built page loads nothing from outside', () => {
  for (const f of ['main.js', 'map.js', 'worker.js']) {
    const code = readFileSync(join(ROOT, 'www', f), 'utf8');
    for (const api of ['localStorage', 'sessionStorage', 'indexedDB', 'document.cookie', 'fetch(', 'XMLHttpRequest', 'WebSocket', 'EventSource', 'sendBeacon', 'importScripts', 'import(']) {
      assert.ok(!code.includes(api), `${f} uses ${api}`);
    }
  }
  const html = readFileSync(PAGE, 'utf8');
  assert.doesNotMatch(html, /\b(src|href|action)\s*=\s*["']?\s*(https?:)?\/\//i, 'no external src/href');
  assert.doesNotMatch(html, /url\(\s*["']?(https?:)?\/\//i, 'no external CSS url()');
  assert.doesNotMatch(html, /@import/i, 'no CSS @import');
  const csp = /<meta http-equiv="Content-Security-Policy" content="([^"]+)">/.exec(html);
  assert.ok(csp, 'CSP meta tag present');
  assert.equal(csp[1], "default-src 'none'; script-src 'unsafe-inline' 'wasm-unsafe-eval' blob:; worker-src blob:; style-src 'unsafe-inline'; img-src data: blob:; connect-src 'none'");
  assert.ok(csp.index < html.search(/<script[\s>]/i), 'CSP before the first script');
});
