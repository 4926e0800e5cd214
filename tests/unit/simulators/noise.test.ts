import { describe, expect, it } from 'vitest';
import { createRng, kasdinWalterTaps, TruncatedPowerLaw } from '../../../simulators/noise';

describe('seeded noise', () => {
  it('repeats the same stream for the same seed and differs for another', () => {
    const a = createRng(123);
    const b = createRng(123);
    const c = createRng(124);
    const sa = Array.from({ length: 5 }, () => a.uint32());
    expect(Array.from({ length: 5 }, () => b.uint32())).toEqual(sa);
    expect(Array.from({ length: 5 }, () => c.uint32())).not.toEqual(sa);
  });

  it('draws standard normal deviates', () => {
    // 20000 draws: the mean's σ is 0.007, the variance's σ ≈ √(2/20000) = 0.01; allow 4σ.
    const r = createRng(5);
    const xs = Array.from({ length: 20000 }, () => r.gauss());
    const m = xs.reduce((s, v) => s + v, 0) / xs.length;
    const v = xs.reduce((s, x) => s + (x - m) ** 2, 0) / (xs.length - 1);
    expect(Math.abs(m)).toBeLessThan(0.03);
    expect(Math.abs(v - 1)).toBeLessThan(0.04);
  });

  it('uses the Kasdin–Walter recursion for the filter taps', () => {
    // h_k = h_{k−1}(α/2 + k − 1)/k (Kasdin & Walter 1992): α = 1 → 1, 1/2, 3/8, 5/16.
    expect(Array.from(kasdinWalterTaps(1, 4))).toEqual([1, 0.5, 0.375, 0.3125]);
    expect(Array.from(kasdinWalterTaps(2, 3))).toEqual([1, 1, 1]);
    expect(Array.from(kasdinWalterTaps(0, 3))).toEqual([1, 0, 0]);
  });

  it('streams flicker noise forever in constant memory', () => {
    const f = new TruncatedPowerLaw(1, createRng(9), 64);
    for (let i = 0; i < 10_000; i++) expect(Number.isFinite(f.next())).toBe(true);
    expect(f.taps.length).toBe(64);
  });
});
