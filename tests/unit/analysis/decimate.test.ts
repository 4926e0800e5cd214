import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { decimateMinMax } from '../../../shared/analysis';

describe('decimateMinMax (min–max bucketing, common plotting practice)', () => {
  it('passes short series through unchanged', () => {
    const r = decimateMinMax([0, 1, 2, 3], [5, 6, 7, 8], 2);
    expect(Array.from(r.t)).toEqual([0, 1, 2, 3]);
    expect(Array.from(r.v)).toEqual([5, 6, 7, 8]);
  });

  it('keeps each bucket’s minimum and maximum in time order', () => {
    const t = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9];
    const v = [0, 9, 1, 2, 3, -4, 5, 6, 2, 1];
    const r = decimateMinMax(t, v, 2);
    expect(Array.from(r.t)).toEqual([0, 1, 5, 7]);
    expect(Array.from(r.v)).toEqual([0, 9, -4, 6]);
  });

  it('keeps the two ends of a flat bucket', () => {
    const r = decimateMinMax([0, 1, 2, 3, 4, 5], [1, 1, 1, 1, 1, 1], 2);
    expect(Array.from(r.t)).toEqual([0, 2, 3, 5]);
  });

  it('never loses the global extremes and keeps time order (property)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true }), { minLength: 1, maxLength: 400 }),
        fc.integer({ min: 1, max: 50 }),
        (v, buckets) => {
          const t = v.map((_, i) => i);
          const r = decimateMinMax(t, v, buckets);
          expect(r.v.length).toBeLessThanOrEqual(Math.max(v.length, 2 * buckets));
          expect(Math.max(...r.v)).toBe(Math.max(...v));
          expect(Math.min(...r.v)).toBe(Math.min(...v));
          for (let i = 1; i < r.t.length; i++) expect(r.t[i]).toBeGreaterThan(r.t[i - 1]);
        },
      ),
    );
  });

  it('refuses mismatched lengths and bad bucket counts', () => {
    expect(() => decimateMinMax([1, 2], [1], 1)).toThrow(
      expect.objectContaining({ code: 'mismatched' }),
    );
    expect(() => decimateMinMax([1], [1], 0)).toThrow(
      expect.objectContaining({ code: 'bad-argument' }),
    );
  });
});
