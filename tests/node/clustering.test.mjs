// "Is it clustered?" through the JS API (dist/node): envelope runs in
// batches, quadrat test and Clark–Evans ratio on the demo, checked against
// figures recomputed here in plain JavaScript and against the committed
// scipy reference values (tests/reference/clustering_reference.json).
// Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session, drawEnvelopeChart } = require('../../dist/node/cloister.js');
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));
const reference = JSON.parse(readFileSync(new URL('tests/reference/clustering_reference.json', root), 'utf8'));

function demo() {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  return s;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

/** Runs a whole envelope job the way the worker does: start, steps, finish. */
function envelope(s, params, batch = 7) {
  const started = s.envelopeStart(params);
  assert.equal(started.total, params.n_sim);
  let done = 0;
  let steps = 0;
  while (done < started.total) {
    const next = s.envelopeStep(batch);
    assert.ok(next > done && next <= started.total, `step went from ${done} to ${next}`);
    done = next;
    steps++;
  }
  assert.equal(steps, Math.ceil(params.n_sim / batch));
  return s.envelopeFinish();
}

// ---- a chi-square upper tail written here, independently of the engine ----
// Regularised incomplete gamma by its series (x < a + 1) and continued
// fraction (Lentz) expansions, in logs so that tiny tails stay exact:
// Press, Teukolsky, Vetterling & Flannery, Numerical Recipes, 3rd ed. (2007),
// §6.2. ln Γ by the Lanczos approximation (g = 7, 9 terms; published
// coefficients, here from memory, checked below against scipy's values).
const LANCZOS = [0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313,
  -176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7];
function lnGamma(z) {
  if (z < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * z)) - lnGamma(1 - z);
  z -= 1;
  let x = LANCZOS[0];
  for (let i = 1; i < 9; i++) x += LANCZOS[i] / (z + i);
  const t = z + 7.5;
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(x);
}
/** ln Q(a, x) and ln P(a, x). */
function lnGammaTails(a, x) {
  const lead = -x + a * Math.log(x) - lnGamma(a);
  if (x < a + 1) {
    let ap = a;
    let sum = 1 / a;
    let del = sum;
    for (let n = 0; n < 10000; n++) {
      ap += 1;
      del *= x / ap;
      sum += del;
      if (Math.abs(del) < Math.abs(sum) * 1e-16) break;
    }
    const lnP = lead + Math.log(sum);
    return { lnQ: Math.log1p(-Math.exp(lnP)), lnP };
  }
  const tiny = 1e-300;
  let b = x + 1 - a;
  let c = 1 / tiny;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < 10000; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-16) break;
  }
  const lnQ = lead + Math.log(h);
  return { lnQ, lnP: Math.log1p(-Math.exp(lnQ)) };
}
const chi2Upper = (x, df) => Math.exp(lnGammaTails(df / 2, x / 2).lnQ);
const chi2Lower = (x, df) => Math.exp(lnGammaTails(df / 2, x / 2).lnP);

// Standard normal tail by erfc (Numerical Recipes 3rd ed. §6.2.2, Chebyshev
// fit with fractional error < 1.2e-7; coefficients as published there).
function erfc(x) {
  const z = Math.abs(x);
  const t = 1 / (1 + 0.5 * z);
  const r = t * Math.exp(-z * z - 1.26551223 + t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806 +
    t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))));
  return x >= 0 ? r : 2 - r;
}
const normalCdf = (z) => 0.5 * erfc(-z / Math.SQRT2);

test('the chi-square tail written here matches scipy (committed reference values)', () => {
  assert.ok(reference.chi2.length >= 5);
  for (const { x, df, sf, cdf } of reference.chi2) {
    assert.ok(Math.abs(chi2Upper(x, df) - sf) < 1e-10, `Q(${x}, ${df}) = ${chi2Upper(x, df)}, scipy ${sf}`);
    assert.ok(Math.abs(chi2Lower(x, df) - cdf) < 1e-10, `P(${x}, ${df})`);
  }
});

test('the demo\u2019s planted clusters are found: L with the global test says "clustered"', () => {
  const s = demo();
  const m = 39;
  const res = envelope(s, { function: 'l', n_sim: m, seed: 20261202 });
  assert.equal(res.function, 'l');
  assert.equal(res.n_sim, m);
  assert.equal(res.seed, 20261202);
  assert.equal(res.verdict.outcome, 'clustered', res.verdict.text);
  assert.match(res.verdict.text, /^Clustered/);
  assert.ok(res.verdict.ranges.length >= 1 && res.verdict.ranges.every((r) => r.departure === 'clustered'));
  // Monte Carlo p as Besag & Diggle (1977) define it: (1 + #{T_j ≥ T})/(m + 1),
  // so never below 1/(m + 1); recomputed from the count the engine reports.
  assert.ok(res.mad.p_value >= 1 / (m + 1) - 1e-15);
  assert.equal(res.mad.p_value, (1 + res.mad.at_least_as_extreme) / (m + 1));
  assert.ok(res.mad.p_value <= 0.05 && res.mad.rejects);
  // The global band is the reference curve ± the k-th largest simulated
  // maximum deviation (k = floor(alpha (m + 1)) = 2 here): the observed
  // curve leaves it where the verdict says.
  assert.equal(res.k_rank, 2);
  let outside = 0;
  for (let i = 0; i < res.r.length; i++) {
    assert.ok(Math.abs(res.global_hi[i] - res.global_lo[i] - 2 * res.mad.critical) < 1e-9 * Math.max(1, res.mad.critical));
    if (res.r[i] >= res.test_r_min && res.observed[i] > res.global_hi[i]) outside++;
  }
  assert.ok(outside > 0, 'the observed curve should leave the band above');
  // CSR curve for L is r itself.
  res.r.forEach((r, i) => assert.equal(res.theoretical[i], r));
  // The observed MAD statistic is the largest |L(r) − r| over the tested distances.
  let mad = 0;
  for (let i = 0; i < res.r.length; i++) if (res.r[i] >= res.test_r_min && res.r[i] <= res.test_r_max) mad = Math.max(mad, Math.abs(res.observed[i] - res.r[i]));
  assert.ok(Math.abs(mad - res.mad.statistic) < 1e-9 * mad);
});

test('same seed gives the same result whatever the batch size; another seed another band', () => {
  const s = demo();
  const p = { function: 'k', correction: 'translation', n_sim: 19, seed: 4242, n_steps: 20 };
  const a = envelope(s, p, 3);
  const b = envelope(s, p, 19);
  assert.deepEqual(a.pointwise_lo, b.pointwise_lo);
  assert.deepEqual(a.pointwise_hi, b.pointwise_hi);
  assert.deepEqual(a.global_hi, b.global_hi);
  assert.deepEqual(a.verdict, b.verdict);
  assert.equal(a.correction, 'translation');
  assert.equal(a.r.length, 21);
  const c = envelope(s, { ...p, seed: 4243 }, 5);
  assert.deepEqual(c.observed, a.observed, 'the observed curve does not depend on the seed');
  const differs = c.pointwise_hi.some((v, i) => v !== a.pointwise_hi[i]);
  assert.ok(differs, 'a different seed should give different simulated bands');
  assert.notEqual(c.mad.critical, a.mad.critical);
});

test('quadrat test on the demo: X² recomputed from the cells, p from a chi-square tail written here', () => {
  const s = demo();
  const q = s.quadratTest({ n_sim: 99, seed: 11 });
  const st = q.stats;
  assert.ok(q.cells.length >= 2);
  assert.equal(q.n, q.cells.reduce((a, c) => a + c.count, 0), 'every event is counted in exactly one cell');
  const totalArea = q.cells.reduce((a, c) => a + c.area_m2, 0);
  let x2 = 0;
  for (const c of q.cells) {
    const e = (q.n * c.area_m2) / totalArea;
    assert.ok(Math.abs(e - c.expected) < 1e-9 * e);
    x2 += ((c.count - e) ** 2) / e;
  }
  assert.ok(Math.abs(x2 - st.chi_square) < 1e-9 * x2, `X² ${st.chi_square} vs ${x2}`);
  assert.equal(st.df, q.cells.length - 1);
  // Upper tail: compare in logs (the demo's clusters make it tiny).
  const lnQ = lnGammaTails(st.df / 2, st.chi_square / 2).lnQ;
  assert.ok(Math.abs(Math.log(st.p_upper) - lnQ) < 1e-6 * Math.abs(lnQ), `ln p ${Math.log(st.p_upper)} vs ${lnQ}`);
  assert.ok(Math.abs(st.p_lower - chi2Lower(st.chi_square, st.df)) < 1e-9);
  // Two-sided p = min(1, 2·min(upper, lower)) (the module's stated definition).
  assert.equal(st.p_two_sided, Math.min(1, 2 * Math.min(st.p_upper, st.p_lower)));
  // Monte Carlo p: (1 + k)/(m + 1) for some whole k; clustered data → the smallest.
  assert.equal(q.p_mc_upper, 1 / 100);
  assert.ok(Number.isInteger(Math.round(q.p_mc_lower * 100)) && Math.abs(q.p_mc_lower * 100 - Math.round(q.p_mc_lower * 100)) < 1e-9);
  assert.equal(q.p_mc_two_sided, Math.min(1, 2 * Math.min(q.p_mc_upper, q.p_mc_lower)));
  assert.ok(Number.isFinite(st.dispersion_index) && st.dispersion_index > 1, 'clustered counts are over-dispersed');
  assert.equal(st.cells_below_5, st.expected.filter((e) => e < 5).length);
  // A chosen grid is used as given.
  const g = s.quadratTest({ nx: 4, ny: 3, n_sim: 0 });
  assert.equal(g.nx, 4);
  assert.equal(g.ny, 3);
  assert.equal(g.p_mc_two_sided, null);
});

test('Clark–Evans on the demo: R, z and p recomputed here from the points', () => {
  const s = demo();
  const res = s.clarkEvans({ n_sim: 99, seed: 5 });
  const pts = s.mapLayers().events;
  const n = pts.length / 2;
  assert.equal(res.n, n);
  let sum = 0;
  for (let i = 0; i < n; i++) {
    let best = Infinity;
    for (let j = 0; j < n; j++) {
      if (j === i) continue;
      const dx = pts[2 * i] - pts[2 * j];
      const dy = pts[2 * i + 1] - pts[2 * j + 1];
      const d = dx * dx + dy * dy;
      if (d < best) best = d;
    }
    sum += Math.sqrt(best);
  }
  const mean = sum / n;
  assert.ok(Math.abs(mean - res.mean_nn_m) < 1e-9 * mean);
  const area = s.study().area_km2 * 1e6;
  assert.ok(Math.abs(area - res.area_m2) < 1e-6 * area);
  // Clark & Evans (1954): r_E = 1/(2√λ), SE = 0.26136/√(nλ).
  const lambda = n / area;
  const rE = 0.5 / Math.sqrt(lambda);
  const se = 0.26136 / Math.sqrt(n * lambda);
  const z = (mean - rE) / se;
  assert.ok(Math.abs(res.naive.r - mean / rE) < 1e-12);
  assert.ok(Math.abs(res.naive.z - z) < 1e-9);
  assert.ok(Math.abs(res.naive.p_clustered - normalCdf(z)) < 1e-7 * Math.max(normalCdf(z), 1e-300) + 1e-12);
  assert.equal(res.naive.p_two_sided, Math.min(1, 2 * Math.min(res.naive.p_clustered, res.naive.p_regular)));
  // Donnelly (1978): E = 0.5√(A/n) + (0.0514 + 0.041/√n)·P/n.
  const eD = 0.5 * Math.sqrt(area / n) + (0.0514 + 0.041 / Math.sqrt(n)) * res.perimeter_m / n;
  assert.ok(Math.abs(res.donnelly.expected_m - eD) < 1e-9 * eD);
  assert.ok(res.naive.r < 1 && res.donnelly.r < 1, 'the demo is clustered');
  assert.equal(res.p_mc_clustered, 1 / 100);
  assert.ok([res.naive.r, res.naive.z, res.donnelly.r, res.donnelly.z, res.p_mc_two_sided].every(Number.isFinite));
});

test('bad parameters and out-of-order calls throw errors with a code', () => {
  const s = demo();
  assert.equal(throws(() => s.envelopeStart({ n_sim: 0 })).code, 'bad_parameter');
  assert.equal(throws(() => s.envelopeStart({ n_sim: 10000 })).code, 'bad_parameter');
  assert.equal(throws(() => s.envelopeStart({ function: 'ripley' })).code, 'bad_options');
  assert.equal(throws(() => s.envelopeStart({ n_sim: 9, colour: 'red' })).code, 'bad_options');
  assert.equal(throws(() => s.envelopeStart({ r_max_m: -5 })).code, 'bad_parameter');
  assert.equal(throws(() => s.envelopeStart({ alpha: 2 })).code, 'bad_parameter');
  assert.equal(throws(() => s.envelopeStep(5)).code, 'no_job');
  assert.equal(throws(() => s.envelopeFinish()).code, 'no_job');
  assert.equal(throws(() => s.quadratTest({ n_sim: 10000 })).code, 'bad_parameter');
  assert.equal(throws(() => s.clarkEvans({ n_sim: 10000 })).code, 'bad_parameter');
  // A job ends when the data change.
  s.envelopeStart({ n_sim: 5, seed: 1 });
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  assert.equal(throws(() => s.envelopeStep(1)).code, 'no_job');
  // Nothing loaded.
  const empty = new Session();
  assert.equal(throws(() => empty.envelopeStart({})).code, 'nothing_loaded');
  assert.equal(throws(() => empty.quadratTest({})).code, 'nothing_loaded');
  assert.equal(throws(() => empty.clarkEvans({})).code, 'nothing_loaded');
});

test('drawEnvelopeChart without a canvas (Node has no page) throws a "chart" error, never a panic', () => {
  const s = demo();
  const res = envelope(s, { function: 'pair_correlation', n_sim: 4, seed: 3, n_steps: 10 }, 4);
  const e = throws(() => drawEnvelopeChart('no-such-canvas', res, {}));
  assert.equal(e.code, 'chart');
  assert.match(e.message, /no canvas with id "no-such-canvas"/);
  assert.equal(throws(() => drawEnvelopeChart('no-such-canvas', res, { view: 'sideways' })).code, 'bad_options');
  assert.equal(throws(() => drawEnvelopeChart('no-such-canvas', res, { colour: 'red' })).code, 'bad_options');
  assert.equal(throws(() => drawEnvelopeChart('no-such-canvas', null, {})).code, 'chart');
  // The engine is still alive after these errors.
  assert.equal(s.quadratTest({ n_sim: 0 }).n, 1500);
});

/** n seeded uniform events in a 20 km × 10 km rectangle, as CSV (metres). */
function uniformCsv(n, seed) {
  let s = seed;
  const rnd = () => { s = (Math.imul(s, 1103515245) + 12345) >>> 0; return s / 2 ** 32; };
  const lines = ['x,y'];
  for (let i = 0; i < n; i++) lines.push(`${(rnd() * 20000).toFixed(1)},${(rnd() * 10000).toFixed(1)}`);
  return new TextEncoder().encode(lines.join('\n'));
}

test('envelopeEstimate: one curve plus the simulations shared by the workers, faster settings each faster; nothing is started', () => {
  const s = demo();
  const e = s.envelopeEstimate({ n_sim: 199, seed: 3 }, 2);
  assert.equal(e.events, 1500);
  assert.equal(e.probe_events, 1500, 'fewer than 3,000 events: timed whole');
  assert.equal(e.n_sim, 199);
  assert.equal(e.workers, 2);
  for (const k of ['pairs', 'simulated_pairs', 'curve_ms', 'simulation_ms', 'run_ms', 'probe_ms', 'r_max_m']) {
    assert.ok(Number.isFinite(e[k]) && e[k] > 0, `${k} = ${e[k]}`);
  }
  assert.ok(Math.abs(e.run_ms - (e.curve_ms + 199 * e.simulation_ms / 2)) <= 1e-9 * e.run_ms);
  assert.match(e.r_max_rule, /study area|rectangle/);
  const opts = e.faster.map((f) => `${f.option}=${f.number ?? f.choice}`);
  assert.ok(opts.includes('n_sim=99') && opts.includes('n_sim=39'), opts.join(', '));
  for (const f of e.faster) assert.ok(f.run_ms < e.run_ms && f.label.length > 0, JSON.stringify(f));
  // The estimate starts nothing.
  assert.equal(throws(() => s.envelopeStep(1)).code, 'no_job');
  // The same options as envelopeStart, checked the same way; workers from 1 to 64.
  assert.equal(throws(() => s.envelopeEstimate({ n_sim: 0 }, 1)).code, 'bad_parameter');
  assert.equal(throws(() => s.envelopeEstimate({ r_max_m: -5 }, 1)).code, 'bad_parameter');
  for (const w of [0, 65, 1.5, -1, NaN]) assert.equal(throws(() => s.envelopeEstimate({}, w)).code, 'bad_parameter', String(w));
  assert.equal(throws(() => new Session().envelopeEstimate({}, 1)).code, 'nothing_loaded');
});

test('envelopeEstimate at 30,000 events: quick, and the observed curve then takes about what it said', () => {
  const s = new Session();
  s.loadEvents(uniformCsv(30000, 4242), {});
  const t0 = performance.now();
  const e = s.envelopeEstimate({ n_sim: 199, seed: 1 }, 1);
  const estimateTook = performance.now() - t0;
  assert.equal(e.probe_events, 3000);
  // Uniform events: about n²·πr²/(2·area) pairs less the edge loss; r is a
  // quarter of the shorter side of the events' rectangle (about 2.5 km).
  const area = 20000 * 10000;
  const interior = (30000 * 29999 * Math.PI * e.r_max_m ** 2) / (2 * area);
  assert.ok(e.pairs > 0.7 * interior && e.pairs < 1.05 * interior, `${e.pairs} vs ${interior}`);
  const t1 = performance.now();
  s.envelopeStart({ n_sim: 199, seed: 1 });
  const curveTook = performance.now() - t1;
  // The measurement is a small part of the work, and the estimate is
  // within a factor of 3 of the time measured (a loose bound: the machine
  // may be shared; README gives measured figures).
  assert.ok(estimateTook < curveTook, `estimate ${estimateTook.toFixed(0)} ms, curve ${curveTook.toFixed(0)} ms`);
  const ratio = e.curve_ms / curveTook;
  assert.ok(ratio > 1 / 3 && ratio < 3, `estimated ${e.curve_ms.toFixed(0)} ms, took ${curveTook.toFixed(0)} ms`);
  console.log(`# 30,000 events: estimate took ${estimateTook.toFixed(0)} ms; curve estimated ${e.curve_ms.toFixed(0)} ms, took ${curveTook.toFixed(0)} ms`);
});
