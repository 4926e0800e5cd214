// Seeded randomness for statistical tests: reproducible, so a tolerance chosen once stays valid.

/** mulberry32 (T. Ettinger, public domain; from memory): uniform [0, 1) from a 32-bit seed. */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal deviates by the Box–Muller transform (Box & Muller, Ann. Math. Stat. 1958). */
export function gaussian(seed: number): () => number {
  const uniform = mulberry32(seed);
  let spare: number | null = null;
  return () => {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    let u1 = uniform();
    while (u1 === 0) u1 = uniform();
    const u2 = uniform();
    const r = Math.sqrt(-2 * Math.log(u1));
    spare = r * Math.sin(2 * Math.PI * u2);
    return r * Math.cos(2 * Math.PI * u2);
  };
}

/** n white-FM fractional-frequency values of standard deviation sigma. */
export function whiteFm(n: number, sigma: number, seed: number): Float64Array {
  const g = gaussian(seed);
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) y[i] = sigma * g();
  return y;
}

/** n random-walk-FM values: the running sum of white steps of standard deviation sigma. */
export function randomWalkFm(n: number, sigma: number, seed: number): Float64Array {
  const g = gaussian(seed);
  const y = new Float64Array(n);
  let acc = 0;
  for (let i = 0; i < n; i++) {
    acc += sigma * g();
    y[i] = acc;
  }
  return y;
}

/** n white-PM frequency values: first differences of white phase of standard deviation sigma (τ0 = 1). */
export function whitePm(n: number, sigma: number, seed: number): Float64Array {
  const g = gaussian(seed);
  const y = new Float64Array(n);
  let prev = sigma * g();
  for (let i = 0; i < n; i++) {
    const next = sigma * g();
    y[i] = next - prev;
    prev = next;
  }
  return y;
}
