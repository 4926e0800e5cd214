import { describe, expect, it } from 'vitest';
import { PLAUSIBILITY, PlausibilityWindow } from '../../shared/protocol/plausibility.js';
import { gaussian, mulberry32 } from '../helpers/random.js';

/**
 * The rule of shared/protocol/plausibility.ts written out plainly (an array window, sorted copies
 * at each refresh), as the oracle for the sorted-window judge the ingest runs. Common practice, no
 * source: the rule is our own, stated in that file's header. Copies are sorted as doubles
 * (`Float64Array.prototype.sort`: ascending, −0 before +0, NaN last), so m and s are comparable
 * bit for bit.
 */
function plainJudge(nominal: number | null, seed: ArrayLike<number>) {
  const win: number[] = [];
  let since = Infinity;
  let m = 0;
  let s = 0;
  const med = (xs: number[]) => {
    const a = Float64Array.from(xs).sort();
    const n = a.length;
    return n % 2 ? a[(n - 1) / 2] : (a[n / 2 - 1] + a[n / 2]) / 2;
  };
  const push = (v: number) => {
    win.push(v);
    if (win.length > 32) win.shift();
    since++;
  };
  Array.from(seed).forEach(push);
  const check = (v: number): boolean => {
    if (!Number.isFinite(v) || Math.abs(v) > 1e15) return false;
    if (nominal !== null && nominal > 0 && Math.abs(v - nominal) > nominal) return false;
    if (win.length >= 8) {
      if (since >= 8) {
        m = med(win);
        s = med(win.map((x) => Math.abs(x - m)));
        since = 0;
      }
      const d = Math.abs(v - m);
      if (d > 1e4 * s && d > 1e-3 * Math.abs(m)) return false;
    }
    push(v);
    return true;
  };
  return Object.assign(check, { state: () => ({ m, s }) });
}

describe('PlausibilityWindow', () => {
  it('keeps the constants the plain rule above is written with', () => {
    expect(PLAUSIBILITY).toMatchObject({
      maxMagnitude: 1e15,
      nominalFactor: 1,
      window: 32,
      minWindow: 8,
      madFactor: 1e4,
      relativeFloor: 1e-3,
      refreshEvery: 8,
    });
  });

  it('judges a long noisy series with jumps and absurd values exactly as the plain rule does', () => {
    const noise = gaussian(15);
    const u = mulberry32(16);
    for (const [nominal, seedLength] of [
      [10e6, 0],
      [null, 5],
      [10e6, 40],
    ] as const) {
      const values: number[] = [];
      let level = 10e6;
      for (let i = 0; i < 20_000; i++) {
        const r = u();
        if (r < 0.002) level += (u() - 0.5) * 1e5; // a step the rule must follow or flag
        let v = level + noise() * 1e-3;
        if (r > 0.997) v = [1e308, -5, level * 1.5, level + 1e3, NaN][Math.floor(u() * 5)];
        if (r > 0.9995) v = level; // an exact repeat: ties in the median
        values.push(v);
      }
      const seed = values.slice(0, seedLength);
      const judge = new PlausibilityWindow(nominal, seed);
      const plain = plainJudge(nominal, seed);
      const got = values.map((v) => judge.check(v));
      const want = values.map((v) => plain(v));
      expect(got).toEqual(want);
      expect(got.filter((x) => !x).length).toBeGreaterThan(20);
    }
  });

  /**
   * Series that reach every branch of the sorted window: Gaussian noise with steps, quantized
   * values full of exact ties (a MAD of 0 happens), a zero level mixing −0 and +0 (their order is
   * the sort's), values at the 1e15 bound, and absurd ones (1e308, NaN, ±∞) the rule refuses.
   */
  function series(kind: string, n: number, seed: number): number[] {
    const u = mulberry32(seed);
    const noise = gaussian(seed + 1);
    const out: number[] = [];
    let level = kind === 'zero' ? 0 : kind === 'bound' ? 9.99e14 : 100;
    for (let i = 0; i < n; i++) {
      const r = u();
      if (r < 0.003) level += (u() - 0.5) * (kind === 'bound' ? 1e13 : 50);
      let v: number;
      if (kind === 'noise') v = level + noise() * 1e-3;
      else if (kind === 'ties') v = level + Math.round(noise() * 2) * 0.25;
      else if (kind === 'zero')
        v = [0, -0, 0, -0, 1e-300, -1e-300, 5e-324, 2e-3][Math.floor(u() * 8)];
      else v = level + Math.round(noise() * 3) * 1e11;
      if (r > 0.99) {
        const absurd = [1e308, -1e308, NaN, Infinity, -Infinity, -5, level * 1.5, level + 1e3];
        v = absurd[Math.floor(u() * absurd.length)];
      }
      out.push(v);
    }
    return out;
  }

  it('gives the plain rule’s judgment, median and MAD bit for bit at every reading (randomized)', () => {
    // Seeds as the ingest builds them (the last accepted values of earlier batches), and seeds a
    // stored capture could bring that no check would accept (NaN, ±∞, doubles whose mean overflows).
    const exotic = [NaN, Infinity, -Infinity, 1.7e308, -1.7e308, -0, 0];
    let exotics = 0;
    // Three recipes in turn: NaN for a third of the window (a median among the finite values, NaN
    // deviations last), two middle values of 1.7e308 (a median that overflows to ∞), and a mix.
    const exoticSeed = (values: number[], k: number): number[] =>
      Array.from({ length: 8 + ((k * 7) % 40) }, (_, j) => {
        if (k % 3 === 0) return u() < 0.35 ? NaN : values[j];
        if (k % 3 === 1) return u() < 0.75 ? 1.7e308 : exotic[Math.floor(u() * exotic.length)];
        return u() < 0.4 ? exotic[Math.floor(u() * exotic.length)] : values[j];
      });
    const u = mulberry32(1515);
    let checks = 0;
    let refused = 0;
    let zeroMads = 0;
    let refreshes = 0;
    const mismatches: string[] = [];
    for (const kind of ['noise', 'ties', 'zero', 'bound']) {
      for (const nominal of [null, 0, kind === 'bound' ? 1e15 : kind === 'zero' ? 1 : 100]) {
        for (const seedKind of ['none', 'short', 'exotic', 'long'] as const) {
          const values = series(kind, 6_000, checks + 17);
          let seed: number[] =
            seedKind === 'none'
              ? []
              : seedKind === 'short'
                ? values.slice(0, 1 + Math.floor(u() * 9))
                : seedKind === 'long'
                  ? values.slice(0, 33 + Math.floor(u() * 20))
                  : exoticSeed(values, exotics++);
          const accepted: number[] = [];
          let i = 0;
          while (i < values.length) {
            // One batch: a fresh judge per batch now and then, seeded from the values accepted so
            // far, as after the server dropped the capture's window from its cache.
            const judge = new PlausibilityWindow(nominal, seed);
            const plain = plainJudge(nominal, seed);
            const end = Math.min(values.length, i + 1 + Math.floor(u() * 1_500));
            let lastM = NaN;
            for (; i < end; i++) {
              const got = judge.check(values[i]);
              const want = plain(values[i]);
              const { m, s } = plain.state();
              checks++;
              if (!want) refused++;
              if (!Object.is(m, lastM)) {
                refreshes++;
                if (s === 0) zeroMads++;
                lastM = m;
              }
              if (got !== want || !Object.is(judge.median, m) || !Object.is(judge.mad, s))
                mismatches.push(
                  `${kind}/${nominal}/${seedKind} reading ${i} (${values[i]}): judged ${got}, ` +
                    `plain ${want}; m ${judge.median} vs ${m}; s ${judge.mad} vs ${s}`,
                );
              if (want) accepted.push(values[i]);
            }
            seed = accepted.slice(-32);
          }
        }
      }
    }
    expect(mismatches.slice(0, 5)).toEqual([]);
    // The series reached what they were made for.
    expect(checks).toBe(4 * 3 * 4 * 6_000);
    expect(refused).toBeGreaterThan(checks / 200);
    expect(zeroMads).toBeGreaterThan(50);
    expect(refreshes).toBeGreaterThan(checks / 40);
  });

  it('flags a value far from a quiet window and takes an ordinary step', () => {
    // By hand: a window of 16 values 100.000…100.015 has median 100.0075 and MAD 0.004;
    // 200 is 99.99 away (> 10⁴·0.004 = 40 and > 0.1 % of 100), 100.05 only 0.0425 away.
    const w = new PlausibilityWindow(
      null,
      Array.from({ length: 16 }, (_, i) => 100 + i / 1000),
    );
    expect(w.check(200)).toBe(false);
    expect(w.check(100.05)).toBe(true);
  });
});
