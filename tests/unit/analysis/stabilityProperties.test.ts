import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  frequencyToPhase,
  octaveMs,
  phaseToFrequency,
  stability,
  STABILITY_KINDS,
} from '../../../shared/analysis';

// Values below 1e-100 in magnitude are taken as 0: the estimators square differences, and squares
// of numbers under ~1e-154 underflow double precision (subnormals lose relative accuracy), which
// says nothing about the estimators (fast-check found 8e-163 once).
const series = fc.array(
  fc.double({ min: -1000, max: 1000, noNaN: true }).map((v) => (Math.abs(v) < 1e-100 ? 0 : v)),
  { minLength: 8, maxLength: 48 },
);
const devs = (kind: (typeof STABILITY_KINDS)[number], y: ArrayLike<number>) =>
  stability(kind, y, 1, octaveMs(y.length, kind), { noise: 'wfm' }).points.map((p) => p.dev);

describe('stability properties (fast-check)', () => {
  it('scales every deviation linearly with the data', () => {
    fc.assert(
      fc.property(
        series,
        fc.double({ min: 1e-3, max: 1e3, noNaN: true }),
        fc.boolean(),
        (y, k, negate) => {
          const factor = negate ? -k : k;
          const scaled = y.map((v) => v * factor);
          // rounding is relative to the data, not to the deviation (which may cancel to ~0)
          const floor = 1e-12 * k * Math.max(...y.map(Math.abs));
          for (const kind of STABILITY_KINDS) {
            const a = devs(kind, y);
            const b = devs(kind, scaled);
            a.forEach((d, i) =>
              expect(Math.abs(b[i] - k * d)).toBeLessThanOrEqual(1e-9 * k * d + floor),
            );
          }
        },
      ),
      { numRuns: 60 },
    );
  });

  it('gives zero deviation for a constant series', () => {
    fc.assert(
      fc.property(
        fc.double({ min: -1e6, max: 1e6, noNaN: true }),
        fc.integer({ min: 4, max: 64 }),
        (c, n) => {
          const y = new Array<number>(n).fill(c);
          for (const kind of STABILITY_KINDS) {
            for (const d of devs(kind, y)) expect(d).toBeLessThanOrEqual(1e-12 * (Math.abs(c) + 1));
          }
        },
      ),
      { numRuns: 60 },
    );
  });

  it('leaves every deviation unchanged when a constant offset is added', () => {
    fc.assert(
      fc.property(series, fc.double({ min: -1e4, max: 1e4, noNaN: true }), (y, c) => {
        const shifted = y.map((v) => v + c);
        for (const kind of STABILITY_KINDS) {
          const a = devs(kind, y);
          const b = devs(kind, shifted);
          // y + c rounds each value by ≤ ½ ulp of |c| + 1000: allow a few such roundings
          a.forEach((d, i) =>
            expect(Math.abs(b[i] - d)).toBeLessThanOrEqual(1e-11 * (Math.abs(c) + 1000) + 1e-9 * d),
          );
        }
      }),
      { numRuns: 60 },
    );
  });

  it('round-trips frequency → phase → frequency', () => {
    fc.assert(
      fc.property(series, fc.double({ min: 1e-3, max: 1e3, noNaN: true }), (y, tau0) => {
        const x = frequencyToPhase(y, tau0);
        expect(x.length).toBe(y.length + 1);
        expect(x[0]).toBe(0);
        const back = phaseToFrequency(x, tau0);
        const scale = Math.max(1, ...y.map(Math.abs));
        back.forEach((v, i) =>
          expect(Math.abs(v - y[i])).toBeLessThanOrEqual(1e-10 * scale * y.length),
        );
      }),
      { numRuns: 100 },
    );
  });
});
