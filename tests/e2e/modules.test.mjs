// The page's scripts are ES modules bundled from www/main.js: every module is
// reached from it, the imports form no cycle, and no module hands state to
// another through window. (No browser needed; esbuild reads the graph.)
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { build } from 'esbuild';
import { ROOT } from './helpers.mjs';

const WWW = join(ROOT, 'www');

async function graph() {
  const r = await build({
    absWorkingDir: ROOT,
    entryPoints: [join(WWW, 'main.js')],
    bundle: true,
    format: 'iife',
    write: false,
    metafile: true,
    logLevel: 'silent',
  });
  const g = new Map();
  for (const [file, info] of Object.entries(r.metafile.inputs)) g.set(file, info.imports.map((i) => i.path));
  return g;
}

const pageModules = () => [
  ...readdirSync(WWW).filter((f) => f.endsWith('.js') && f !== 'worker.js').map((f) => `www/${f}`),
  ...readdirSync(join(WWW, 'analyses')).filter((f) => f.endsWith('.js')).map((f) => `www/analyses/${f}`),
].sort();

test('main.js reaches every page module, and only files under www/', async () => {
  const g = await graph();
  assert.deepEqual([...g.keys()].sort(), pageModules());
});

test('the page modules import each other without a cycle', async () => {
  const g = await graph();
  const done = new Set();
  const path = [];
  const visit = (m) => {
    if (done.has(m)) return;
    const at = path.indexOf(m);
    assert.equal(at, -1, `import cycle: ${[...path.slice(at), m].join(' → ')}`);
    path.push(m);
    for (const n of g.get(m) || []) visit(n);
    path.pop();
    done.add(m);
  };
  for (const m of g.keys()) visit(m);
  assert.equal(done.size, g.size);
});

test('no page module writes to window, globalThis or self, except main.js exposing window.Cloister', () => {
  const writes = [];
  for (const rel of pageModules()) {
    const text = readFileSync(join(ROOT, rel), 'utf8');
    for (const m of text.matchAll(/\b(window|globalThis|self)\s*\.\s*([A-Za-z_$][\w$]*)\s*=(?!=)|\b(window|globalThis|self)\s*\[[^\]]*\]\s*=(?!=)/g)) {
      writes.push(`${rel}: ${m[0]}`);
    }
  }
  assert.deepEqual(writes, ['www/main.js: window.Cloister =']);
});

test('each analysis module exports one mount function, and main.js (or the panel it extends) mounts it', () => {
  const main = readFileSync(join(WWW, 'main.js'), 'utf8');
  const files = readdirSync(join(WWW, 'analyses')).filter((f) => f.endsWith('.js'));
  const texts = new Map(files.map((f) => [f, readFileSync(join(WWW, 'analyses', f), 'utf8')]));
  for (const f of files) {
    const text = texts.get(f);
    const exported = [...text.matchAll(/^export\s+(?:async\s+)?(?:function|const|let|class)\s+([\w$]+)/gm)].map((m) => m[1]);
    assert.equal(exported.length, 1, `${f} exports ${exported.join(', ') || 'nothing'}`);
    assert.match(exported[0], /^mount[A-Z]/, f);
    // A method added to an existing panel (e.g. risk-surface.js in the
    // population section) is mounted by that panel's module instead.
    const byMain = new RegExp(`\\[\\s*'[\\w-]+'\\s*,\\s*${exported[0]}\\s*\\]`).test(main);
    const byPanel = [...texts].some(([g, t]) => g !== f && new RegExp(`^\\s*${exported[0]}\\(C\\b`, 'm').test(t));
    assert.ok(byMain || byPanel, `neither main.js nor another panel mounts ${exported[0]}`);
  }
});
