import { describe, expect, it, test } from 'vitest';
import {
  decadeRange,
  formatPpb,
  formatPpm,
  formatRelative,
  formatSci,
  formatSi,
  formatSigned,
  formatTau,
  logTicks,
} from '../../../src/utils/si';

const MINUS = '\u2212';

describe('SI prefixes', () => {
  // Expected values: SI brochure prefixes (k = 10³, m = 10⁻³, µ = 10⁻⁶, n = 10⁻⁹), 3 significant figures.
  test.each([
    [1, 's', '1 s'],
    [0.001, 's', '1 ms'],
    [0.0125, 's', '12.5 ms'],
    [2500, 's', '2.5 ks'],
    [16e6, 'Hz', '16 MHz'],
    [32768, 'Hz', '32.8 kHz'],
    [4.2e-7, 'Hz', '420 nHz'],
    [-0.0031, 'Hz', `${MINUS}3.1 mHz`],
    [0, 'Hz', '0 Hz'],
    [999.96, 's', '1 ks'],
  ])('formatSi(%d, %s) → %s', (value, unit, expected) => {
    expect(formatSi(value, unit)).toBe(expected);
  });

  test.each([
    [0.1, '100 ms'],
    [1, '1 s'],
    [20, '20 s'],
    [5000, '5 ks'],
  ])('τ %d s reads %s', (tau, expected) => {
    expect(formatTau(tau)).toBe(expected);
  });

  it('shows a dash for missing figures', () => {
    expect(formatSi(null, 's')).toBe('—');
    expect(formatSi(Number.NaN, 's')).toBe('—');
  });
});

describe('ppm and ppb with sign', () => {
  // 1 ppm = 10⁻⁶, 1 ppb = 10⁻⁹ (fractional); docs/design.md asks for offsets with their sign.
  test.each([
    [1.2e-6, '+1.200 ppm'],
    [-2.5e-7, `${MINUS}0.250 ppm`],
    [0, '0.000 ppm'],
  ])('formatPpm(%d) → %s', (fraction, expected) => {
    expect(formatPpm(fraction)).toBe(expected);
  });

  test.each([
    [3.4e-9, '+3.40 ppb'],
    [-1.25e-8, `${MINUS}12.50 ppb`],
  ])('formatPpb(%d) → %s', (fraction, expected) => {
    expect(formatPpb(fraction)).toBe(expected);
  });

  test.each([
    // |x| ≥ 0.1 ppm stays in ppm, smaller goes to ppb; three significant figures.
    [1.234e-6, true, '+1.23 ppm'],
    [-4.56e-6, true, `${MINUS}4.56 ppm`],
    [2.5e-8, true, '+25.0 ppb'],
    [2.5e-8, false, '25.0 ppb'],
    [1.5e-7, false, '0.150 ppm'],
    [-7e-10, true, `${MINUS}0.700 ppb`],
  ])('formatRelative(%d, signed %s) → %s', (fraction, signed, expected) => {
    expect(formatRelative(fraction, signed)).toBe(expected);
  });

  test.each([
    [0.5, 3, '+0.500'],
    [-2, 1, `${MINUS}2.0`],
    [0.0001, 2, '0.00'],
  ])('formatSigned(%d, %d) → %s', (value, digits, expected) => {
    expect(formatSigned(value, digits)).toBe(expected);
  });
});

describe('scientific form for deviations', () => {
  test.each([
    [1.234e-11, 3, '1.23 × 10⁻¹¹'],
    [9.996e-12, 3, '1.00 × 10⁻¹¹'],
    [5e-10, 2, '5.0 × 10⁻¹⁰'],
    [2.5, 2, '2.5'],
    [1e3, 1, '1 × 10³'],
  ])('formatSci(%d, %d) → %s', (value, digits, expected) => {
    expect(formatSci(value, digits)).toBe(expected);
  });
});

describe('log-axis ticks', () => {
  it('puts nine ticks in each decade, labels 1, 2 and 5 and grids the decades', () => {
    const ticks = logTicks(1, 100);
    expect(ticks.map((t) => t.value)).toEqual([
      1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 20, 30, 40, 50, 60, 70, 80, 90, 100,
    ]);
    expect(ticks.filter((t) => t.labelled).map((t) => t.value)).toEqual([1, 2, 5, 10, 20, 50, 100]);
    expect(ticks.filter((t) => t.decade).map((t) => t.value)).toEqual([1, 10, 100]);
  });

  it('gives exact small values, not floating-point remainders', () => {
    const ticks = logTicks(1e-12, 1e-11).map((t) => t.value);
    expect(ticks).toContain(2e-12);
    expect(ticks).toContain(5e-12);
    expect(ticks[ticks.length - 1]).toBe(1e-11);
  });

  it('keeps only ticks inside a range that starts and ends mid-decade', () => {
    expect(logTicks(0.3, 4).map((t) => t.value)).toEqual([
      0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1, 2, 3, 4,
    ]);
  });

  it('returns no ticks for a range that is not positive', () => {
    expect(logTicks(0, 10)).toEqual([]);
    expect(logTicks(-1, 10)).toEqual([]);
  });

  test.each([
    [0.3, 4, [0.1, 10]],
    [2e-12, 7e-11, [1e-12, 1e-10]],
    [1e-11, 1e-11, [1e-11, 1e-10]],
  ])('decadeRange(%d, %d) encloses the data in whole decades', (min, max, expected) => {
    expect(decadeRange(min, max)).toEqual(expected);
  });
});
