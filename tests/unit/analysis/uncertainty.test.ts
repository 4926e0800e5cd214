import { describe, expect, it, test } from 'vitest';
import { combineUncertainty, counterResolution, uncertaintyBudget } from '../../../shared/analysis';

describe('combineUncertainty', () => {
  it('reproduces the GUM H.1 end-gauge example: u_c = 31.66 nm → 32 nm, ν_eff ≈ 16.7', () => {
    // JCGM 100:2008 H.1, Table H.1: components in nm (degrees of freedom)
    const { uc, nuEff } = combineUncertainty([
      { value: 25, dof: 18 },
      { value: 16.6, dof: 2 },
      { value: 6.7, dof: 8 },
      { value: 5.8, dof: 24 },
      { value: 3.9, dof: 5 },
      { value: 2.9, dof: 50 },
    ]);
    expect(Math.floor(uc * 100) / 100).toBe(31.66); // docs/references.md: 31.66 (formula 31.6656, computed)
    expect(uc).toBeCloseTo(31.6656, 4); // computed
    expect(Math.round(uc)).toBe(32);
    expect(nuEff).toBeCloseTo(16.75, 2); // GUM H.1: 16.7 (formula gives 16.753, computed)
    expect(Math.floor(nuEff)).toBe(16); // GUM truncates to 16
  });

  it('applies sensitivity coefficients and treats missing dof as infinite', () => {
    const { uc, nuEff } = combineUncertainty([{ value: 3, sensitivity: 2 }, { value: 8 }]);
    expect(uc).toBe(10);
    expect(nuEff).toBe(Infinity);
  });

  it('refuses an empty list and negative uncertainties', () => {
    expect(() => combineUncertainty([])).toThrow(expect.objectContaining({ code: 'empty' }));
    expect(() => combineUncertainty([{ value: -1 }])).toThrow(
      expect.objectContaining({ code: 'bad-argument' }),
    );
  });
});

describe('counterResolution', () => {
  test.each([
    // kind, gate, f, absolute Hz, relative — general counter theory (docs/references.md), computed
    ['gated', 1, 16e6, 1, 1 / 16e6], // ±1 count in 1 s
    ['gated', 0.1, 32768, 10, 10 / 32768],
    ['reciprocal', 1, 16e6, 16e6 * 1e-10, 1e-10], // 100 ps in 1 s gives 1e-10
    ['reciprocal', 10, 10e6, 10e6 * 1e-11, 1e-11],
  ] as const)('%s counter, %f s gate at %f Hz', (kind, gateTime, f, absoluteHz, relative) => {
    const r = counterResolution({ kind, gateTime, f });
    expect(r.absoluteHz).toBeCloseTo(absoluteHz, 12);
    expect(r.relative).toBeCloseTo(relative, 20);
  });
});

describe('uncertaintyBudget', () => {
  const base = {
    stats: { n: 100, mean: 16_000_010, sd: 0.01, sem: 0.001 },
    nominal: 16e6,
    gateTime: 1,
    resolution: { kind: 'reciprocal' as const },
  };

  it('combines SEM, resolution, reference and temperature for white FM', () => {
    const b = uncertaintyBudget({
      ...base,
      noise: 'wfm',
      reference: { offset: 1e-9, u: 1e-11 },
      temperature: { coeffPerC: 1e-8, uC: 0.1 },
    });
    const byName = Object.fromEntries(b.components.map((c) => [c.symbol, c]));
    expect(byName.u_A.value).toBe(0.001);
    expect(byName.u_A.dof).toBe(99);
    expect(byName.u_A.type).toBe('A');
    expect(byName.u_res.value).toBeCloseTo(1.6e-3 / Math.sqrt(3), 12); // 1e-10 × 16 MHz, a/√3
    expect(byName.u_res.distribution).toBe('rectangular');
    expect(byName.u_ref.value).toBeCloseTo(1.6e-4, 12); // 1e-11 × 16 MHz
    expect(byName.u_T.value).toBeCloseTo(1e-8 * 16e6 * 0.1, 12); // 0.016 Hz
    const expected = Math.sqrt(0.001 ** 2 + 1.6e-3 ** 2 / 3 + 1.6e-4 ** 2 + 0.016 ** 2);
    expect(b.combined).toBeCloseTo(expected, 12);
    expect(b.k).toBe(2);
    expect(b.expanded).toBeCloseTo(2 * expected, 12);
    expect(b.relativeExpanded).toBeCloseTo((2 * expected) / 16e6, 18);
    expect(b.mean).toBeCloseTo(16_000_010 * (1 + 1e-9), 6); // f·(1 + y_ref)
  });

  it('uses the Allan deviation at the span for flicker FM and says so', () => {
    const b = uncertaintyBudget({
      ...base,
      noise: 'ffm',
      adevAtSpan: 1e-10,
      adevEdf: 3,
      span: 100,
    });
    const a = b.components.find((c) => c.type === 'A')!;
    expect(a.value).toBeCloseTo(1.6e-3, 12);
    expect(a.dof).toBe(3);
    expect(a.note).toMatch(/σ_y/);
  });

  it('takes the larger of SEM and ADEV when the noise is unknown', () => {
    const b = uncertaintyBudget({ ...base, adevAtSpan: 1e-12 });
    expect(b.components[0].value).toBe(0.001);
    expect(b.components[0].note).toMatch(/unknown/);
  });

  it('treats an uncorrected temperature offset as a rectangular bound', () => {
    const b = uncertaintyBudget({
      ...base,
      noise: 'wfm',
      temperature: { coeffPerC: 1e-8, deltaC: 3 },
    });
    const t = b.components.find((c) => c.symbol === 'u_ΔT')!;
    expect(t.value).toBeCloseTo((3 * 1e-8 * 16e6) / Math.sqrt(3), 12);
    expect(t.distribution).toBe('rectangular');
  });

  it('notes a missing reference', () => {
    expect(uncertaintyBudget(base).notes.join(' ')).toMatch(/No reference/);
  });

  it('refuses a single reading', () => {
    expect(() => uncertaintyBudget({ ...base, stats: { n: 1, mean: 1, sd: 0, sem: 0 } })).toThrow(
      expect.objectContaining({ code: 'too-short' }),
    );
  });
});
