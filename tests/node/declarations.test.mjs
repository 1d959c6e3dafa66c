// The typed declarations of dist/node (cloister.d.ts): every method that
// takes options names an options interface instead of `any`, and each
// interface holds exactly the options parameterSpec() lists, with the
// allowed values of choices as string literals. The whole file is valid
// TypeScript: the TypeScript compiler pinned in package-lock.json checks it.
// Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';

const require = createRequire(import.meta.url);
const { parameterSpec } = require('../../dist/node/cloister.js');
const dts = readFileSync(new URL('../../dist/node/cloister.d.ts', import.meta.url), 'utf8');

const METHODS = {
  loadEvents: 'LoadEventsOptions', loadControls: 'LoadEventsOptions', loadArea: 'LoadAreaOptions',
  quadratTest: 'QuadratTestOptions', clarkEvans: 'ClarkEvansOptions', envelopeStart: 'EnvelopeStartOptions',
  intensitySurface: 'IntensitySurfaceOptions', dbscan: 'DbscanOptions', scanStart: 'ScanStartOptions',
  maskDonut: 'MaskDonutOptions', maskKAnonymity: 'MaskKAnonymityOptions', maskingCost: 'MaskingCostOptions',
  aggregate: 'AggregateOptions', exportPreview: 'ExportFileOptions', exportFile: 'ExportFileOptions',
};

/** The body of `export interface name { … }`. */
function body(name) {
  const start = dts.indexOf(`export interface ${name} {`);
  assert.ok(start >= 0, `interface ${name} declared`);
  return dts.slice(start, dts.indexOf('\n}', start));
}

test('each method that takes options names its options interface, not any', () => {
  for (const [method, type] of Object.entries(METHODS)) {
    const line = dts.split('\n').find((l) => l.trim().startsWith(`${method}(`));
    assert.ok(line, `${method} declared`);
    assert.ok(line.includes(`: ${type})`), `${method}: ${line.trim()}`);
  }
  assert.match(dts, /kDistance\(min_samples: number\)/);
  assert.match(dts, /parameterSpec\(analysis\?: string \| null\): ParameterSpec \| ParameterSpec\[\]/);
});

test('each options interface lists exactly the options of parameterSpec, choices as literals', () => {
  for (const spec of parameterSpec()) {
    const name = `${spec.analysis[0].toUpperCase()}${spec.analysis.slice(1)}Options`;
    const b = body(name);
    const declared = [...b.matchAll(/^ {2}(\w+)\?:/gm)].map((m) => m[1]);
    assert.deepEqual(declared, spec.fields.map((f) => f.name), name);
    for (const f of spec.fields) {
      const line = b.split('\n').find((l) => l.trim().startsWith(`${f.name}?:`));
      if (f.kind === 'choice') for (const a of f.allowed) assert.ok(line.includes(`'${a}'`), `${name}.${f.name}: ${a}`);
      if (f.kind === 'number' || f.kind === 'integer') assert.match(line, /: number( \| null)?;$/, `${name}.${f.name}`);
      if (f.kind === 'boolean') assert.match(line, /: boolean;$/, `${name}.${f.name}`);
    }
  }
  // The unit and range are in the documentation of a length.
  // (r_max_m has a floor of 50 m, docs/methods.md#privacy, and every length a 20,000 km cap.)
  assert.match(body('MaskDonutOptions'), /largest displacement Unit: m\. Range: ≥ 50, ≤ 20000000, ≤ 10 × the study area's extent\. Default: 500\./);
});

/** The pinned compiler's entry point, or null when it is not installed. */
function tscPath() {
  try {
    return require.resolve('typescript/bin/tsc');
  } catch {
    return null;
  }
}

test('cloister.d.ts is valid TypeScript, and a script using it type-checks (tsc --noEmit --strict)', (t) => {
  const tsc = tscPath();
  if (!tsc) {
    t.skip('typescript is not installed; ./build.sh test installs it from package-lock.json');
    return;
  }
  const file = (p) => fileURLToPath(new URL(p, import.meta.url));
  // Declaration files are checked too (skipLibCheck off); the lib gives
  // Symbol.dispose, which wasm-bindgen declares on Session. types/usage.ts
  // calls the API as a script would, and its @ts-expect-error lines must be
  // errors (a misspelt layer, an unknown export, a result that may be null).
  const r = spawnSync(process.execPath, [tsc, '--noEmit', '--strict', '--skipLibCheck', 'false',
    '--target', 'es2022', '--lib', 'es2022,esnext.disposable', '--module', 'nodenext',
    '--moduleResolution', 'nodenext', file('../../dist/node/cloister.d.ts'), file('types/usage.ts')],
  { encoding: 'utf8' });
  assert.equal(r.status, 0, `tsc found problems:\n${r.stdout}${r.stderr}`);
});
