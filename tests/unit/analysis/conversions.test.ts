import { describe, expect, it, test } from 'vitest';
import {
  AnalysisError,
  fractionalFrequency,
  frequencyToPhase,
  phaseToFrequency,
  referenceCorrect,
  referenceUncorrect,
} from '../../../shared/analysis';

describe('conversions', () => {
  test.each([
    // f, f0, y — y = (f − f0)/f0 (IEEE 1139-2008; SP 1065 §2), computed
    [16_000_016, 16_000_000, 1e-6],
    [32_767.5, 32_768, -0.5 / 32_768],
    [10e6, 10e6, 0],
  ])('gives y = %f relative to %f', (f, f0, y) => {
    expect(fractionalFrequency(f, f0)).toBeCloseTo(y, 15);
  });

  it('converts arrays to a Float64Array', () => {
    const y = fractionalFrequency([16e6, 16e6 + 1.6], 16e6);
    expect(y).toBeInstanceOf(Float64Array);
    expect(y[1]).toBeCloseTo(1e-7, 15);
  });

  it('refuses a zero nominal', () => {
    expect(() => fractionalFrequency(1, 0)).toThrow(AnalysisError);
  });

  it('corrects a reading taken on a slow timebase upwards (f_true = f·(1 + y_ref), docs/references.md)', () => {
    // a timebase 1e-9 slow makes the counter read 16 mHz low at 16 MHz: computed
    expect(referenceCorrect(16e6, 1e-9)).toBeCloseTo(16e6 + 0.016, 9);
    expect(referenceUncorrect(referenceCorrect(16e6, 1e-9), 1e-9)).toBeCloseTo(16e6, 8);
    const arr = referenceCorrect([1, 2], 0.5);
    expect(Array.from(arr)).toEqual([1.5, 3]);
    expect(Array.from(referenceUncorrect(arr, 0.5))).toEqual([1, 2]);
  });

  it('builds N + 1 phase points from N frequency points with x0 = 0 (SP 1065 §2)', () => {
    const x = frequencyToPhase([1, 2, 3], 0.5);
    expect(Array.from(x)).toEqual([0, 0.5, 1.5, 3]);
    expect(Array.from(phaseToFrequency(x, 0.5))).toEqual([1, 2, 3]);
  });

  test.each([
    ['an empty series', () => frequencyToPhase([], 1), 'empty'],
    ['one phase point', () => phaseToFrequency([1], 1), 'too-short'],
    ['a non-finite value', () => frequencyToPhase([1, Number.NaN], 1), 'non-finite'],
    ['a zero τ0', () => frequencyToPhase([1], 0), 'bad-argument'],
  ] as const)('refuses %s', (_, call, code) => {
    expect(call).toThrow(expect.objectContaining({ code }));
  });
});
