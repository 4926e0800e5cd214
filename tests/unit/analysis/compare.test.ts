import { describe, expect, it, test } from 'vitest';
import { compare, compareSensor, guardBandVerdict } from '../../../shared/analysis';

describe('guard-banded verdict (ILAC-G8:09/2019, w = U; docs/references.md)', () => {
  test.each([
    // Δ, U, L, verdict — rule: within if |Δ|+U ≤ L, exceeds if |Δ|−U > L
    [0.25, 0.5, 1, 'within'], // 0.75 ≤ 1
    [0.5, 0.5, 1, 'within'], // 1 ≤ 1: the boundary belongs to "within"
    [-0.5, 0.5, 1, 'within'],
    [0.75, 0.5, 1, 'inconclusive'], // 1.25 > 1 and 0.25 ≤ 1
    [1.5, 0.5, 1, 'inconclusive'], // 1.5 − 0.5 = 1 is not > 1
    [1.75, 0.5, 1, 'exceeds'], // 1.25 > 1
    [-1.75, 0.5, 1, 'exceeds'],
    [2, 0, 1, 'exceeds'],
  ] as const)('Δ = %f, U = %f, L = %f is %s', (delta, U, L, verdict) => {
    expect(guardBandVerdict(delta, U, L)).toBe(verdict);
  });

  it('refuses a non-positive limit', () => {
    expect(() => guardBandVerdict(0, 0, 0)).toThrow(
      expect.objectContaining({ code: 'bad-argument' }),
    );
  });
});

describe('compare', () => {
  it('reports Δ in Hz, ppm and ppb with U at k = 2', () => {
    const r = compare(
      { mean: 16e6, u: 1, nominal: 16e6, unit: 'Hz' },
      { mean: 16e6 + 8, u: 1, nominal: 16e6, unit: 'Hz' },
      { limit: 1, limitUnit: 'ppm' },
    );
    expect(r.delta).toBe(8);
    expect(r.deltaPpm).toBeCloseTo(0.5, 12);
    expect(r.deltaPpb).toBeCloseTo(500, 9);
    expect(r.u).toBeCloseTo(Math.SQRT2, 12);
    expect(r.expandedUncertainty).toBeCloseTo(2 * Math.SQRT2, 12);
    expect(r.k).toBe(2);
    // The limit now also carries its bounds (issue 8: asymmetric limits); ±1 ppm of 16 MHz is ±16 Hz.
    expect(r.limit).toMatchObject({
      quantity: 16,
      quantityUnit: 'Hz',
      given: 1,
      givenUnit: 'ppm',
      low: -16,
      high: 16,
    });
    expect(r.verdict).toBe('within'); // 8 + 2.83 ≤ 16
    expect(r.significant).toBe(true); // 8 > 2.83
  });

  it('cancels a shared reference component (one input used twice, r = 1) and says so', () => {
    const side = { mean: 100, u: 1, uReference: 0.8 };
    const r = compare(
      side,
      { ...side, mean: 100.5 },
      { limit: 2, limitUnit: 'Hz', sameReference: true },
    );
    expect(r.u).toBeCloseTo(Math.sqrt(2 * 0.36), 12); // √(1 − 0.64) per side
    expect(r.referenceCorrelated).toBe(true);
    expect(r.notes.join(' ')).toMatch(/cancel/);
  });

  it('keeps the reference component when the references differ', () => {
    const side = { mean: 100, u: 1, uReference: 0.8 };
    const r = compare(side, side, { limit: 2, limitUnit: 'Hz' });
    expect(r.u).toBeCloseTo(Math.SQRT2, 12);
    expect(r.referenceCorrelated).toBe(false);
  });

  it('is inconclusive when the limit falls inside Δ ± U', () => {
    const r = compare({ mean: 0, u: 0.25 }, { mean: 0.9, u: 0.25 }, { limit: 1, limitUnit: 'mg' });
    expect(r.verdict).toBe('inconclusive');
    expect(r.deltaPpm).toBeUndefined();
  });

  it('warns when the ambient temperature moved', () => {
    const r = compare(
      { mean: 32768, u: 0.001, ambientC: 22 },
      { mean: 32768, u: 0.001, ambientC: 25.5 },
      { limit: 1, limitUnit: 'ppm', nominal: 32768 },
    );
    expect(r.notes.join(' ')).toMatch(/3\.5 °C/);
  });

  it('honours a custom coverage factor', () => {
    const r = compare(
      { mean: 0, u: 1 },
      { mean: 0, u: 0 },
      { limit: 5, limitUnit: 'Hz', confidenceK: 3 },
    );
    expect(r.expandedUncertainty).toBe(3);
  });

  test.each([
    ['a relative limit without a nominal', { limit: 1, limitUnit: 'ppm' as const }, 'bad-argument'],
    ['a zero limit', { limit: 0, limitUnit: 'Hz' as const }, 'bad-argument'],
  ])('refuses %s', (_, opts, code) => {
    expect(() => compare({ mean: 1, u: 0 }, { mean: 1, u: 0 }, opts)).toThrow(
      expect.objectContaining({ code }),
    );
  });

  it('refuses sides in different units', () => {
    expect(() =>
      compare(
        { mean: 1, u: 0, unit: 'Hz' },
        { mean: 1, u: 0, unit: 'mg' },
        { limit: 1, limitUnit: 'Hz' },
      ),
    ).toThrow(expect.objectContaining({ code: 'mismatched' }));
  });
});

describe('compareSensor', () => {
  it('checks offset and sensitivity shifts against their limits with guard bands', () => {
    const before = {
      offsetMg: 10,
      sensitivity: 1.002,
      sensitivityErrorPct: 0.2,
      uOffsetMg: 2,
      uSensitivityPct: 0.1,
    };
    const after = {
      offsetMg: 45,
      sensitivity: 1.004,
      sensitivityErrorPct: 0.4,
      uOffsetMg: 2,
      uSensitivityPct: 0.1,
    };
    const r = compareSensor(before, after, { offsetLimitMg: 20, sensitivityLimitPct: 1 });
    expect(r.offset.delta).toBe(35);
    expect(r.offset.expanded).toBeCloseTo(2 * Math.hypot(2, 2), 12);
    expect(r.offset.verdict).toBe('exceeds'); // 35 − 5.66 > 20
    expect(r.sensitivity.verdict).toBe('within'); // 0.2 + 0.28 ≤ 1
    expect(r.notes).toEqual([]);
  });

  it('notes missing uncertainties', () => {
    const s = { offsetMg: 0, sensitivity: 1, sensitivityErrorPct: 0 };
    expect(compareSensor(s, s, { offsetLimitMg: 20, sensitivityLimitPct: 1 }).notes).toHaveLength(
      2,
    );
  });
});
