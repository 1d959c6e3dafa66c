// The result types of dist/node/cloister.d.ts hold what the engine really
// returns. Every method is called on the demo files (result-scenario.mjs)
// and each returned value is checked against the type its declaration
// names: an object has exactly the declared keys (none undeclared, none
// missing unless marked `?`), each value has the declared runtime type
// (number, string, boolean, a string literal, null only where declared,
// the declared typed-array class, arrays and tuples element by element,
// nested interfaces recursively, unions by trying each member).
// The declarations are read by the small parser below, which covers the
// subset of TypeScript the file uses (interfaces, type aliases, unions,
// arrays, tuples, string literals); anything else fails the parse.
// Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { runScenario } from './result-scenario.mjs';

const root = new URL('../../', import.meta.url);
const dts = readFileSync(new URL('dist/node/cloister.d.ts', root), 'utf8');
const resultSource = readFileSync(new URL('tools/result-types.d.ts', root), 'utf8');

// ---------- a parser for the declarations ----------

/** Comments out: block comments and line comments. */
const stripComments = (s) => s.replace(/\/\*[\s\S]*?\*\//g, '').replace(/\/\/[^\n]*/g, '');

/** `{ name: { kind: 'interface', members } | { kind: 'alias', type } }` of a declaration file. */
export function parseDeclarations(text) {
  const src = stripComments(text);
  const decls = {};
  const iface = /export interface (\w+) \{/g;
  let m;
  while ((m = iface.exec(src))) {
    let depth = 1;
    let i = iface.lastIndex;
    for (; depth > 0 && i < src.length; i++) {
      if (src[i] === '{') depth++;
      if (src[i] === '}') depth--;
    }
    // Parsed when first reached: the option interfaces use syntax (inline
    // object types) that no result needs.
    const [name, body] = [m[1], src.slice(iface.lastIndex, i - 1)];
    let members;
    decls[name] = { kind: 'interface', get members() { members ??= parseMembers(body, name); return members; } };
  }
  for (const a of src.matchAll(/export type (\w+) =([^;]+);/g)) {
    let type;
    decls[a[1]] = { kind: 'alias', get type() { type ??= parseType(a[2]); return type; } };
  }
  return decls;
}

function parseMembers(body, owner) {
  const members = [];
  for (const raw of splitTop(body, ';')) {
    const part = raw.trim();
    if (!part) continue;
    const m = /^(\w+)(\??):([\s\S]+)$/.exec(part);
    if (!m) throw new Error(`${owner}: cannot read member "${part}"`);
    members.push({ name: m[1], optional: m[2] === '?', type: parseType(m[3]) });
  }
  return members;
}

/** Splits at `sep` outside brackets. */
function splitTop(s, sep) {
  const out = [];
  let depth = 0;
  let start = 0;
  for (let i = 0; i < s.length; i++) {
    if ('{[('.includes(s[i])) depth++;
    else if ('}])'.includes(s[i])) depth--;
    else if (s[i] === sep && depth === 0) { out.push(s.slice(start, i)); start = i + 1; }
  }
  out.push(s.slice(start));
  return out;
}

/** A type expression as a tree: name, literal, array, tuple or union. */
export function parseType(text) {
  const tokens = text.match(/'[^']*'|\w+|[|[\](),]/g) || [];
  const rest = text.replace(/'[^']*'|\w+|[|[\](),]|\s+/g, '');
  if (rest) throw new Error(`type "${text.trim()}": unsupported syntax "${rest}"`);
  let i = 0;
  const peek = () => tokens[i];
  const take = (t) => {
    if (t !== undefined && tokens[i] !== t) throw new Error(`type "${text.trim()}": expected ${t} at ${tokens[i]}`);
    return tokens[i++];
  };
  function union() {
    if (peek() === '|') take('|');
    const of = [postfix()];
    while (peek() === '|') { take('|'); of.push(postfix()); }
    return of.length === 1 ? of[0] : { k: 'union', of };
  }
  function postfix() {
    let t = primary();
    while (peek() === '[' && tokens[i + 1] === ']') { take('['); take(']'); t = { k: 'array', of: t }; }
    return t;
  }
  function primary() {
    const t = take();
    if (t === '(') { const u = union(); take(')'); return u; }
    if (t === '[') {
      const of = [union()];
      while (peek() === ',') { take(','); of.push(union()); }
      take(']');
      return { k: 'tuple', of };
    }
    if (t && t.startsWith("'")) return { k: 'lit', v: t.slice(1, -1) };
    if (t && /^\w+$/.test(t)) return { k: 'name', n: t };
    throw new Error(`type "${text.trim()}": unexpected ${t}`);
  }
  const t = union();
  if (i !== tokens.length) throw new Error(`type "${text.trim()}": left over ${tokens.slice(i).join(' ')}`);
  return t;
}

/** Return types of `export class Session` methods and free functions. */
export function parseSignatures(text) {
  return Object.fromEntries(Object.entries(parseFullSignatures(text)).map(([n, s]) => [n, s.ret]));
}

/** `{ name: { params: [{ name, type }], ret } }` of the methods and free functions. */
export function parseFullSignatures(text) {
  const sigs = {};
  const read = (m) => {
    const params = m[2].trim() ? splitTop(m[2], ',').map((p) => {
      const q = /^\s*(\w+)\??:\s*([\s\S]+)$/.exec(p);
      if (!q) throw new Error(`${m[1]}: cannot read parameter "${p}"`);
      return { name: q[1], type: q[2].trim() };
    }) : [];
    sigs[m[1]] = { params, ret: m[3] };
  };
  const at = text.indexOf('export class Session {');
  const cls = text.slice(at, text.indexOf('\n}', at));
  for (const m of cls.matchAll(/^ {4}(\w+)\((.*)\): (.+);$/gm)) read(m);
  for (const m of text.matchAll(/^export function (\w+)\((.*)\): (.+);$/gm)) read(m);
  return sigs;
}

// ---------- checking a value against a type ----------

const TYPED = ['Float64Array', 'Float32Array', 'Int32Array', 'Uint32Array', 'Uint8Array', 'Int8Array', 'Uint16Array', 'Int16Array'];
const show = (v) => (ArrayBuffer.isView(v) ? v.constructor.name : Array.isArray(v) ? 'array' : v === null ? 'null' : typeof v === 'object' ? 'object' : `${typeof v} ${JSON.stringify(v)}`.slice(0, 60));

/** The problems of `value` against `type` (empty when it fits); `used` collects declarations reached. */
export function check(value, type, decls, path = 'result', used = new Set()) {
  switch (type.k) {
    case 'lit':
      return value === type.v ? [] : [`${path}: expected '${type.v}', got ${show(value)}`];
    case 'array':
      if (!Array.isArray(value)) return [`${path}: expected an array, got ${show(value)}`];
      return value.flatMap((v, i) => check(v, type.of, decls, `${path}[${i}]`, used));
    case 'tuple':
      if (!Array.isArray(value)) return [`${path}: expected a tuple, got ${show(value)}`];
      if (value.length !== type.of.length) return [`${path}: expected ${type.of.length} items, got ${value.length}`];
      return value.flatMap((v, i) => check(v, type.of[i], decls, `${path}[${i}]`, used));
    case 'union': {
      const tries = type.of.map((t) => { const u = new Set(); return { p: check(value, t, decls, path, u), u }; });
      const fit = tries.find((t) => t.p.length === 0);
      if (fit) { for (const n of fit.u) used.add(n); return []; }
      // Name the closest member's problems.
      const best = tries.reduce((a, b) => (b.p.length < a.p.length ? b : a));
      return [`${path}: fits none of ${type.of.length} alternatives; closest: ${best.p.slice(0, 3).join('; ')}`];
    }
    case 'name':
      break;
    default:
      throw new Error(`unknown type node ${type.k}`);
  }
  const n = type.n;
  switch (n) {
    case 'number': return typeof value === 'number' ? [] : [`${path}: expected number, got ${show(value)}`];
    case 'string': return typeof value === 'string' ? [] : [`${path}: expected string, got ${show(value)}`];
    case 'boolean': return typeof value === 'boolean' ? [] : [`${path}: expected boolean, got ${show(value)}`];
    case 'null': return value === null ? [] : [`${path}: expected null, got ${show(value)}`];
    case 'void':
    case 'undefined': return value === undefined ? [] : [`${path}: expected undefined, got ${show(value)}`];
    case 'unknown': return [];
    case 'any': return [`${path}: declared any`];
    default:
  }
  if (TYPED.includes(n)) {
    return ArrayBuffer.isView(value) && value.constructor.name === n ? [] : [`${path}: expected ${n}, got ${show(value)}`];
  }
  const d = decls[n];
  if (!d) return [`${path}: type ${n} is not declared`];
  used.add(n);
  if (d.kind === 'alias') return check(value, d.type, decls, path, used);
  if (value === null || typeof value !== 'object' || Array.isArray(value) || ArrayBuffer.isView(value)) {
    return [`${path}: expected ${n} (an object), got ${show(value)}`];
  }
  const problems = [];
  const declared = new Set(d.members.map((m) => m.name));
  for (const k of Object.keys(value)) if (!declared.has(k)) problems.push(`${path}.${k}: not declared in ${n}`);
  for (const m of d.members) {
    if (!(m.name in value)) {
      if (!m.optional) problems.push(`${path}.${m.name}: declared in ${n} but missing`);
      continue;
    }
    problems.push(...check(value[m.name], m.type, decls, `${path}.${m.name}`, used));
  }
  return problems;
}

// ---------- the tests ----------

const decls = parseDeclarations(dts);
const sigs = parseSignatures(dts);
const fullSigs = parseFullSignatures(dts);
// Need a canvas (the page's main thread): declared, not callable in Node.
const NOT_IN_NODE = new Set(['drawEnvelopeChart', 'drawKDistanceChart', 'drawSpaceTimeKGrid', 'drawTimelineChart']);
const LIFECYCLE = new Set(['free', 'constructor']);
let scenario;
/** The scenario's calls, run once for the tests below. */
const calls = () => (scenario ??= runScenario());

test('the checker itself: exact keys, nullability, typed-array classes, unions, literals', () => {
  const d = parseDeclarations(`
    export interface A { x: number; y?: string | null; t: [number, number]; f: Float64Array; k: 'a' | 'b'; n: B[] }
    export interface B { v: boolean }
    export type U = A | B;`);
  const ok = { x: 1, y: null, t: [1, 2], f: new Float64Array(2), k: 'a', n: [{ v: true }] };
  const A = { k: 'name', n: 'A' };
  assert.deepEqual(check(ok, A, d), []);
  assert.deepEqual(check({ ...ok, y: undefined }, A, d).length, 1, 'undefined is not string | null');
  const { y, ...noY } = ok;
  assert.deepEqual(check(noY, A, d), [], 'optional key may be absent');
  const { x, ...noX } = ok;
  assert.match(check(noX, A, d)[0], /x: declared in A but missing/);
  assert.match(check({ ...ok, extra: 1 }, A, d)[0], /extra: not declared/);
  assert.match(check({ ...ok, x: null }, A, d)[0], /expected number, got null/);
  assert.match(check({ ...ok, f: new Float32Array(2) }, A, d)[0], /expected Float64Array, got Float32Array/);
  assert.match(check({ ...ok, f: [1, 2] }, A, d)[0], /expected Float64Array, got array/);
  assert.match(check({ ...ok, t: [1, 2, 3] }, A, d)[0], /expected 2 items/);
  assert.match(check({ ...ok, k: 'c' }, A, d)[0], /fits none/);
  assert.match(check({ ...ok, n: [{ v: 1 }] }, A, d)[0], /n\[0\]\.v: expected boolean/);
  assert.deepEqual(check({ v: false }, { k: 'name', n: 'U' }, d), []);
  assert.equal(check({ w: false }, { k: 'name', n: 'U' }, d).length, 1);
  assert.throws(() => parseType('Record<string, number>'), /unsupported/);
});

test('dist/node/cloister.d.ts holds tools/result-types.d.ts unchanged, and nothing is any', () => {
  assert.ok(dts.includes(resultSource), 'gen-dts.mjs appends the result types');
  const untyped = Object.entries(sigs).filter(([, r]) => /\bany\b/.test(r)).map(([n]) => n);
  assert.deepEqual(untyped, [], 'methods still returning any');
  const anyParams = Object.entries(fullSigs).flatMap(([n, s]) => s.params.filter((p) => /\bany\b/.test(p.type)).map((p) => `${n}(${p.name})`));
  assert.deepEqual(anyParams, [], 'parameters still typed any');
  // Choices passed as text are literal unions.
  assert.equal(fullSigs.rejections.params[0].type, 'LayerName');
  assert.equal(fullSigs.setAreaFallback.params[0].type, 'AreaFallback');
  assert.equal(fullSigs.exportFile.params[0].type, 'ExportWhat');
  assert.equal(fullSigs.drawEnvelopeChart.params[1].type, 'EnvelopeResult');
  // Every return type parses and names only declared types.
  for (const [name, ret] of Object.entries(sigs)) {
    const walk = (t) => {
      if (t.k === 'name') {
        assert.ok(['number', 'string', 'boolean', 'null', 'void', 'unknown'].includes(t.n) || TYPED.includes(t.n) || decls[t.n], `${name}: ${t.n} declared`);
      } else if (t.of) [].concat(t.of).forEach(walk);
    };
    walk(parseType(ret));
  }
});

test('every declaration is reachable from a method, every method is called', () => {
  const called = new Set(calls().map((c) => c.method));
  const missing = Object.keys(sigs).filter((n) => !called.has(n) && !NOT_IN_NODE.has(n) && !LIFECYCLE.has(n));
  assert.deepEqual(missing, [], 'methods the scenario does not call');
  // Declarations of the results file are all reachable from some method's return type.
  const own = parseDeclarations(resultSource);
  const reach = new Set();
  // Descends into this file's declarations only (the option interfaces use wider syntax).
  const visit = (t) => {
    if (t.k === 'name' && own[t.n] && !reach.has(t.n)) {
      reach.add(t.n);
      const d = decls[t.n];
      if (d.kind === 'alias') visit(d.type);
      else d.members.forEach((m) => visit(m.type));
    } else if (t.of) [].concat(t.of).forEach(visit);
  };
  for (const s of Object.values(fullSigs)) {
    visit(parseType(s.ret));
    for (const p of s.params) visit(parseType(p.type));
  }
  const orphans = Object.keys(own).filter((n) => !reach.has(n));
  assert.deepEqual(orphans, [], 'types of tools/result-types.d.ts that no method takes or returns');
});

test('every result has exactly the declared keys and types (demo files, small settings)', (t) => {
  const used = new Set();
  const problems = [];
  for (const { method, label, value } of calls()) {
    assert.ok(sigs[method], `${method} is declared`);
    const p = check(value, parseType(sigs[method]), decls, `${method}(${label})`, used);
    problems.push(...p.slice(0, 5));
  }
  assert.deepEqual(problems, []);
  // The calls reach the nested declarations, not only the top ones.
  for (const n of ['Projection', 'ProjectionPlanar', 'ProjectionTransverseMercator', 'SourceFormatCsv', 'Ellipse',
    'Verdict', 'Isopleth', 'SurfaceDisclosure', 'DbscanCluster', 'ScanCluster', 'KAnonymitySettings', 'DonutSettings',
    'UnplacedTargetNotReached', 'UnplacedNoPlace', 'UnplacedTooFewPopulation', 'SourceFormatGeoJson',
    'TableLayoutGrid', 'TableLayoutZones', 'CurvePair', 'ReportPreview', 'ExportPreview']) {
    assert.ok(used.has(n), `a result was checked against ${n}`);
  }
  // Shapes the demo files do not produce (e.g. rare reasons an event is left
  // out of a masked copy), named so a reader knows what was not seen.
  const returned = new Set();
  const visit = (ty) => {
    const d = ty.k === 'name' ? parseDeclarations(resultSource)[ty.n] : null;
    if (d && !returned.has(ty.n)) {
      returned.add(ty.n);
      if (d.kind === 'alias') visit(d.type); else d.members.forEach((m) => visit(m.type));
    } else if (ty.of) [].concat(ty.of).forEach(visit);
  };
  Object.values(sigs).forEach((r) => visit(parseType(r)));
  const unseen = [...returned].filter((n) => !used.has(n));
  t.diagnostic(`declared result types no result met in this run: ${unseen.join(', ') || 'none'}`);
});
