#!/usr/bin/env node
// Assembles the single offline page dist/cloister.html from www/ and the
// wasm-bindgen output (built with `--target no-modules`).
//
// Usage: node tools/build-page.mjs [--pkg www/pkg] [--demo demo-data] [--out dist/cloister.html]
//
// What goes into the one file, in order:
//   <style> from www/style.css (replacing <!-- INLINE:style -->)
//   inert <script type="application/octet-stream"> blocks: the wasm and the demo files, base64
//   <script id="cloister-glue">: the wasm-bindgen glue (defines the global `wasm_bindgen`);
//     the page also reads its text to build the worker
//   inert <script type="text/plain" id="cloister-worker-src">: www/worker.js (a classic
//     worker script; the page starts it from a Blob URL after the glue's text)
//   <script id="cloister-page">: www/main.js and every ES module it imports (www/*.js,
//     www/analyses/*.js), bundled by esbuild into one classic script (an IIFE)
// The build fails if any inlined text contains `</script` or `<!--` (either would end or
// confuse the script block), if the glue does not define wasm_bindgen, or if the
// Content-Security-Policy meta tag is missing or comes after a script. The bundle may
// import only files under www/ (nothing from node_modules or elsewhere).

import { readFileSync, writeFileSync, mkdirSync, existsSync, readdirSync } from 'node:fs';
import { dirname, join, relative, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');

function parseArgs(argv) {
  const opts = { pkg: 'www/pkg', demo: 'demo-data', out: 'dist/cloister.html', www: 'www' };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    const m = /^--(pkg|demo|out|www)$/.exec(a);
    if (!m || i + 1 >= argv.length) fail(`unknown or incomplete argument: ${a}`);
    opts[m[1]] = argv[++i];
  }
  for (const k of Object.keys(opts)) opts[k] = resolve(root, opts[k]);
  return opts;
}

function fail(msg) {
  console.error(`build-page: ${msg}`);
  process.exit(1);
}

function read(path, what) {
  if (!existsSync(path)) fail(`missing ${what}: ${path}`);
  return readFileSync(path);
}

function checkInline(text, what) {
  const lower = text.toLowerCase();
  if (lower.includes('</script')) fail(`${what} contains "</script", which would end its script block`);
  if (lower.includes('<!--')) fail(`${what} contains "<!--", which confuses script parsing`);
  return text;
}

export const CSP =
  "default-src 'none'; script-src 'unsafe-inline' 'wasm-unsafe-eval' blob:; worker-src blob:; " +
  "style-src 'unsafe-inline'; img-src data: blob:; connect-src 'none'";

export const DEMO_FILES = [
  { id: 'demo-cases', file: 'cases.csv' },
  { id: 'demo-area', file: 'town-boundary.geojson' },
  { id: 'demo-population', file: 'population.csv' },
  { id: 'demo-population-blocks', file: 'population-blocks.csv' },
  { id: 'demo-problems', file: 'cases-with-problems.csv' },
];

/** Bundles www/main.js and the ES modules it imports into one classic script
 * (an IIFE: no module loading at run time, which a page opened from disk could
 * not do under its policy). Returns the script's text. */
async function bundlePage(www) {
  let esbuild;
  try {
    esbuild = await import('esbuild');
  } catch (_) {
    fail('esbuild is missing: run `npm ci` (it is pinned in package-lock.json)');
  }
  const entry = join(www, 'main.js');
  read(entry, 'page script');
  let result;
  try {
    result = await esbuild.build({
      absWorkingDir: root,
      entryPoints: [entry],
      bundle: true,
      format: 'iife',
      platform: 'browser',
      target: 'es2022',
      write: false,
      metafile: true,
      logLevel: 'silent',
      legalComments: 'none',
    });
  } catch (err) {
    const errors = (err && err.errors) || [];
    const text = errors.map((e) => `${e.location ? `${e.location.file}:${e.location.line}: ` : ''}${e.text}`).join('\n  ');
    fail(`bundling www/main.js failed:\n  ${text || String(err)}`);
  }
  for (const input of Object.keys(result.metafile.inputs)) {
    const rel = relative(www, resolve(root, input));
    if (rel.startsWith('..') || rel.split(sep).includes('node_modules')) fail(`the page bundle may only use files under www/, not ${input}`);
  }
  return result.outputFiles[0].text;
}

async function build(opts) {
  const html = read(join(opts.www, 'index.html'), 'page template').toString('utf8');
  const css = read(join(opts.www, 'style.css'), 'style sheet').toString('utf8');
  const workerJs = read(join(opts.www, 'worker.js'), 'worker script').toString('utf8');
  const glue = read(join(opts.pkg, 'cloister.js'), 'wasm-bindgen glue (run wasm-bindgen --target no-modules)').toString('utf8');
  const wasm = read(join(opts.pkg, 'cloister_bg.wasm'), 'wasm module');

  if (!/\bwasm_bindgen\b/.test(glue) || /^\s*export\s/m.test(glue)) {
    fail('the glue does not define a global wasm_bindgen; build it with wasm-bindgen --target no-modules');
  }
  if (wasm.subarray(0, 4).toString('binary') !== '\0asm') fail('cloister_bg.wasm is not a wasm module');
  if (css.toLowerCase().includes('</style')) fail('style.css contains "</style"');

  const pageJs = await bundlePage(opts.www);

  // Analysis panels' styles: www/analyses/*.css after style.css, in name order
  // (their scripts are imported by main.js and so are in the bundle).
  const analysesDir = join(opts.www, 'analyses');
  const analysisFiles = existsSync(analysesDir) ? readdirSync(analysesDir).sort() : [];
  let allCss = css;
  for (const f of analysisFiles.filter((f) => f.endsWith('.css'))) {
    const text = read(join(analysesDir, f), `analysis style ${f}`).toString('utf8');
    if (text.toLowerCase().includes('</style')) fail(`${f} contains "</style"`);
    allCss += `\n/* ${f} */\n${text}`;
  }

  const blocks = [];
  blocks.push(`<script type="application/octet-stream" id="cloister-wasm">${wasm.toString('base64')}</script>`);
  for (const d of DEMO_FILES) {
    const path = join(opts.demo, d.file);
    const bytes = read(path, `demo file ${d.file}`);
    blocks.push(`<script type="application/octet-stream" id="${d.id}" data-name="${d.file}">${bytes.toString('base64')}</script>`);
  }
  blocks.push(`<script id="cloister-glue">${checkInline(glue, 'the wasm-bindgen glue')}</script>`);
  blocks.push(`<script type="text/plain" id="cloister-worker-src">${checkInline(workerJs, 'worker.js')}</script>`);
  blocks.push(`<script id="cloister-page">${checkInline(pageJs, 'the page bundle (www/main.js and its imports)')}</script>`);

  const styleMarker = '<!-- INLINE:style -->';
  const scriptMarker = '<!-- INLINE:scripts -->';
  if (!html.includes(styleMarker) || !html.includes(scriptMarker)) fail('index.html lacks the INLINE markers');
  if (/<script[\s>]/i.test(html)) fail('index.html must not contain scripts of its own');
  let out = html.replace(styleMarker, () => `<style>\n${allCss}</style>`);
  out = out.replace(scriptMarker, () => blocks.join('\n'));

  const cspAt = out.indexOf(`content="${CSP}"`);
  const firstScript = out.search(/<script[\s>]/i);
  if (cspAt < 0) fail('the Content-Security-Policy meta tag is missing or differs from the agreed policy');
  if (firstScript >= 0 && firstScript < cspAt) fail('a script comes before the Content-Security-Policy meta tag');

  mkdirSync(dirname(opts.out), { recursive: true });
  writeFileSync(opts.out, out);
  console.log(`build-page: wrote ${opts.out} (${(out.length / 1024).toFixed(0)} KiB; wasm ${(wasm.length / 1024).toFixed(0)} KiB)`);
}

await build(parseArgs(process.argv.slice(2)));
