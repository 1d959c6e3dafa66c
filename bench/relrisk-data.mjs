// Invented, seeded points for the relative-risk benchmarks (bench/relrisk.mjs,
// bench/relrisk-browser.mjs): planar metres in a 20 km square; controls
// spread with a denser band across the middle, cases following them plus
// 6 % in two small groups.
function rng(seed) {
  let s = seed >>> 0;
  return () => { s = (Math.imul(s, 1103515245) + 12345) >>> 0; return s / 2 ** 32; };
}

function pointsCsv(n, seed, groups) {
  const rnd = rng(seed);
  const lines = ['x,y'];
  while (lines.length <= n) {
    let x, y;
    const g = groups.length && rnd() < 0.06 ? groups[Math.floor(rnd() * groups.length)] : null;
    if (g) {
      x = g[0] + (rnd() - 0.5) * 800;
      y = g[1] + (rnd() - 0.5) * 800;
    } else {
      x = rnd() * 20000;
      y = rnd() * 20000;
      // A denser band across the middle: kept with probability 1 there, 0.4 elsewhere.
      if (Math.abs(y - 10000) > 3000 && rnd() > 0.4) continue;
    }
    if (x > 0 && x < 20000 && y > 0 && y < 20000) lines.push(`${x.toFixed(1)},${y.toFixed(1)}`);
  }
  return lines.join('\n');
}

/** Cases as CSV text (x,y). */
export function casesCsv(n) { return pointsCsv(n, 7, [[5000, 6000], [14000, 14000]]); }
/** Controls as CSV text (x,y). */
export function controlsCsv(n) { return pointsCsv(n, 11, []); }
