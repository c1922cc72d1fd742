/** Seeded pseudo-random numbers for reproducible test data (mulberry32; Box–Muller normals). */
export function uniformSource(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export function normalSource(seed: number): () => number {
  const u = uniformSource(seed);
  let spare: number | undefined;
  return () => {
    if (spare !== undefined) {
      const s = spare;
      spare = undefined;
      return s;
    }
    let u1 = u();
    while (u1 === 0) u1 = u();
    const r = Math.sqrt(-2 * Math.log(u1));
    const th = 2 * Math.PI * u();
    spare = r * Math.sin(th);
    return r * Math.cos(th);
  };
}

export function gaussian(n: number, seed: number, sigma = 1): Float64Array {
  const g = normalSource(seed);
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = sigma * g();
  return x;
}
