import { describe, expect, it } from 'vitest';
import { PLAUSIBILITY, PlausibilityWindow } from '../../shared/protocol/plausibility.js';
import { gaussian, mulberry32 } from '../helpers/random.js';

/**
 * The rule of shared/protocol/plausibility.ts written out plainly (an array window, sorted copies
 * at each refresh), as the oracle for the ring-buffer judge the ingest runs. Common practice, no
 * source: the rule is our own, stated in that file's header.
 */
function plainJudge(nominal: number | null, seed: number[]) {
  const win: number[] = [];
  let since = Infinity;
  let m = 0;
  let s = 0;
  const med = (xs: number[]) => {
    const a = [...xs].sort((x, y) => x - y);
    const n = a.length;
    return n % 2 ? a[(n - 1) / 2] : (a[n / 2 - 1] + a[n / 2]) / 2;
  };
  const push = (v: number) => {
    win.push(v);
    if (win.length > 32) win.shift();
    since++;
  };
  seed.forEach(push);
  return (v: number): boolean => {
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
