// The synthetic events CSV shared by the intake benchmarks (same shape as
// examples/bench_intake.rs): lon/lat in an open-ocean box, a date and a
// category per row, from a seeded 64-bit LCG (Knuth MMIX constants).
export function makeCsv(n, seed) {
  let s = BigInt(seed);
  const next = () => {
    s = (s * 6364136223846793005n + 1442695040888963407n) & 0xffffffffffffffffn;
    return Number(s >> 11n) / 2 ** 53;
  };
  const parts = ['id,longitude,latitude,onset_date,category\n'];
  for (let i = 0; i < n; i++) {
    const lon = (-32.06 + 0.12 * next()).toFixed(6);
    const lat = (-41.54 + 0.08 * next()).toFixed(6);
    const day = String(1 + Math.floor(next() * 28)).padStart(2, '0');
    const month = String(1 + Math.floor(next() * 12)).padStart(2, '0');
    const cat = next() < 0.3 ? 'enteric' : 'respiratory';
    parts.push(`${i},${lon},${lat},2025-${month}-${day},${cat}\n`);
  }
  return parts.join('');
}

// Planar metres in a 20 km square: 70 % spread at random, 30 % in five
// Gaussian clumps (seeded 64-bit LCG as above; Box–Muller normals).
export function makeClumpedCsv(n, seed) {
  let s = BigInt(seed);
  const next = () => {
    s = (s * 6364136223846793005n + 1442695040888963407n) & 0xffffffffffffffffn;
    return Number(s >> 11n) / 2 ** 53;
  };
  const gauss = () => Math.sqrt(-2 * Math.log(1 - next())) * Math.cos(2 * Math.PI * next());
  const clumps = [[4000, 5000, 300], [15000, 6000, 500], [9000, 14000, 250], [16000, 16000, 700], [5000, 17000, 400]];
  const parts = ['x,y\n'];
  for (let i = 0; i < n; i++) {
    let x, y;
    do {
      if (next() < 0.3) {
        const c = clumps[Math.floor(next() * clumps.length)];
        x = c[0] + c[2] * gauss();
        y = c[1] + c[2] * gauss();
      } else {
        x = 20000 * next();
        y = 20000 * next();
      }
    } while (!(x >= 0 && x <= 20000 && y >= 0 && y <= 20000));
    parts.push(`${x.toFixed(2)},${y.toFixed(2)}\n`);
  }
  return parts.join('');
}
