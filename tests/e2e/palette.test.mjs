// The map's category colours stay distinguishable for the three kinds of
// dichromacy, simulated with the matrices of Machado, Oliveira & Fernandes
// (2009), doi:10.1109/TVCG.2009.113 (tests/e2e/fixtures/cvd-matrices.json,
// written by tools/cvd_matrices.py from colorspacious). Distances are CIE 1976
// ΔE*ab in CIELAB (D65). The thresholds are common practice, not from a
// source: about 2 is "just noticeable"; we ask for 15 between categories and
// 25 against the backdrop colours so small squares stay apart.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { launch, openPage, palette, FIXTURES } from './helpers.mjs';

const CVD = JSON.parse(readFileSync(join(FIXTURES, 'cvd-matrices.json'), 'utf8')).matrices;
const VISION = { normal: [[1, 0, 0], [0, 1, 0], [0, 0, 1]], ...CVD };

// sRGB (IEC 61966-2-1) ↔ linear light, linear sRGB → XYZ (D65), XYZ → CIELAB.
const toLinear = (c) => (c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4);
const hex = (h) => [1, 3, 5].map((i) => parseInt(h.slice(i, i + 2), 16) / 255);
const mul = (m, v) => m.map((row) => row[0] * v[0] + row[1] * v[1] + row[2] * v[2]);
const XYZ = [[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]];
const WHITE = XYZ.map((row) => row[0] + row[1] + row[2]); // D65 white of this matrix
function lab(h, vision) {
  const lin = mul(VISION[vision], hex(h).map(toLinear)).map((v) => Math.min(1, Math.max(0, v)));
  const f = mul(XYZ, lin).map((v, i) => v / WHITE[i]).map((t) => (t > 216 / 24389 ? Math.cbrt(t) : (24389 / 27 * t + 16) / 116));
  return [116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])];
}
const deltaE = (a, b, vision) => Math.hypot(...lab(a, vision).map((v, i) => v - lab(b, vision)[i]));

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('the conversion reproduces known CIELAB values', () => {
  // sRGB white is L* = 100, a* = b* = 0; mid grey #777777 is L* ≈ 50.0 (common practice, from memory).
  const w = lab('#ffffff', 'normal');
  assert.ok(Math.abs(w[0] - 100) < 0.01 && Math.abs(w[1]) < 0.01 && Math.abs(w[2]) < 0.01, `white ${w}`);
  assert.ok(Math.abs(lab('#777777', 'normal')[0] - 50.0) < 0.5);
  // Every simulation keeps white white (rows of each matrix sum to 1).
  for (const v of Object.keys(CVD)) assert.ok(deltaE('#ffffff', '#ffffff', v) < 1e-9);
});

test('category colours stay apart for normal vision and the three dichromacies', async () => {
  const { page } = await openPage(browser);
  const pal = await palette(page);
  const cats = [...pal.categories, pal.other];
  assert.ok(pal.categories.includes(pal.single), 'the single-category colour is one of the palette');
  const backdrop = [pal.areaFill, pal.background, pal.control, '#ffffff'];
  for (const vision of Object.keys(VISION)) {
    for (let i = 0; i < cats.length; i++) {
      for (let j = i + 1; j < cats.length; j++) {
        const d = deltaE(cats[i], cats[j], vision);
        assert.ok(d >= 15, `${vision}: ${cats[i]} vs ${cats[j]} ΔE ${d.toFixed(1)}`);
      }
      for (const b of backdrop) {
        const d = deltaE(cats[i], b, vision);
        assert.ok(d >= 25, `${vision}: ${cats[i]} vs backdrop ${b} ΔE ${d.toFixed(1)}`);
      }
    }
  }
});
