import { describe, expect, it, test } from 'vitest';
import {
  figureFromPoint,
  mForTau,
  stabilityAtTau,
  stabilityVerdict,
  tooShortFor,
  type StabilityFigure,
} from '../../../shared/analysis';

describe('the averaging factor for a limit τ', () => {
  test.each([
    // τ, τ0, m = round(τ/τ0), at least 1 (common practice, no source)
    [10, 1, 10],
    [10, 0.3, 33], // 33.3 → 33
    [1.4, 1, 1],
    [1.6, 1, 2],
    [0.1, 1, 1], // below τ0: the shortest τ the capture has
  ])('τ = %f s at τ0 = %f s gives m = %i', (tau, tau0, m) => {
    expect(mForTau(tau, tau0)).toBe(m);
  });
});

describe('σy at the limit τ', () => {
  // y alternating 0, 1: every first difference is ±1, so σ²y(τ0) = ½·mean(Δy²) = ½ (SP 1065 eq 11
  // at m = 1, by hand: common practice, no source).
  const y = [0, 1, 0, 1, 0, 1, 0, 1, 0];

  it('is the overlapping Allan deviation at m = round(τ/τ0)', () => {
    const r = stabilityAtTau(y, 1, 1.4);
    expect(r.reason).toBeNull();
    expect(r.figure!.m).toBe(1);
    expect(r.figure!.tau).toBe(1);
    expect(r.figure!.tauRequested).toBe(1.4);
    expect(r.figure!.dev).toBeCloseTo(Math.SQRT1_2, 12); // √½, by hand above
    expect(r.figure!.lo).toBeLessThan(r.figure!.dev);
    expect(r.figure!.hi).toBeGreaterThan(r.figure!.dev);
  });

  it('says the capture is too short when τ needs more readings than it has', () => {
    // OADEV needs N − 2m ≥ 1 phase points, N = n + 1 (SP 1065 eq 11): 9 readings reach m = 4.
    expect(tooShortFor(9, 1, 4)).toBeNull();
    const r = stabilityAtTau(y, 1, 5);
    expect(r.figure).toBeNull();
    expect(r.reason).toBe(
      'capture too short for τ = 5 s: σy at m = 5 (τ0 = 1 s) needs at least 10 readings, the capture has 9 (longest τ it supports: 4 s)',
    );
  });
});

describe('the 95 % interval of a figure', () => {
  it('is σ·√(edf/χ²) with the 0.975 and 0.025 points', () => {
    const f = figureFromPoint(
      { m: 8, tau: 8, dev: 1, edf: 10, noise: 'wfm', noiseSupported: true },
      8,
    );
    // χ²(0.975; 10) = 20.483, χ²(0.025; 10) = 3.247 (χ² table, from memory; SP 1065 eq 45):
    // √(10/20.483) = 0.69872, √(10/3.247) = 1.75493.
    expect(f.lo).toBeCloseTo(0.69872, 4);
    expect(f.hi).toBeCloseTo(1.75493, 3);
  });
});

describe('the stability verdict (conservative, on the interval)', () => {
  const fig: StabilityFigure = {
    tauRequested: 10,
    m: 10,
    tau: 10,
    dev: 1e-9,
    lo: 0.8e-9,
    hi: 1.2e-9,
    edf: 50,
    noise: 'wfm',
    noiseSupported: true,
  };
  test.each([
    // limit ppb → verdict: within when hi ≤ L, exceeds when lo > L (common practice, no source)
    [5, 'within'],
    [1.2, 'within'], // the upper bound on the limit still conforms
    [1.19, 'inconclusive'],
    [1, 'inconclusive'], // σy itself on the limit
    [0.8, 'inconclusive'], // the lower bound on the limit does not exceed it
    [0.79, 'exceeds'],
  ] as const)('limit %f ppb → %s', (limit, verdict) => {
    expect(stabilityVerdict(fig, limit)).toBe(verdict);
  });

  it('is inconclusive without a figure', () => {
    expect(stabilityVerdict(null, 100)).toBe('inconclusive');
  });
});
