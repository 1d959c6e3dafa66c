// "Sharing safely" through the JS API (dist/node): masking, k-anonymity,
// suppression and exports, each checked against values recomputed here in
// plain JavaScript from the demo files, not against the engine's own figures.
// Run: node --test tests/node/
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { Session, version } = require('../../dist/node/cloister.js');
const root = new URL('../../', import.meta.url);
const file = (p) => new Uint8Array(readFileSync(new URL(p, root)));
const text = (p) => readFileSync(new URL(p, root), 'utf8');

function demo({ controls = true } = {}) {
  const s = new Session();
  s.loadEvents(file('demo-data/cases.csv'), {});
  s.loadArea(file('demo-data/town-boundary.geojson'), {});
  if (controls) s.loadControls(file('demo-data/population.csv'), {});
  return s;
}

function throws(fn) {
  try { fn(); } catch (e) { return e; }
  assert.fail('expected an error to be thrown');
}

/** Even-odd ray casting over every ring (outer rings and holes alike). */
function insideArea(area, x, y) {
  let inside = false;
  for (const poly of area) {
    for (const ring of poly) {
      for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) {
        const [xi, yi] = ring[i];
        const [xj, yj] = ring[j];
        if ((yi > y) !== (yj > y) && x < xi + ((y - yi) * (xj - xi)) / (yj - yi)) inside = !inside;
      }
    }
  }
  return inside;
}

/** The original longitude/latitude strings exactly as written in cases.csv (6 decimals). */
function originalLonLat() {
  const lines = text('demo-data/cases.csv').split(/\r?\n/).filter((l) => l.trim());
  const head = lines[0].split(',');
  const ix = head.indexOf('longitude');
  const iy = head.indexOf('latitude');
  return lines.slice(1).map((l) => { const c = l.split(','); return [c[ix], c[iy]]; });
}

/**
 * Coordinate pairs as they appear in a file: every two numbers in a row in
 * the text ("lon,lat" in CSV, [lon, lat] in GeoJSON). Single numbers are not
 * searched alone: with 1,500 masked values at 6 decimals in a town 0.1° wide,
 * some masked longitude equals some original longitude by chance.
 */
function pairsIn(s) {
  const nums = s.match(/-?\d+\.\d+/g) || [];
  const out = new Set();
  for (let i = 0; i + 1 < nums.length; i++) out.add(`${nums[i]},${nums[i + 1]}`);
  return out;
}

const SEED = 918273645546372;

test('ring mask: every shift within [r_min, r_max] from the originals, every point inside the study area', () => {
  const s = demo();
  const layers = s.mapLayers();
  const orig = layers.events;
  const n = orig.length / 2;
  const r = s.maskDonut({ r_min_m: 100, r_max_m: 400, law: 'distance_uniform', seed: SEED });
  assert.equal(r.n_input, n);
  assert.equal(r.masked.length, 2 * r.n_masked);
  const seen = new Set();
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < r.n_masked; i++) {
    const j = r.source[i];
    assert.ok(!seen.has(j), `input point ${j} masked twice`);
    seen.add(j);
    const mx = r.masked[2 * i];
    const my = r.masked[2 * i + 1];
    const d = Math.sqrt((mx - orig[2 * j]) ** 2 + (my - orig[2 * j + 1]) ** 2);
    assert.ok(d >= 100 - 1e-6 && d <= 400 + 1e-6, `point ${j} moved ${d} m`);
    assert.ok(Math.abs(d - r.displacement_m[i]) < 1e-6);
    assert.ok(insideArea(layers.area, mx, my), `masked point ${i} outside the study area`);
    lo = Math.min(lo, d);
    hi = Math.max(hi, d);
  }
  for (const u of r.unplaced) {
    assert.ok(!seen.has(u.index));
    seen.add(u.index);
  }
  assert.equal(seen.size, n, 'every input point is either masked or listed');
  assert.ok(Math.abs(r.displacement.min - lo) < 1e-6 && Math.abs(r.displacement.max - hi) < 1e-6);
  // Nothing in the answer names the seed.
  assert.ok(!JSON.stringify({ ...r, masked: null, source: null, displacement_m: null, k: null }).includes(String(SEED)));
});

test('mask once: a second mask needs replace:true, and without a seed two runs differ', () => {
  const s = demo();
  s.maskDonut({ r_min_m: 50, r_max_m: 200 });
  const e = throws(() => s.maskDonut({ r_min_m: 50, r_max_m: 200 }));
  assert.equal(e.code, 'already_masked');
  assert.match(e.message, /average/);
  const again = s.maskDonut({ r_min_m: 50, r_max_m: 200, replace: true });
  assert.equal(again.replaced, true);
  // No seed given: drawn from crypto.getRandomValues, so two sessions differ.
  const a = demo().maskDonut({ r_min_m: 50, r_max_m: 200 });
  const b = demo().maskDonut({ r_min_m: 50, r_max_m: 200 });
  let same = 0;
  for (let i = 0; i < a.masked.length; i++) if (a.masked[i] === b.masked[i]) same++;
  assert.ok(same < 10, `${same} identical coordinates between two unseeded runs`);
});

test('k-anonymity against the demo population: every shared point reaches k (recounted here), the rest are listed exactly', () => {
  const s = demo();
  const layers = s.mapLayers();
  const orig = layers.events;
  const pop = layers.controls;
  const n = orig.length / 2;
  const target = 10;
  const rMax = 250;
  const r = s.maskKAnonymity({ target_k: target, r_max_m: rMax, against: 'population', seed: SEED });
  assert.equal(r.basis, 'population_layer');
  assert.ok(r.n_masked > 0 && r.unplaced.length > 0, 'these settings must give both outcomes');
  // k = #{population points h : |h − x'| ≤ |x − x'|} + 1 (the true address
  // itself; the population layer does not hold the cases), docs/methods.md#privacy.
  const countWithin = (x, y, d) => {
    let c = 0;
    for (let h = 0; h < pop.length; h += 2) if (Math.sqrt((pop[h] - x) ** 2 + (pop[h + 1] - y) ** 2) <= d) c++;
    return c;
  };
  const seen = new Set();
  for (let i = 0; i < r.n_masked; i++) {
    const j = r.source[i];
    seen.add(j);
    const [mx, my] = [r.masked[2 * i], r.masked[2 * i + 1]];
    const d = Math.sqrt((mx - orig[2 * j]) ** 2 + (my - orig[2 * j + 1]) ** 2);
    assert.ok(d <= rMax + 1e-6);
    const kLo = 1 + countWithin(mx, my, d * (1 - 1e-9));
    const kHi = 1 + countWithin(mx, my, d * (1 + 1e-9));
    assert.ok(kHi >= target, `point ${j}: k = ${kHi} < ${target}`);
    assert.ok(kLo <= r.k[i] && r.k[i] <= kHi, `point ${j}: engine k ${r.k[i]} vs recount ${kLo}..${kHi}`);
    assert.ok(insideArea(layers.area, mx, my));
  }
  for (const u of r.unplaced) {
    assert.ok(!seen.has(u.index), `point ${u.index} both masked and listed`);
    seen.add(u.index);
    const [x, y] = [orig[2 * u.index], orig[2 * u.index + 1]];
    if (u.reason.code === 'too_few_population_nearby') {
      // No masked place within r_max can reach k when fewer than k − 1
      // population points lie within 2·r_max (triangle inequality).
      const found = 1 + countWithin(x, y, 2 * rMax);
      assert.equal(u.reason.found, found);
      assert.ok(found < target);
    } else {
      assert.equal(u.reason.code, 'target_not_reached');
      assert.ok(u.reason.best_k < target);
    }
    assert.ok(Number.isInteger(u.row) && u.row >= 2, 'listed with its row of the events file');
  }
  assert.equal(seen.size, n, 'every point is either masked or listed, exactly once');
  assert.equal(r.k_summary.share_below_target, 0);
  assert.ok(r.k_summary.min >= target);
});

test('k-anonymity with a typed density: smallest shift √(k/(πD)) = 126.16 m for D = 1000/km², k = 50 (docs/methods.md#privacy)', () => {
  const s = demo({ controls: false });
  const r = s.maskKAnonymity({ target_k: 50, r_max_m: 500, against: 'density', density_per_km2: 1000, seed: SEED });
  assert.equal(r.basis, 'uniform_density');
  assert.ok(Math.abs(r.settings.r_min_used_m - 126.16) < 0.005);
  for (let i = 0; i < r.n_masked; i++) assert.ok(r.displacement_m[i] >= 126.16 - 0.005);
  // Allshouse et al. (2010): triple the area → × √3 = 218.51 m.
  const t = demo({ controls: false }).maskKAnonymity({ target_k: 50, r_max_m: 500, against: 'density', density_per_km2: 1000, area_factor: 3, seed: SEED });
  assert.ok(Math.abs(t.settings.r_min_used_m - 218.51) < 0.005);
  const e = throws(() => demo({ controls: false }).maskKAnonymity({ target_k: 10, against: 'population' }));
  assert.equal(e.code, 'nothing_loaded');
});

test('suppression: no shown count is 1–4, shown counts are the true counts, hidden small counts are 1–4 (recounted here)', () => {
  const s = demo();
  const orig = s.mapLayers().events;
  const size = 500;
  const a = s.aggregate({ layout: 'square', cell_size_m: size });
  const cells = a.table.cells;
  let primary = 0;
  for (const c of cells) {
    const ring = c.geometry[0][0];
    const x0 = Math.min(...ring.map((v) => v[0]));
    const y0 = Math.min(...ring.map((v) => v[1]));
    // The grid is anchored on multiples of the cell size, not on the events' extent.
    assert.ok(Math.abs(x0 / size - Math.round(x0 / size)) < 1e-9 && Math.abs(y0 / size - Math.round(y0 / size)) < 1e-9);
    let truth = 0;
    for (let i = 0; i < orig.length; i += 2) {
      if (orig[i] >= x0 && orig[i] < x0 + size && orig[i + 1] >= y0 && orig[i + 1] < y0 + size) truth++;
    }
    if (c.suppressed) {
      assert.equal(c.count, null);
      if (c.hidden === 'primary') { primary++; assert.ok(truth >= 1 && truth <= 4, `primary hidden cell holds ${truth}`); }
      else assert.ok(truth >= 5, 'only counts of 5 or more are hidden as complements');
    } else {
      assert.ok(c.count === 0 || c.count >= 5, `shown count ${c.count}`);
      assert.equal(c.count, truth, `cell ${c.id}`);
    }
  }
  assert.ok(primary > 0, 'the demo at 500 m has small counts to hide');
  assert.ok(a.table.audit.safe);
  assert.equal(a.counts_hidden_to, 4);
  // The exported CSV: every cell row's count is empty, 0 or ≥ 5.
  for (const fmt of ['csv', 'geo_json']) {
    const f = s.exportFile('aggregates', { format: fmt, created: '2026-01-01' });
    if (fmt === 'csv') {
      const rows = f.text.split('\n').filter((l) => l.startsWith('cell,'));
      assert.equal(rows.length, f.preview.rows - a.table.lines.length - 1);
      for (const r of rows) {
        const v = r.split(',')[4];
        assert.ok(v === '' || Number(v) === 0 || Number(v) >= 5, `exported count ${v}`);
      }
    } else {
      const g = JSON.parse(f.text);
      for (const ft of g.features) {
        const v = ft.properties.count;
        assert.ok(v === null || v === 0 || v >= 5);
        assert.ok(!('hidden' in ft.properties), 'why a cell is hidden stays in the page');
      }
    }
  }
  // Hexagons, and a higher threshold.
  const h = s.aggregate({ layout: 'hexagon', cell_size_m: 300, min_count: 10 });
  for (const c of h.table.cells) assert.ok(c.count === null || c.count === 0 || c.count >= 10);
  assert.equal(h.counts_hidden_to, 9);
});

test('zones from a GeoJSON file: counts add up, rates use the zone population', () => {
  const s = demo();
  const ring = JSON.parse(text('demo-data/town-boundary.geojson'));
  const coords = JSON.stringify(ring).match(/-?\d+\.\d+/g).map(Number);
  const lons = coords.filter((_, i) => i % 2 === 0);
  const lats = coords.filter((_, i) => i % 2 === 1);
  const [x0, x1, y0, y1] = [Math.min(...lons), Math.max(...lons), Math.min(...lats), Math.max(...lats)];
  const features = [];
  for (let i = 0; i < 3; i++) {
    for (let j = 0; j < 3; j++) {
      const a = x0 + ((x1 - x0) * i) / 3 - 1e-3 * (i === 0);
      const b = x0 + ((x1 - x0) * (i + 1)) / 3 + 1e-3 * (i === 2);
      const c = y0 + ((y1 - y0) * j) / 3 - 1e-3 * (j === 0);
      const d = y0 + ((y1 - y0) * (j + 1)) / 3 + 1e-3 * (j === 2);
      features.push({ type: 'Feature', properties: { name: `Z${i}${j}`, population: 5000 },
        geometry: { type: 'Polygon', coordinates: [[[a, c], [b, c], [b, d], [a, d], [a, c]]] } });
    }
  }
  const bytes = new TextEncoder().encode(JSON.stringify({ type: 'FeatureCollection', features }));
  const r = s.aggregate({ layout: 'zones', zones: bytes });
  assert.equal(r.table.cells.length, 9);
  assert.deepEqual(r.table.cells.map((c) => c.id).sort(), features.map((f) => f.properties.name).sort());
  assert.equal(r.population_source, 'the zones file');
  const grand = r.table.lines.find((l) => l.kind === 'grand');
  assert.equal(grand.total + (r.table.outside ?? 0), 1500);
  for (const c of r.table.cells) {
    assert.ok(c.count === null || c.count === 0 || c.count >= 5);
    if (c.count >= 5) assert.ok(Math.abs(c.rate - (c.count / 5000) * 1000) < 1e-9);
  }
  const bad = throws(() => s.aggregate({ layout: 'zones' }));
  assert.equal(bad.code, 'bad_options');
});

test('exports: no original coordinate pair in any shared file; the unmasked export has them all and says so', () => {
  const s = demo();
  const originals = originalLonLat();
  assert.equal(originals.length, 1500);
  assert.ok(originals.every(([x, y]) => /^-?\d+\.\d{6}$/.test(x) && /^-?\d+\.\d{6}$/.test(y)), 'the demo writes 6 decimals');
  const origPairs = originals.map(([x, y]) => `${x},${y}`);
  const planar = s.mapLayers().events;
  const origMetres = [];
  for (let i = 0; i < planar.length; i += 2) origMetres.push(`${planar[i].toFixed(1)},${planar[i + 1].toFixed(1)}`);

  s.maskDonut({ r_min_m: 100, r_max_m: 400, seed: SEED });
  s.aggregate({ layout: 'square', cell_size_m: 500 });
  const outputs = [];
  for (const what of ['masked_points', 'aggregates']) {
    for (const format of ['csv', 'geo_json']) {
      for (const coordinates of ['lon_lat', 'metres']) {
        outputs.push([`${what} ${format} ${coordinates}`, s.exportFile(what, { format, coordinates, created: '2026-01-01' })]);
      }
    }
  }
  // Masked points and counts with hidden cells never share a report.
  assert.ok(s.exportFile('aggregates', { format: 'csv' }).text.includes('true'), 'some counts are hidden');
  assert.equal(throws(() => s.exportFile('report', { created: '2026-01-01' })).code, 'choose_report_contents');
  assert.equal(throws(() => s.exportPreview('report', { report_holds: 'both' })).code, 'choose_report_contents');
  outputs.push(['report (masked points)', s.exportFile('report', { created: '2026-01-01', report_holds: 'masked_points' })]);
  outputs.push(['report (counts)', s.exportFile('report', { created: '2026-01-01', report_holds: 'counts' })]);
  for (const [name, f] of outputs) {
    const pairs = pairsIn(f.text);
    const leaked = origPairs.filter((p) => pairs.has(p)).concat(origMetres.filter((p) => pairs.has(p)));
    assert.deepEqual(leaked, [], `${name} holds original coordinates`);
    assert.ok(!f.text.includes(String(SEED)), `${name} holds the seed`);
    assert.equal(f.preview.contains_original_coordinates, false);
    assert.ok(!/unmasked, internal use only/.test(f.text), `${name} must not carry the unmasked label`);
  }
  // The reports have no coordinates at all: not even single original values.
  for (const [, f] of outputs.slice(-2)) {
    for (const [x, y] of originals) assert.ok(!f.text.includes(x) && !f.text.includes(y));
  }
  // Masked points CSV: as many rows as the preview said, as many as were masked.
  const m = outputs[0][1];
  assert.equal(m.text.split('\n').filter((l) => /^-?\d/.test(l)).length, m.preview.rows);
  assert.equal(m.preview.rows, 1500);

  // Positive control: the same search finds every original in the unmasked export.
  const e = throws(() => s.exportFile('unmasked_points', { format: 'csv' }));
  assert.equal(e.code, 'confirm_needed');
  const u = s.exportFile('unmasked_points', { format: 'csv', confirm_unmasked: true });
  assert.equal(u.preview.contains_original_coordinates, true);
  assert.match(u.text, /unmasked, internal use only/i);
  const up = pairsIn(u.text);
  assert.equal(origPairs.filter((p) => up.has(p)).length, 1500);
  const ug = s.exportFile('unmasked_points', { format: 'geo_json', coordinates: 'metres', confirm_unmasked: true });
  const ugp = pairsIn(ug.text);
  assert.equal(origMetres.filter((p) => ugp.has(p)).length, 1500);
  assert.equal(JSON.parse(ug.text).label, 'unmasked, internal use only');
});

test('previews list what each file holds before it is written', () => {
  const s = demo();
  assert.equal(throws(() => s.exportPreview('masked_points', {})).code, 'nothing_masked');
  const r = s.maskDonut({ r_min_m: 100, r_max_m: 300, seed: SEED });
  const p = s.exportPreview('masked_points', { format: 'csv' });
  assert.equal(p.content, 'masked points');
  assert.deepEqual(p.fields, ['longitude', 'latitude', 'about_this_file']);
  assert.deepEqual(s.exportPreview('masked_points', { format: 'csv', csv_notes: 'top_lines' }).fields, ['longitude', 'latitude']);
  assert.equal(p.rows, r.n_masked);
  assert.equal(p.contains_original_coordinates, false);
  assert.ok(p.metadata_keys.includes('masking') && !p.metadata_keys.includes('seed'));
  const u = s.exportPreview('unmasked_points', { format: 'csv' });
  assert.equal(u.contains_original_coordinates, true);
  assert.equal(u.label, 'unmasked, internal use only');
  const rp = s.exportPreview('report', {});
  assert.equal(rp.contains_original_coordinates, false);
  assert.ok(rp.cautions.some((c) => /Brownstein/.test(c)));
});

test('report: one self-contained HTML file with the page\'s CSP, no scripts, no links out, no seed', () => {
  const s = demo();
  assert.equal(throws(() => s.exportFile('report', {})).code, 'nothing_to_report');
  s.maskKAnonymity({ target_k: 10, r_max_m: 250, seed: SEED });
  s.aggregate({ layout: 'square', cell_size_m: 500 });
  const png = 'data:image/png;base64,iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mNkYPhfDwAChwGA60e6kgAAAABJRU5ErkJggg==';
  const f = s.exportFile('report', { created: '2026-01-02T03:04:05Z', map_image: png, title: 'Harrowmere <test>', report_holds: 'masked_points' });
  const html = f.text;
  const counts = s.exportFile('report', { created: '2026-01-02T03:04:05Z', report_holds: 'counts' }).text;
  const csp = /export const CSP =\s*"([^"]*)" \+\s*"([^"]*)"/.exec(text('tools/build-page.mjs'));
  assert.ok(csp, 'CSP found in the page builder');
  const policy = csp[1] + csp[2];
  const meta = /<meta http-equiv="Content-Security-Policy" content="([^"]*)">/.exec(html);
  assert.ok(meta && meta[1] === policy, 'same policy as the page');
  assert.ok(html.indexOf('Content-Security-Policy') < html.indexOf('<style'), 'policy first');
  assert.ok(!/<script/i.test(html), 'no scripts');
  assert.ok(!/https?:\/\//i.test(html), 'no addresses to fetch');
  assert.ok(!/\b(href|src)="(?!data:image\/png;base64,)/.test(html), 'only the inline picture');
  assert.ok(html.includes(png));
  assert.ok(html.includes('Harrowmere &lt;test&gt;'), 'text is escaped');
  assert.ok(html.includes(`version ${version()}`) && html.includes('2026-01-02T03:04:05Z'));
  for (const w of ['Brownstein', 'Cassa', 'data-protection law', 'Target k', 'Clark–Evans R', 'not recorded', 'the hidden counts back']) {
    assert.ok(html.includes(w), `report mentions ${w}`);
  }
  // One or the other: the masked-points report has no counts, and the
  // counts report no masked points.
  for (const w of ['Counts hidden', 'Audit']) {
    assert.ok(counts.includes(w), `counts report mentions ${w}`);
    assert.ok(!html.includes(w), `masked-points report must not hold ${w}`);
  }
  assert.ok(!counts.includes('Target k'), 'counts report must not hold the masking');
  assert.ok(!html.includes(String(SEED)));
  assert.equal(f.mime, 'text/html');
  const bad = throws(() => s.exportFile('report', { map_image: 'data:text/html,<script>', report_holds: 'counts' }));
  assert.equal(bad.code, 'bad_options');
});

test('new data drops the masked copy and the counts', () => {
  const s = demo();
  s.maskDonut({ r_min_m: 100, r_max_m: 300, seed: 1 });
  assert.ok(s.maskResult());
  s.loadEvents(file('demo-data/cases.csv'), {});
  assert.equal(s.maskResult(), null);
  assert.equal(throws(() => s.exportFile('aggregates', {})).code, 'nothing_aggregated');
});

test('cost of masking includes L(r) − r of both patterns, and a wide shift weakens clustering', () => {
  // The demo has planted clusters of σ ≈ 200–250 m (demo-data/README.md).
  // Donut-shifting every point by 400–800 m spreads them, so the peak of
  // L(r) − r (Besag's L with Ripley's isotropic correction) must drop.
  const s = demo();
  s.maskDonut({ r_min_m: 400, r_max_m: 800, seed: 7 });
  const c = s.maskingCost({});
  const lc = c.l_curves;
  assert.ok(lc, 'l_curves present');
  assert.equal(lc.r_m.length, lc.original.length);
  assert.equal(lc.r_m.length, lc.masked.length);
  assert.ok(lc.r_m.length > 10);
  const finite = (a) => a.slice(1).every(Number.isFinite);
  assert.ok(finite(lc.original) && finite(lc.masked));
  const peak = (a) => Math.max(...a.slice(1));
  assert.ok(peak(lc.original) > 0, 'the demo is clustered');
  assert.ok(peak(lc.masked) < peak(lc.original), `masked peak ${peak(lc.masked)} vs original ${peak(lc.original)}`);
  const maxDiff = Math.max(...lc.original.map((v, i) => Math.abs(v - lc.masked[i])).slice(1));
  assert.ok(Math.abs(maxDiff - lc.max_abs_difference_m) < 1e-6 * Math.max(1, maxDiff));
});

test('cost of masking with dates: the near-repeat table and the Knox count before and after', () => {
  // demo-data/README.md (written by the demo generator, not by this code):
  // 323 pairs of events within 100 m and 7 days of each other.
  const s = demo();
  s.maskDonut({ r_min_m: 400, r_max_m: 800, seed: 7 });
  const c = s.maskingCost({ pair_band_m: 100, pair_max_distance_m: 300, pair_band_days: 7, pair_max_days: 21 });
  const pr = c.pairs;
  assert.ok(pr, 'events with dates get the pair comparison');
  assert.equal(pr.knox_distance_m, 100);
  assert.equal(pr.knox_days, 7);
  assert.equal(pr.knox_original.pairs, 323);
  // Shifting every point by 400–800 m breaks most pairs within 100 m.
  assert.ok(pr.knox_masked.pairs < pr.knox_original.pairs / 2, `${pr.knox_masked.pairs} vs ${pr.knox_original.pairs}`);
  // The original table is the near-repeat table of the same bands.
  s.nearRepeatStart({ band_m: 100, max_distance_m: 300, band_days: 7, max_days: 21, n_perm: 1, seed: 1 });
  s.nearRepeatStep(1);
  const nr = s.nearRepeatFinish();
  assert.deepEqual(pr.observed_original, nr.cells.map((x) => x.observed));
  assert.deepEqual(pr.space_labels, nr.space_bands.map((b) => b.label));
  // "Same location" (first row) is empty once every point has moved.
  const nt = pr.time_labels.length;
  assert.equal(pr.space_labels[0], 'same location');
  assert.deepEqual(pr.observed_masked.slice(0, nt), new Array(nt).fill(0));
  pr.ratio_original.forEach((v, i) => {
    if (v !== null) assert.ok(Math.abs(v - nr.cells[i].observed / nr.cells[i].expected) < 1e-9);
  });
  // The bands are checked options.
  assert.equal(throws(() => s.maskingCost({ pair_band_days: 0 })).code, 'bad_parameter');
  assert.equal(throws(() => s.maskingCost({ pair_band_m: 500, pair_max_distance_m: 100 })).code, 'bad_parameter');
});

test('a 1 cm donut is refused: the largest shift has a floor of 50 m', () => {
  const s = demo();
  const e = throws(() => s.maskDonut({ r_min_m: 0, r_max_m: 0.01, seed: SEED }));
  assert.equal(e.code, 'bad_parameter', e.message);
  assert.match(e.message, /r_max_m/);
  assert.match(e.message, /50 m/);
  assert.equal(throws(() => s.maskKAnonymity({ target_k: 5, r_max_m: 10, seed: SEED })).code, 'bad_parameter');
  assert.equal(s.maskResult(), null, 'nothing was masked');
  assert.equal(parameterSpecMin('maskDonut', 'r_max_m'), 50);
});

function parameterSpecMin(analysis, name) {
  const { parameterSpec } = require('../../dist/node/cloister.js');
  return parameterSpec(analysis).fields.find((f) => f.name === name).min;
}

test('masked points written at their original location: the preview says so, from the exported text, and the file needs confirming', () => {
  // A 100–300 m donut written with 2 decimals of a degree (about 1 km):
  // many masked points round to the same text as their original.
  const s = demo();
  s.maskDonut({ r_min_m: 100, r_max_m: 300, seed: SEED });
  const coarse = { format: 'csv', decimals: 2 };
  const p = s.exportPreview('masked_points', coarse);
  assert.equal(p.contains_original_coordinates, true);
  assert.equal(p.label, 'unmasked, internal use only');
  assert.ok(p.points_at_original_location > 0 && p.points_at_original_location <= p.rows);
  const e = throws(() => s.exportFile('masked_points', coarse));
  assert.equal(e.code, 'confirm_needed', e.message);
  assert.match(e.message, /ORIGINAL location/);
  const f = s.exportFile('masked_points', { ...coarse, confirm_unmasked: true });
  // The header first (spreadsheets), the label as the first note in the last column.
  const [head, first] = f.text.split('\n');
  assert.equal(head, 'longitude,latitude,about_this_file');
  assert.ok(first.endsWith(',"UNMASKED, INTERNAL USE ONLY"'), first);
  assert.match(f.file_name, /UNMASKED-internal-only/);
  // Check the text itself: the originals written the same way (the unmasked
  // export at 2 decimals) and the masked rows share at least that many pairs.
  // Coordinates only (the notes column differs between the two files).
  const rows = (t) => t.split('\n').filter((l) => l).slice(1).map((l) => l.split(',').slice(0, 2).join(','));
  const orig = new Set(rows(s.exportFile('unmasked_points', { ...coarse, confirm_unmasked: true }).text));
  const same = rows(f.text).filter((r) => orig.has(r)).length;
  assert.ok(same >= p.points_at_original_location, `${same} rows equal an original`);
  // At the default precision (6 decimals) the same mask holds no original:
  // the preview says so and the text agrees.
  const fine = s.exportFile('masked_points', { format: 'csv' });
  assert.equal(fine.preview.contains_original_coordinates, false);
  assert.equal(fine.preview.points_at_original_location, 0);
  const originals = new Set(originalLonLat().map(([a, b]) => `${a},${b}`));
  const found = [...pairsIn(fine.text)].filter((q) => originals.has(q));
  assert.deepEqual(found, []);
  assert.doesNotMatch(fine.text, /internal use only/);
  // Notes for scripts: "# " lines above the header, on request only.
  assert.doesNotMatch(fine.text, /^#/m);
  const top = s.exportFile('masked_points', { format: 'csv', csv_notes: 'top_lines' });
  assert.match(top.text, /^# tool: Cloister\n# version: /);
  assert.match(top.text, /\nlongitude,latitude\n/);
  assert.match(throws(() => s.exportFile('masked_points', { csv_notes: 'first_lines' })).message, /csv_notes/);
});

test('counts per area say what they show: 500 m squares with totals on hide most of the demo, and say so first', () => {
  const s = demo();
  const r = s.aggregate({ layout: 'square', cell_size_m: 500 });
  const t = r.table;
  const sh = t.shown;
  // Recount from the cells themselves.
  const withEvents = t.cells.filter((c) => c.suppressed || c.count > 0);
  const shownWithEvents = t.cells.filter((c) => !c.suppressed && c.count > 0);
  assert.equal(sh.cells_with_events_shown, shownWithEvents.length);
  assert.equal(sh.events_in_shown_cells, shownWithEvents.reduce((a, c) => a + c.count, 0));
  assert.ok(sh.cells_with_events <= withEvents.length);
  assert.equal(sh.cells_hidden_primary, t.n_primary);
  assert.equal(sh.cells_hidden_complementary, t.n_complementary);
  assert.ok(sh.share_of_cells_with_events_shown < 0.5, JSON.stringify(sh));
  assert.equal(sh.mostly_hidden, true);
  assert.match(t.warnings[0], /^(Most of the table is hidden|Nothing is shown)/);
  assert.match(t.warnings[0], /larger cells/);
  assert.match(t.warnings[0], /row and column totals/);
  // Large cells without totals show most events: no such warning.
  const big = s.aggregate({ layout: 'square', cell_size_m: 2000, publish_row_column_totals: false }).table;
  assert.equal(big.shown.mostly_hidden, false, JSON.stringify(big.shown));
  assert.ok(!big.warnings.some((w) => /^(Most of the table is hidden|Nothing is shown)/.test(w)));
});
