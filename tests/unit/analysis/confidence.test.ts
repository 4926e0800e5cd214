import { describe, expect, it, test } from 'vitest';
import {
  chiSquareInterval,
  chiSquareInv,
  oadevEdf,
  ONE_SIGMA,
  stabilityEdf,
  totdevEdf,
} from '../../../shared/analysis';

describe('EDF formulas', () => {
  test.each([
    // noise, N phase points, m, expected — SP 1065 Table 5 formulas evaluated by hand
    // (computed, cross-checked in Python), N = 1025:
    ['wpm', 1025, 4, 510.990206], // (N+1)(N−2m)/[2(N−m)] = 1026·1017/(2·1021)
    ['fpm', 1025, 4, 459.041657], // exp{√[ln((N−1)/2m)·ln((2m+1)(N−1)/4)]} = exp√(ln 128·ln 2304)
    ['wfm', 1025, 4, 354.32246], // [3(N−1)/2m − 2(N−2)/N]·4m²/(4m²+5) = (384 − 1.99610)·64/69
    ['ffm', 1025, 1, 889.678653], // 2(N−2)²/(2.3N − 4.9) = 2·1023²/2352.6
    ['ffm', 1025, 4, 316.605894], // 5N²/[4m(N+3m)] = 5·1025²/(16·1037)
    ['rwfm', 1025, 4, 253.758817], // (N−2)/m·[(N−1)² − 3m(N−1) + 4m²]/(N−3)²
  ] as const)('gives %s OADEV EDF for N = %i, m = %i as %f', (noise, N, m, expected) => {
    expect(oadevEdf(N, m, noise)).toBeCloseTo(expected, 5);
  });

  test.each([
    // noise, expected b·(T/τ) − c with T/τ = 1024/8 = 128 (SP 1065 Table 7; computed)
    ['wfm', 192], // 1.50·128
    ['ffm', 149.54], // 1.17·128 − 0.22
    ['rwfm', 118.68], // 0.93·128 − 0.36
  ] as const)('gives %s TOTDEV EDF %f for T/τ = 128', (noise, expected) => {
    expect(totdevEdf(1025, 8, noise)).toBeCloseTo(expected, 9);
  });

  it('has no Table 7 entry for phase noise', () => {
    expect(totdevEdf(1025, 8, 'wpm')).toBeNaN();
  });

  it('clamps the EDF to at least 1 and at most the number of terms', () => {
    expect(stabilityEdf('oadev', 10, 4, 2, 'rwfm')).toBeGreaterThanOrEqual(1);
    expect(stabilityEdf('oadev', 10, 4, 2, 'wpm')).toBeLessThanOrEqual(2);
    expect(stabilityEdf('hdev', 4, 1, 1, 'rwfm')).toBe(1); // a single term has one degree of freedom
  });
});

describe('χ² confidence interval (SP 1065 eq 45)', () => {
  test.each([
    // edf, lo/σ, hi/σ at one sigma, p = 0.682689 — computed with scipy.stats.chi2.ppf
    [1, 0.7094167292, 4.9956616134],
    [10, 0.8354972203, 1.3267900875],
    [100, 0.9361947089, 1.0789217645],
    [5000, 0.9901481896, 1.0101518568], // Wilson–Hilferty branch above 1000 dof
  ])('at edf = %f spans %f … %f of σ', (edf, lo, hi) => {
    const r = chiSquareInterval(1, edf);
    expect(r.lo).toBeCloseTo(lo, 6);
    expect(r.hi).toBeCloseTo(hi, 6);
  });

  it('widens with the confidence level', () => {
    const narrow = chiSquareInterval(1, 10, ONE_SIGMA);
    const wide = chiSquareInterval(1, 10, 0.95);
    expect(wide.lo).toBeLessThan(narrow.lo);
    expect(wide.hi).toBeGreaterThan(narrow.hi);
  });

  it('joins jstat and Wilson–Hilferty smoothly at 1000 dof', () => {
    const a = chiSquareInv(0.84, 1000);
    const b = chiSquareInv(0.84, 1000.0001);
    expect(Math.abs(a - b) / a).toBeLessThan(3e-6);
  });

  it('refuses a confidence of 1 or more', () => {
    expect(() => chiSquareInterval(1, 10, 1)).toThrow(
      expect.objectContaining({ code: 'bad-argument' }),
    );
  });
});
