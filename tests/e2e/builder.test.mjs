// The page builder refuses text that would break out of its script block,
// and writes one file with the policy first and the wasm inlined.
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, copyFileSync, cpSync, writeFileSync, readFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { ROOT } from './helpers.mjs';

const PKG = join(ROOT, 'www', 'pkg');

function build(args) {
  return spawnSync(process.execPath, [join(ROOT, 'tools', 'build-page.mjs'), ...args], { encoding: 'utf8' });
}

function pkgCopy(glueExtra = '') {
  assert.ok(existsSync(join(PKG, 'cloister.js')), 'build first: www/pkg is missing');
  const dir = mkdtempSync(join(tmpdir(), 'cloister-pkg-'));
  copyFileSync(join(PKG, 'cloister_bg.wasm'), join(dir, 'cloister_bg.wasm'));
  writeFileSync(join(dir, 'cloister.js'), readFileSync(join(PKG, 'cloister.js'), 'utf8') + glueExtra);
  return dir;
}

test('the builder writes one page with the wasm inlined and the policy before any script', () => {
  const dir = pkgCopy();
  const out = join(dir, 'page.html');
  const r = build(['--pkg', dir, '--out', out]);
  assert.equal(r.status, 0, r.stderr);
  const html = readFileSync(out, 'utf8');
  const wasm = readFileSync(join(dir, 'cloister_bg.wasm'));
  assert.ok(html.includes(wasm.toString('base64')), 'wasm inlined as base64');
  assert.ok(html.indexOf('Content-Security-Policy') < html.search(/<script[\s>]/i));
  assert.equal((html.match(/Content-Security-Policy/g) || []).length, 1);
  assert.doesNotMatch(html, /<script[^>]*\bsrc=/i, 'no script loaded from elsewhere');
  assert.doesNotMatch(html, /<link[^>]*\bhref=/i, 'no linked resources');
});

test('the builder refuses inlined text containing </script or <!--', () => {
  for (const bad of ['\n// </script><script>alert(1)</script>\n', '\n// <!-- x\n']) {
    const dir = pkgCopy(bad);
    const r = build(['--pkg', dir, '--out', join(dir, 'page.html')]);
    assert.notEqual(r.status, 0, `accepted ${JSON.stringify(bad)}`);
    assert.match(r.stderr, /wasm-bindgen glue contains/);
    assert.equal(existsSync(join(dir, 'page.html')), false, 'no page written');
  }
});

test('the builder refuses a glue built for ES modules', () => {
  const dir = pkgCopy('\nexport default 1;\n');
  const r = build(['--pkg', dir, '--out', join(dir, 'page.html')]);
  assert.notEqual(r.status, 0);
  assert.match(r.stderr, /no-modules/);
});

test('the builder bundles only files under www/ and stops on a broken import', () => {
  const dir = pkgCopy();
  const www = join(dir, 'www');
  cpSync(join(ROOT, 'www'), www, { recursive: true, filter: (src) => !src.includes(join('www', 'pkg')) });
  const main = readFileSync(join(www, 'main.js'), 'utf8');

  writeFileSync(join(dir, 'outside.js'), 'export const x = 1;\n');
  writeFileSync(join(www, 'main.js'), `import { x } from '../outside.js';\nconsole.log(x);\n${main}`);
  let r = build(['--pkg', dir, '--www', www, '--out', join(dir, 'a.html')]);
  assert.notEqual(r.status, 0, 'accepted an import from outside www/');
  assert.match(r.stderr, /only use files under www\//);
  assert.equal(existsSync(join(dir, 'a.html')), false);

  writeFileSync(join(www, 'main.js'), `import { nothing } from './dom.js';\nconsole.log(nothing);\n${main}`);
  r = build(['--pkg', dir, '--www', www, '--out', join(dir, 'b.html')]);
  assert.notEqual(r.status, 0, 'accepted an import of a name that is not exported');
  assert.match(r.stderr, /bundling www\/main\.js failed/);
  assert.match(r.stderr, /nothing/);

  writeFileSync(join(www, 'main.js'), main);
  r = build(['--pkg', dir, '--www', www, '--out', join(dir, 'c.html')]);
  assert.equal(r.status, 0, r.stderr);
});
