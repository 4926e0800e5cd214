import { describe, expect, it } from 'vitest';
import { quantityLimitsText, tiltCellVerdict, tiltCellView } from '../../../src/utils/tiltCell';
import type { MatrixTiltCell, TiltChange } from '../../../shared/protocol/accelerometer';
import type { QuantityLimitView } from '../../../shared/protocol/dutQuantities';

const MINUS = '\u2212';
const figures = {
  offsetMg: 6.1,
  uOffsetMg: 0.069,
  offsetExpanded: 0.1375,
  sensitivityErrorPct: 0.4,
  uSensitivityPct: 0.0069,
  sensitivityExpanded: 0.01375,
};
function change(
  delta: number,
  unit: 'mg' | '%',
  verdict: TiltChange['verdict'],
  limit = 20,
): TiltChange {
  return {
    delta,
    expandedUncertainty: unit === 'mg' ? 0.19 : 0.019,
    k: 2,
    coverage: 'k = 2.00',
    unit,
    limitLow: verdict ? -limit : null,
    limitHigh: verdict ? limit : null,
    verdict,
    significant: false,
  };
}

describe('a tilt check in its matrix cell', () => {
  it('shows offset and sensitivity error with U at the baseline (figures as the server gave them)', () => {
    const view = tiltCellView({ check: { id: 1, axes: { z: figures } }, change: null });
    expect(view).toHaveLength(1);
    expect(view[0].axis).toBe('Z');
    expect(view[0].offset.text).toBe('+6.10 ± 0.14 mg');
    expect(view[0].sensitivity.text).toBe('+0.400 ± 0.014 %');
    expect(view[0].offset.glyph).toBeNull();
  });

  it("shows each change with its glyph figures and the server's verdict later on", () => {
    const tilt: MatrixTiltCell = {
      check: { id: 2, axes: { z: figures } },
      change: {
        before: 1,
        axes: {
          z: { offset: change(-0.21, 'mg', 'within'), sensitivity: change(0.004, '%', null) },
        },
      },
    };
    const [z] = tiltCellView(tilt);
    expect(z.offset.text).toBe(`Δ ${MINUS}0.21 ± 0.19 mg`);
    expect(z.offset.glyph).toMatchObject({ delta: -0.21, low: -20, high: 20, unit: 'mg' });
    expect(z.offset.verdict).toBe('within');
    expect(z.sensitivity.verdict).toBeNull(); // no limit set: Δ and U only
  });

  it('takes the worst verdict of the cell (exceeds over inconclusive over within)', () => {
    const cell = (a: TiltChange['verdict'], b: TiltChange['verdict']): MatrixTiltCell => ({
      check: { id: 3, axes: { z: figures } },
      change: {
        before: 1,
        axes: { z: { offset: change(1, 'mg', a), sensitivity: change(0, '%', b, 1) } },
      },
    });
    expect(tiltCellVerdict(cell('within', 'exceeds'))).toBe('exceeds');
    expect(tiltCellVerdict(cell('inconclusive', 'within'))).toBe('inconclusive');
    expect(tiltCellVerdict(cell('within', null))).toBe('within');
    expect(tiltCellVerdict(null)).toBeNull();
  });
});

describe("a DUT's limits by quantity", () => {
  const base = { perAxis: true, limit: null, limitLow: null, limitHigh: null };
  it("writes an accelerometer's offset and sensitivity limits", () => {
    const limits: QuantityLimitView[] = [
      {
        ...base,
        key: 'offset',
        label: 'Offset',
        unit: 'mg',
        limit: 20,
        limitLow: -20,
        limitHigh: 20,
      },
      {
        ...base,
        key: 'sensitivity',
        label: 'Sensitivity',
        unit: '%',
        limit: null,
        limitLow: -0.5,
        limitHigh: 1,
      },
    ];
    expect(quantityLimitsText({ limits })).toBe(
      `offset ±20 mg · sensitivity ${MINUS}0.50 … +1.00 %`,
    );
  });

  it("leaves out an optional quantity without a limit and names a stability limit's τ", () => {
    const limits: QuantityLimitView[] = [
      {
        ...base,
        perAxis: false,
        key: 'frequency-offset',
        label: 'Frequency offset',
        unit: 'ppm',
        limit: 1,
        limitLow: -1,
        limitHigh: 1,
      },
      { ...base, perAxis: false, key: 'stability', label: 'Stability σy(τ)', unit: 'ppb' },
    ];
    expect(quantityLimitsText({ limits })).toBe('frequency offset ±1 ppm');
    limits[1] = { ...limits[1], limit: 0.5, limitLow: -0.5, limitHigh: 0.5, tauS: 10 };
    expect(quantityLimitsText({ limits })).toBe(
      'frequency offset ±1 ppm · stability σy(τ) at τ = 10 s ≤ 0.5 ppb',
    );
    expect(quantityLimitsText({})).toBeNull();
  });
});
