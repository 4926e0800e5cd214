import { describe, expect, it } from 'vitest';
import {
  chartColumns,
  maxPointsFor,
  seqRangeFor,
  toWindow,
} from '../../../src/composables/useCaptureSeries';

const NOMINAL = 16_000_000;

describe('the capture chart columns', () => {
  it('leaves a gap between non-consecutive seqs of raw readings', () => {
    const w = toWindow(
      [
        { seq: 0, t: 0, value: NOMINAL },
        { seq: 1, t: 1, value: NOMINAL },
        { seq: 5, t: 5, value: NOMINAL },
      ],
      false,
    );
    const { x, y, seqs } = chartColumns(w, { nominal: NOMINAL, ppm: true });
    expect(x).toEqual([0, 1, 3, 5]);
    expect(y).toEqual([0, 0, null, 0]);
    expect(seqs).toEqual([0, 1, -1, 5]);
  });

  it('joins decimated min/max points without inventing gaps', () => {
    const w = toWindow(
      [
        { seq: 10, t: 10, value: 1 },
        { seq: 60, t: 60, value: 2 },
        { seq: 70, t: 70, value: 1 },
      ],
      true,
    );
    expect(chartColumns(w, { nominal: null, ppm: false }).y).toEqual([1, 2, 1]);
  });

  it('shows offsets in ppm from nominal and keeps flagged readings out of the line', () => {
    // (16 000 016 − 16 000 000)/16 000 000 = 1 ppm.
    const w = toWindow(
      [
        { seq: 0, t: 0, value: NOMINAL + 16 },
        { seq: 1, t: 1, value: 0, flags: 1 },
        { seq: 2, t: 2, value: NOMINAL - 8 },
      ],
      false,
    );
    const { x, y, flaggedT } = chartColumns(w, { nominal: NOMINAL, ppm: true });
    expect(x).toEqual([0, 2]);
    expect(y[0]).toBeCloseTo(1, 9);
    expect(y[1]).toBeCloseTo(-0.5, 9);
    expect(flaggedT).toEqual([1]);
  });
});

describe('zoom refinement', () => {
  it('asks for the seq range in view, one reading wider on each side', () => {
    const readings = Array.from({ length: 100 }, (_, i) => ({ seq: i * 10, t: i * 10, value: 1 }));
    const w = toWindow(readings, true);
    expect(seqRangeFor(w, 200, 300)).toEqual({ from: 190, to: 320 });
  });

  it('fetches small ranges whole and large ones decimated', () => {
    expect(maxPointsFor(3000)).toBe(10_000);
    expect(maxPointsFor(1_000_000)).toBe(2000);
  });
});
