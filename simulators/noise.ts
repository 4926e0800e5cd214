/**
 * Seeded random numbers and streaming power-law noise for Driftbench's simulators.
 *
 * PRNG: xoshiro128** (Blackman & Vigna), seeded through splitmix32 so any 32-bit seed gives a
 * well-mixed state; Gaussian deviates by Box–Muller. Same seed → same stream, on every platform.
 *
 * Power-law noise: N. J. Kasdin and T. Walter, "Discrete simulation of power law noise",
 * Proc. IEEE Frequency Control Symposium, 1992. Noise with spectrum ∝ 1/f^α is white noise
 * through the filter h_0 = 1, h_k = h_{k−1}·(α/2 + k − 1)/k. α = 0 is white (h = δ), α = 2 is a
 * random walk (h_k = 1, run here as an exact integrator). α = 1 (flicker) has an infinitely
 * long, slowly decaying filter (h_k ~ k^−1/2): here it is TRUNCATED to a fixed number of taps
 * (default 512) applied over a ring buffer of the last white samples, so the stream can run
 * forever in constant memory. Truncation consequence: the 1/f spectrum holds down to about
 * f ≈ 1/(taps·τ0); below that the spectrum flattens to white, so flicker behaviour (a flat
 * ADEV for flicker FM) is faithful for τ up to roughly taps/10 · τ0 and fades beyond.
 */

/** A seeded uniform and Gaussian source. */
export interface Rng {
  /** Uniform in [0, 1). */
  uniform(): number;
  /** Standard normal N(0, 1). */
  gauss(): number;
  /** Uniform 32-bit unsigned integer. */
  uint32(): number;
}

function splitmix32(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x9e3779b9) >>> 0;
    let z = s;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
    return (z ^ (z >>> 16)) >>> 0;
  };
}

/** xoshiro128** seeded by splitmix32(seed), with Box–Muller Gaussians. */
export function createRng(seed: number): Rng {
  const sm = splitmix32(seed);
  let a = sm();
  let b = sm();
  let c = sm();
  let d = sm();
  if ((a | b | c | d) === 0) a = 1;
  let spare: number | null = null;

  function uint32(): number {
    const result = Math.imul(rotl(Math.imul(b, 5), 7), 9) >>> 0;
    const t = b << 9;
    c ^= a;
    d ^= b;
    b ^= c;
    a ^= d;
    c ^= t;
    d = rotl(d, 11);
    return result;
  }
  function uniform(): number {
    return uint32() / 4294967296;
  }
  function gauss(): number {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    let u = 0;
    while (u === 0) u = uniform();
    const v = uniform();
    const r = Math.sqrt(-2 * Math.log(u));
    spare = r * Math.sin(2 * Math.PI * v);
    return r * Math.cos(2 * Math.PI * v);
  }
  return { uniform, gauss, uint32 };
}

function rotl(x: number, k: number): number {
  return ((x << k) | (x >>> (32 - k))) >>> 0;
}

/** Derives an independent seed for a sub-stream (noise, garble, temperature…). */
export function subSeed(seed: number, stream: number): number {
  return splitmix32((seed ^ Math.imul(stream + 1, 0x27d4eb2f)) >>> 0)();
}

/** Kasdin–Walter filter taps for 1/f^α noise: h_0 = 1, h_k = h_{k−1}(α/2 + k − 1)/k. */
export function kasdinWalterTaps(alpha: number, taps: number): Float64Array {
  const h = new Float64Array(taps);
  h[0] = 1;
  for (let k = 1; k < taps; k++) h[k] = (h[k - 1] * (alpha / 2 + k - 1)) / k;
  return h;
}

/** A FIR filter of white N(0,1) samples over a ring buffer: one output per call, forever. */
export class TruncatedPowerLaw {
  private readonly h: Float64Array;
  private readonly ring: Float64Array;
  private pos = 0;

  constructor(
    alpha: number,
    private readonly rng: Rng,
    taps = 512,
  ) {
    this.h = kasdinWalterTaps(alpha, taps);
    this.ring = new Float64Array(taps);
    // Warm up with a full buffer so the first outputs are already stationary.
    for (let i = 0; i < taps; i++) this.ring[i] = rng.gauss();
  }

  next(): number {
    const n = this.ring.length;
    this.pos = (this.pos + 1) % n;
    this.ring[this.pos] = this.rng.gauss();
    let sum = 0;
    for (let k = 0; k < n; k++) sum += this.h[k] * this.ring[(this.pos - k + n) % n];
    return sum;
  }

  /** The filter taps (for calibration). */
  get taps(): Float64Array {
    return this.h;
  }
}

/**
 * Noise levels, each the Allan deviation σ_y(τ0) that the component alone gives at τ0 = one
 * reading (the gate), as a fraction (1e-9 = 1 ppb). Zero or absent turns a component off.
 */
export interface NoiseLevels {
  wpm?: number;
  fpm?: number;
  wfm?: number;
  ffm?: number;
  rwfm?: number;
}

/** Sum of squared coefficients of the d-th difference of taps h (h beyond its end taken as 0). */
function diffPower(h: Float64Array, d: number): number {
  let g = Array.from(h);
  for (let i = 0; i < d; i++) {
    const next = new Array<number>(g.length + 1).fill(0);
    for (let k = 0; k < g.length; k++) {
      next[k] += g[k];
      next[k + 1] -= g[k];
    }
    g = next;
  }
  return g.reduce((s, v) => s + v * v, 0);
}

/**
 * A stream of fractional-frequency noise y_k (one value per gate) summing the five power-law
 * components. Each component is scaled so that its Allan variance at m = 1,
 * AVAR(τ0) = ½·E[(y_{k+1} − y_k)²], equals its level squared:
 * - white FM: y white, σ = level (AVAR = var y).
 * - random-walk FM: y_k = y_{k−1} + s·w_k, AVAR = s²/2 → s = level·√2.
 * - flicker FM: y = c·(KW α=1), AVAR = c²·Σ(Δh)²/2.
 * - white PM / flicker PM: phase x white / KW α=1, y_k = x_{k+1} − x_k (in units of τ0), so
 *   AVAR = c²·Σ(Δ²h)²/2 (white PM: Σ = 6 → c = level/√3).
 * Formulas: the AVAR definition, NIST SP 1065 eq. 6 with m = 1, applied to the filters.
 */
export class FrequencyNoise {
  private readonly parts: (() => number)[] = [];

  constructor(levels: NoiseLevels, rng: Rng, taps = 512) {
    const { wpm = 0, fpm = 0, wfm = 0, ffm = 0, rwfm = 0 } = levels;
    if (wfm > 0) this.parts.push(() => wfm * rng.gauss());
    if (rwfm > 0) {
      let y = 0;
      const s = rwfm * Math.SQRT2;
      this.parts.push(() => (y += s * rng.gauss()));
    }
    if (ffm > 0) {
      const f = new TruncatedPowerLaw(1, rng, taps);
      const c = ffm * Math.sqrt(2 / diffPower(f.taps, 1));
      this.parts.push(() => c * f.next());
    }
    if (wpm > 0) {
      const c = wpm / Math.sqrt(3);
      let prev = rng.gauss();
      this.parts.push(() => {
        const x = rng.gauss();
        const y = c * (x - prev);
        prev = x;
        return y;
      });
    }
    if (fpm > 0) {
      const f = new TruncatedPowerLaw(1, rng, taps);
      const c = fpm * Math.sqrt(2 / diffPower(f.taps, 2));
      let prev = f.next();
      this.parts.push(() => {
        const x = f.next();
        const y = c * (x - prev);
        prev = x;
        return y;
      });
    }
  }

  /** The next gate's fractional-frequency noise. */
  next(): number {
    let y = 0;
    for (const p of this.parts) y += p();
    return y;
  }
}
