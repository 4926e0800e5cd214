import { describe, expect, it, test } from 'vitest';
import { AnalysisError, findGaps, median, summarize } from '../../../shared/analysis';

describe('summarize', () => {
  it('gives the NIST nine-point sample sd 100.9770 (SP 1065 Table 29)', () => {
    const s = summarize([892, 809, 823, 798, 671, 644, 883, 903, 677]);
    expect(s.sd).toBeCloseTo(100.977, 4);
    expect(s.n).toBe(9);
    expect(s.median).toBe(809);
    expect(s.min).toBe(644);
    expect(s.max).toBe(903);
    expect(s.sem).toBeCloseTo(100.9770326 / 3, 6);
  });

  it('keeps the mean and sd of readings near 1.6e7 Hz that differ by about 1 mHz exact', () => {
    // readings 16 MHz + {1, 2, 3, 4} × 2⁻¹⁰ Hz (≈ 0.98 mHz, the 11th significant digit) are exact
    // binary numbers; so are the exact mean 16 000 000 + 2.5 × 2⁻¹⁰ and the deviations ±0.5,
    // ±1.5 steps, whose sample sd is step·√(1.25·n/(n−1)) (computed)
    const n = 1_000_000;
    const step = 2 ** -10;
    const values = new Float64Array(n);
    for (let i = 0; i < n; i++) values[i] = 16e6 + ((i % 4) + 1) * step;
    const s = summarize(values);
    expect(s.mean).toBe(16e6 + 2.5 * step);
    expect(s.sd).toBeCloseTo(step * Math.sqrt((1.25 * n) / (n - 1)), 15);
    // a plain running sum of the same readings is visibly off: the test has teeth
    let naive = 0;
    for (let i = 0; i < n; i++) naive += values[i];
    expect(naive / n).not.toBe(16e6 + 2.5 * step);
  });

  it('flags an outlier by its robust z and keeps it in the statistics', () => {
    const values = [10, 10.1, 9.9, 10.05, 9.95, 10.02, 9.98, 25];
    const s = summarize(values);
    expect(s.outliers).toEqual([7]);
    expect(s.n).toBe(8);
    expect(s.max).toBe(25);
  });

  it('honours a custom outlier threshold', () => {
    // median 10.01, MAD 0.05: z(10.3) = 0.6745 × 0.29/0.05 = 3.91 (computed)
    const values = [10, 10.1, 9.9, 10.05, 9.95, 10.02, 9.98, 10.3];
    expect(summarize(values).outliers).toEqual([]);
    expect(summarize(values, { outlierZ: 3 }).outliers).toEqual([7]);
  });

  it('falls back to the mean absolute deviation when more than half the readings are equal', () => {
    const values = [5, 5, 5, 5, 5, 5, 5, 5.001, 9];
    const s = summarize(values);
    expect(s.mad).toBe(0);
    expect(s.outliers).toEqual([8]);
  });

  it('flags nothing in a constant series', () => {
    const s = summarize([3, 3, 3, 3]);
    expect(s.sd).toBe(0);
    expect(s.outliers).toEqual([]);
  });

  test.each([
    [[], 'empty'],
    [[1], 'too-short'],
    [[1, Number.NaN], 'non-finite'],
  ] as const)('refuses %j', (values, code) => {
    expect(() => summarize(values)).toThrow(expect.objectContaining({ code }));
  });
});

describe('median', () => {
  test.each([
    [[3, 1, 2], 2],
    [[4, 1, 3, 2], 2.5],
    [[5], 5],
    [[2, 2, 2, 1, 3, 2], 2],
  ])('of %j is %f', (values, expected) => {
    expect(median(values)).toBe(expected);
  });

  it('agrees with a sort on larger shuffled input', () => {
    const values = Array.from({ length: 1001 }, (_, i) => (i * 7919) % 1001);
    expect(median(values)).toBe(500);
    expect(median(values.slice(1))).toBe(
      [...values.slice(1)]
        .sort((a, b) => a - b)
        .slice(499, 501)
        .reduce((a, b) => a + b) / 2,
    );
  });
});

describe('findGaps', () => {
  it('reports steps longer than 1.5 gate times with the readings lost', () => {
    const t = [0, 1, 2, 5, 6, 6.4, 9];
    expect(findGaps(t, 1)).toEqual([
      { index: 3, start: 2, end: 5, missing: 2 },
      { index: 6, start: 6.4, end: 9, missing: 2 },
    ]);
  });

  it('honours a custom factor', () => {
    expect(findGaps([0, 1, 2.2, 3.2], 1)).toEqual([]);
    expect(findGaps([0, 1, 2.2, 3.2], 1, { factor: 1.1 })).toHaveLength(1);
  });

  it('refuses timestamps that go backwards', () => {
    expect(() => findGaps([0, 2, 1], 1)).toThrow(AnalysisError);
  });
});
