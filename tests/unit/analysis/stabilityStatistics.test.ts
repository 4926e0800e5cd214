import { describe, expect, it } from 'vitest';
import { adev, estimateNoise, oadev, ohdev, totdev, AnalysisError } from '../../../shared/analysis';
import { randomWalkFm, whiteFm, whitePm } from '../../helpers/random';

const SIGMA = 1e-11;
const MS = [1, 2, 4, 8, 16, 32, 64, 128, 256, 512, 1024, 2048];

describe('white FM of known σ (seeded)', () => {
  const y = whiteFm(65536, SIGMA, 20240601);

  // White FM: σ_y(τ) = σ·(τ/τ0)^−1/2 for ADEV, OADEV and HDEV alike (SP 1065 Table 3: h0/(2τ)),
  // and TOTDEV is unbiased for white FM. Each estimate is σ·√(χ²_edf/edf), whose relative spread
  // is ≈ 1/√(2·edf): we accept 4 such spreads. Over 20 seeds × 4 estimators × 12 τ the largest
  // deviation seen was 3.5 spreads (exploratory run while writing this test).
  it.each([
    ['oadev', oadev],
    ['adev', adev],
    ['ohdev', ohdev],
    ['totdev', totdev],
  ] as const)('%s follows σ·m^−1/2 within 4/√(2·edf)', (_, estimator) => {
    const points = estimator(y, 1, MS, { noise: 'wfm' });
    expect(points).toHaveLength(MS.length);
    for (const p of points) {
      const expected = SIGMA / Math.sqrt(p.m);
      const tolerance = 4 / Math.sqrt(2 * p.edf);
      expect(Math.abs(p.dev / expected - 1)).toBeLessThan(tolerance);
    }
  });

  it('puts the true value inside most one-sigma χ² intervals', () => {
    const points = oadev(y, 1, MS, { noise: 'wfm' });
    const inside = points.filter(
      (p) => p.lo <= SIGMA / Math.sqrt(p.m) && SIGMA / Math.sqrt(p.m) <= p.hi,
    );
    // 68 % nominal coverage over 12 points: at least 5 inside is a ≥ 99 % event (binomial; computed)
    expect(inside.length).toBeGreaterThanOrEqual(5);
  });

  it('identifies white FM by lag-1 autocorrelation', () => {
    const points = oadev(y, 1, [1, 4, 16]);
    expect(points.map((p) => p.noise)).toEqual(['wfm', 'wfm', 'wfm']);
    expect(points.every((p) => p.noiseSource === 'lag1')).toBe(true);
  });
});

describe('random-walk FM (seeded)', () => {
  it('gives a log–log OADEV slope near +1/2 (SP 1065 Table 3)', () => {
    const y = randomWalkFm(32768, 1e-12, 7);
    const pts = oadev(y, 1, [4, 8, 16, 32, 64, 128, 256, 512, 1024], { noise: 'rwfm' });
    const xs = pts.map((p) => Math.log(p.tau));
    const ys = pts.map((p) => Math.log(p.dev));
    const mx = xs.reduce((a, b) => a + b) / xs.length;
    const my = ys.reduce((a, b) => a + b) / ys.length;
    let sxy = 0;
    let sxx = 0;
    xs.forEach((x, i) => {
      sxy += (x - mx) * (ys[i] - my);
      sxx += (x - mx) ** 2;
    });
    // 20 exploratory seeds gave slopes 0.46 … 0.54: ±0.1 leaves margin
    expect(Math.abs(sxy / sxx - 0.5)).toBeLessThan(0.1);
  });
});

describe('estimateNoise (lag-1 autocorrelation, Riley & Greenhall 2004)', () => {
  it.each([
    ['white PM', () => whitePm(4096, 1, 11), 1, 'wpm', 2],
    ['white FM', () => whiteFm(4096, 1, 12), 1, 'wfm', 0],
    ['white FM averaged over 16', () => whiteFm(4096, 1, 13), 16, 'wfm', 0],
    ['random-walk FM', () => randomWalkFm(4096, 1, 14), 1, 'rwfm', -2],
    ['random-walk FM averaged over 16', () => randomWalkFm(4096, 1, 15), 16, 'rwfm', -2],
  ] as const)('recognises %s', (_, make, m, noise, alpha) => {
    const est = estimateNoise(make(), m);
    expect(est.noise).toBe(noise);
    expect(est.alpha).toBe(alpha);
  });

  it('reads phase data with θ = 1 (white FM phase is a random walk)', () => {
    const y = whiteFm(4096, 1, 21);
    const x = new Float64Array(y.length + 1);
    for (let i = 0; i < y.length; i++) x[i + 1] = x[i] + y[i];
    expect(estimateNoise(x, 1, { data: 'phase' }).noise).toBe('wfm');
  });

  it('refuses fewer than 30 averaged points', () => {
    expect(() => estimateNoise(whiteFm(100, 1, 1), 8)).toThrow(AnalysisError);
  });

  it('refuses data that do not vary', () => {
    expect(() => estimateNoise(new Float64Array(100).fill(3), 1)).toThrow(/do not vary/);
  });
});
