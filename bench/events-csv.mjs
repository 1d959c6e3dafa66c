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
