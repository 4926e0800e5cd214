import { describe, expect, it, test } from 'vitest';
import fc from 'fast-check';
import {
  AnalysisError,
  accelerationBudget,
  compareTiltChecks,
  orientationHalfWidthMg,
  tiltCheckAxis,
  zOrientation,
} from '../../../shared/analysis';

const setup = { lsbMg: 0.0625, orientationErrorDeg: 1 };

describe('the pose error of a board (tilt geometry, common practice, no source)', () => {
  test.each([
    // along gravity: g(1 − cos θ)/2 with cos 1° = 0.99984769516 (by hand) → 0.0761524 mg
    ['flat', 1000, 1, 0.0761524],
    ['inverted', 1000, 1, 0.0761524],
    // across gravity: g·sin θ with sin 1° = 0.01745240644 (by hand) → 17.4524 mg
    ['on-edge', 1000, 1, 17.4524064],
    // 2°: cos 2° = 0.99939082702 → (1 − cos)·1000/2 = 0.3045865 mg (by hand)
    ['flat', 1000, 2, 0.3045865],
    ['flat', 1000, 0, 0],
  ] as const)('%s, 1 g = %f mg, θ ≤ %f° gives a half-width of %f mg', (o, ideal, deg, expected) => {
    expect(orientationHalfWidthMg(o, ideal, deg)).toBeCloseTo(expected, 6);
  });
});

describe('the budget of one static acceleration capture (JCGM 100:2008 §4.2, §4.3.7, eq. 10)', () => {
  it('combines the scatter, half an LSB and the pose', () => {
    const b = accelerationBudget({ n: 100, mean: 1004, sd: 1 }, 'flat', setup);
    expect(b.components.map((c) => c.key)).toEqual(['type-a', 'resolution', 'orientation']);
    // s/√n = 0.1; 0.03125/√3 = 0.0180422; 0.0761524/√3 = 0.0439666; root-sum-square by hand 0.110719
    expect(b.components[0].contribution).toBeCloseTo(0.1, 12);
    expect(b.components[1].contribution).toBeCloseTo(0.0180422, 6);
    expect(b.components[2].contribution).toBeCloseTo(0.0439666, 6);
    expect(b.combined).toBeCloseTo(0.110719, 5);
    // ν_eff = u⁴ / (0.1⁴/99) ≈ 149 (G.2b by hand): t_0.975(149) = 1.976, so Driftbench's floor k = 2 applies.
    expect(b.effectiveDof).toBeCloseTo(148.8, 0);
    expect(b.k).toBe(2);
    expect(b.expanded).toBeCloseTo(0.221438, 5);
    expect(b.relativeExpanded).toBeNull();
  });

  it('lets the pose dominate on edge, where the axis reads g·sin θ', () => {
    const b = accelerationBudget({ n: 100, mean: 6, sd: 1 }, 'on-edge', setup);
    // 17.4524/√3 = 10.0762 mg (by hand)
    expect(b.components[2].contribution).toBeCloseTo(10.0762, 3);
  });

  it('leaves the pose out, with a note, when no orientation was recorded', () => {
    const b = accelerationBudget({ n: 10, mean: 1, sd: 1 }, null, setup);
    expect(b.components).toHaveLength(2);
    expect(b.notes.join(' ')).toMatch(/No orientation recorded/);
  });

  it.each([
    [{ n: 1, mean: 1, sd: 0 }, setup],
    [{ n: 10, mean: 1, sd: -1 }, setup],
    [
      { n: 10, mean: 1, sd: 1 },
      { lsbMg: 0, orientationErrorDeg: 1 },
    ],
    [
      { n: 10, mean: 1, sd: 1 },
      { lsbMg: 0.1, orientationErrorDeg: 60 },
    ],
  ])('refuses what it cannot reduce (%o)', (r, s) => {
    expect(() => accelerationBudget(r, 'flat', s)).toThrow(AnalysisError);
  });
});

describe('the tilt check of an axis (flip pair, common practice, no source)', () => {
  // A part built with +6.1 mg offset and +0.4 % sensitivity at g_n: flat 1010.1 mg, inverted −997.9 mg.
  const flat = { n: 200, mean: 1010.1, sd: 1.2 };
  const inverted = { n: 200, mean: -997.9, sd: 1.2 };

  it('finds the offset and sensitivity the part was built with', () => {
    const r = tiltCheckAxis({ flat, inverted, ...setup });
    expect(r.idealMg).toBe(1000);
    expect(r.offsetMg).toBeCloseTo(6.1, 10); // (1010.1 − 997.9)/2
    expect(r.sensitivityPct).toBeCloseTo(100.4, 10); // (1010.1 + 997.9)/2 ÷ 1000 × 100
    expect(r.sensitivityErrorPct).toBeCloseTo(0.4, 10);
  });

  it('forms u(offset) and u(sensitivity) from both captures through c = ½ and 100/(2·1 g)', () => {
    const r = tiltCheckAxis({ flat, inverted, ...setup });
    // Per capture: (1.2/√200)² + (0.03125/√3)² + (0.0761524/√3)² = 0.0072 + 0.00032552 + 0.00193306 = 0.00945858;
    // u(offset) = ½·√(2 × 0.00945858) = 0.0687698 mg (by hand); u(sensitivity) = that × 100/2000 × 2 = 0.00687698 %.
    expect(r.offset.combined).toBeCloseTo(0.0687698, 6);
    expect(r.sensitivity.combined).toBeCloseTo(0.00687698, 7);
    expect(r.offset.components).toHaveLength(6);
    expect(r.offset.components[0].name).toMatch(/^Flat: Repeatability/);
    expect(r.offset.components[3].name).toMatch(/^Inverted: Repeatability/);
  });

  it('uses local gravity for the ideal 1 g reading', () => {
    // At 9.78 m/s² the ideal reading is 1000 × 9.78/9.80665 = 997.2825 mg (by hand).
    const r = tiltCheckAxis({
      flat: { n: 10, mean: 997.2825, sd: 1 },
      inverted: { n: 10, mean: -997.2825, sd: 1 },
      ...setup,
      localGravity: 9.78,
    });
    expect(r.idealMg).toBeCloseTo(997.2825, 3);
    expect(r.sensitivityErrorPct).toBeCloseTo(0, 4);
  });

  it('keeps the on-edge reading as a second offset estimate with its own budget', () => {
    const r = tiltCheckAxis({ flat, inverted, onEdge: { n: 200, mean: 6.0, sd: 1.2 }, ...setup });
    expect(r.onEdgeOffset?.mean).toBe(6.0);
    expect(r.onEdgeOffset?.components[2].key).toBe('orientation');
  });

  it('refuses a flat capture that reads less than the inverted one', () => {
    expect(() => tiltCheckAxis({ flat: inverted, inverted: flat, ...setup })).toThrow(
      AnalysisError,
    );
  });

  it('gives the offset independent of the scale error (property)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: -50, max: 50, noNaN: true }),
        fc.double({ min: -5, max: 5, noNaN: true }),
        (offset, errPct) => {
          const g = 1000 * (1 + errPct / 100);
          const r = tiltCheckAxis({
            flat: { n: 5, mean: g + offset, sd: 1 },
            inverted: { n: 5, mean: -g + offset, sd: 1 },
            ...setup,
          });
          return (
            Math.abs(r.offsetMg - offset) < 1e-9 && Math.abs(r.sensitivityErrorPct - errPct) < 1e-9
          );
        },
      ),
    );
  });
});

describe('comparing tilt checks (compare(): guard band w = U, ILAC-G8:09/2019)', () => {
  const before = tiltCheckAxis({
    flat: { n: 200, mean: 1010.1, sd: 1.2 },
    inverted: { n: 200, mean: -997.9, sd: 1.2 },
    ...setup,
  });
  const limits = { offset: { limit: 20 }, sensitivity: { limit: 1 } };

  it('finds an unchanged part within both limits', () => {
    const same = compareTiltChecks(before, before, limits);
    expect(same.offset.delta).toBe(0);
    // U(Δ) = 2 × √2 × 0.0687698 = 0.194510 mg (by hand; k = 2 at ν_eff > 60)
    expect(same.offset.expandedUncertainty).toBeCloseTo(0.19451, 4);
    expect(same.offset.verdict).toBe('within');
    expect(same.sensitivity.verdict).toBe('within');
    expect(same.sensitivity.unit).toBe('%');
    expect([same.sensitivity.limitLow, same.sensitivity.limitHigh]).toEqual([-1, 1]);
  });

  test.each([
    [30, 'exceeds'], // 30 − 0.19 > 20
    [19.9, 'inconclusive'], // 19.9 + 0.19 > 20 > 19.9 − 0.19
    [10, 'within'],
  ])('an offset moved by %f mg against ±20 mg is %s', (shift, verdict) => {
    const after = tiltCheckAxis({
      flat: { n: 200, mean: 1010.1 + shift, sd: 1.2 },
      inverted: { n: 200, mean: -997.9 + shift, sd: 1.2 },
      ...setup,
    });
    const r = compareTiltChecks(before, after, limits);
    expect(r.offset.delta).toBeCloseTo(shift, 9);
    expect(r.offset.verdict).toBe(verdict);
    expect(r.sensitivity.verdict).toBe('within');
  });

  it('gives Δ and U but no verdict for a quantity without a limit', () => {
    const r = compareTiltChecks(before, before, { offset: { limit: 20 } });
    expect(r.sensitivity.verdict).toBeNull();
    expect(r.sensitivity.limitLow).toBeNull();
    expect(r.sensitivity.expandedUncertainty).toBeGreaterThan(0);
  });
});

describe('the Z axis for a recorded orientation', () => {
  test.each([
    ['flat', 'flat'],
    ['z-up', 'flat'],
    ['inverted', 'inverted'],
    ['z-down', 'inverted'],
    ['on-edge', 'on-edge'],
    ['x-up', 'on-edge'],
    ['other', null],
    [null, null],
  ])('%s → %s', (recorded, expected) => {
    expect(zOrientation(recorded)).toBe(expected);
  });
});
