// Compiled (never run) by declarations.test.mjs with tsc --noEmit --strict:
// scripts written against dist/node/cloister.d.ts type-check, and the
// declarations refuse what the engine refuses. Each `@ts-expect-error`
// line must be an error, or the compile fails.
import { Session, drawEnvelopeChart, drawKDistanceChart, parameterSpec } from '../../../dist/node/cloister';

declare const bytes: Uint8Array;
const s = new Session();
const report = s.loadEvents(bytes, {});
const accepted: number = report.accepted;
if (report.format && report.format.format === 'csv') {
  const sep: string = report.format.delimiter; // narrowed by the tag
  void sep;
}
const study = s.loadArea(bytes, { coords: { kind: 'lon_lat' } });
const area: number | undefined = study?.area_km2;
const sm = s.summary();
const semiMajor: number | undefined = sm.ellipse?.semi_major_m;
const layers = s.mapLayers();
const xy: Float64Array = layers.events;

const started = s.envelopeStart({ n_sim: 19, seed: 1 });
s.envelopeStep(started.total);
const env = s.envelopeFinish();
const outcome: 'clustered' | 'regular' | 'mixed' | 'consistent_with_csr' = env.verdict.outcome;
const drawn = drawEnvelopeChart('chart', env, { view: 'centred', band: 'global', scale: 2 });
const xLabel: string = drawn.x_label;

const surface = s.intensitySurface({ cells: 64 });
const grid: Float64Array = surface.values;
const inside: Uint8Array = surface.mask;
const db = s.dbscan({ eps_m: 150, min_samples: 8 });
const labelsOf: Int32Array = db.labels;
const kd = s.kDistance(5);
const knee: number | null = kd.knee_eps_m;
drawKDistanceChart('k-chart', { ...kd, eps_m: 150 });
const scan = s.scanFinish();
const lon: number | null | undefined = scan.clusters[0]?.centre_lon;

const masked = s.maskDonut({ r_min_m: 100, r_max_m: 400 });
const source: Uint32Array = masked.source;
if (masked.settings.method === 'donut') {
  const mean: number = masked.settings.design_mean_m;
  void mean;
}
const table = s.aggregate({ layout: 'square', cell_size_m: 500 }).table;
if (table.layout.layout === 'grid') {
  const rows: number = table.layout.rows;
  void rows;
}
const file = s.exportFile('masked_points', { format: 'csv' });
const text: string = file.text;
const spec = parameterSpec('maskDonut');

// @ts-expect-error: not a layer
s.rejections('evnets', 0, 10);
// @ts-expect-error: not a fallback
s.setAreaFallback('hull');
// @ts-expect-error: not an export
s.exportPreview('everything', {});
// @ts-expect-error: the mask may be absent
const n: number = s.maskResult().n_masked;
// @ts-expect-error: the typed array is not a plain array
const plain: number[] = grid;
// @ts-expect-error: not a chart view
drawEnvelopeChart('chart', env, { view: 'sideways' });
// @ts-expect-error: an undeclared key of a result
void sm.n_evnets;

void [xLabel, accepted, area, semiMajor, xy, outcome, inside, labelsOf, knee, lon, source, text, spec, n, plain];
