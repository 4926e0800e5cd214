import { describe, expect, it } from 'vitest';
import { driftFit, removeDrift } from '../../../shared/analysis';

describe('driftFit', () => {
  it('recovers an exact line with zero residual', () => {
    const t = [0, 3600, 7200, 10800];
    const y = t.map((s) => 1e-9 + 2e-14 * s);
    const fit = driftFit(t, y);
    expect(fit.slopePerSecond).toBeCloseTo(2e-14, 25);
    expect(fit.slopePerDay).toBeCloseTo(2e-14 * 86400, 20);
    expect(fit.intercept).toBeCloseTo(1e-9, 22);
    expect(fit.residualSd).toBeLessThan(1e-22);
    expect(fit.n).toBe(4);
  });

  it('matches the textbook slope standard error on a small set', () => {
    // t = 0…4, y = 0, 1, 1, 3, 5: Σ(t−t̄)² = 10, b = 12/10 = 1.2, residuals 0.4, 0.2, −1, −0.2,
    // 0.6 → SSR = 1.6, s² = 1.6/3, se(b) = √(s²/10) = 0.230940 (computed by hand)
    const fit = driftFit([0, 1, 2, 3, 4], [0, 1, 1, 3, 5]);
    expect(fit.slopePerSecond).toBeCloseTo(1.2, 12);
    expect(fit.residualSd).toBeCloseTo(Math.sqrt(1.6 / 3), 12);
    expect(fit.stderrPerDay / 86400).toBeCloseTo(Math.sqrt(1.6 / 30), 12);
  });

  it('stays accurate with epoch timestamps', () => {
    const t0 = 1.7e9;
    const t = Array.from({ length: 100 }, (_, i) => t0 + i);
    const y = t.map((s) => 5 + 1e-6 * (s - t0));
    expect(driftFit(t, y).slopePerSecond).toBeCloseTo(1e-6, 12);
  });

  it('removes the slope and keeps the level', () => {
    const t = [0, 1, 2, 3];
    const y = [1, 3, 5, 7];
    const flat = removeDrift(t, y, driftFit(t, y));
    flat.forEach((v) => expect(v).toBeCloseTo(4, 12));
  });

  it('refuses mismatched and too-short input', () => {
    expect(() => driftFit([1, 2, 3], [1, 2])).toThrow(
      expect.objectContaining({ code: 'mismatched' }),
    );
    expect(() => driftFit([1, 2], [1, 2])).toThrow(expect.objectContaining({ code: 'too-short' }));
    expect(() => driftFit([1, 1, 1], [1, 2, 3])).toThrow(
      expect.objectContaining({ code: 'bad-argument' }),
    );
  });
});
