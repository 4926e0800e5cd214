import { describe, expect, it } from 'vitest';
import {
  AMBIENT_MISMATCH_C,
  conditionMismatches,
  type CaptureConditions,
} from '../../../shared/analysis/conditions';

// Mismatched recording conditions between a baseline and a later capture. The rules are
// Driftbench's own (no source): any difference of reference, gate, instrument or orientation is
// flagged, and ambient temperatures more than 2 °C apart.
const base: CaptureConditions = {
  referenceId: 1,
  referenceName: 'GPS 10 MHz reference',
  gateTime: 1,
  instrumentId: 2,
  instrumentName: 'Counter C-1',
  orientation: 'flat',
  ambientC: 23.1,
  simulated: false,
};

describe('mismatched capture conditions', () => {
  it('finds nothing when the two captures were recorded alike', () => {
    expect(conditionMismatches(base, { ...base, ambientC: 24.9 })).toEqual([]);
  });

  it('flags a referenced baseline compared with an unreferenced later capture, naming both sides', () => {
    const [m, ...rest] = conditionMismatches(base, {
      ...base,
      referenceId: null,
      referenceName: null,
    });
    expect(rest).toEqual([]);
    expect(m.key).toBe('reference');
    expect(m.message).toContain('GPS 10 MHz reference');
    expect(m.message).toContain('no reference');
  });

  it.each([
    ['gate', { gateTime: 10 }],
    ['instrument', { instrumentId: 3, instrumentName: 'Counter C-2' }],
    ['orientation', { orientation: 'on-edge' }],
    ['ambient', { ambientC: 23.1 + AMBIENT_MISMATCH_C + 0.1 }],
    ['ambient', { ambientC: null }],
    ['simulated', { simulated: true }],
  ] as const)('flags a different %s', (key, change) => {
    expect(conditionMismatches(base, { ...base, ...change }).map((m) => m.key)).toEqual([key]);
  });

  it('keeps a fixed order when several conditions differ', () => {
    const after = {
      ...base,
      referenceId: 9,
      gateTime: 0.1,
      instrumentId: null,
      orientation: null,
      ambientC: 30,
    };
    expect(conditionMismatches(base, after).map((m) => m.key)).toEqual([
      'reference',
      'gate',
      'instrument',
      'orientation',
      'ambient',
    ]);
  });

  it('treats gate times equal to binary round-off as the same', () => {
    expect(conditionMismatches(base, { ...base, gateTime: 0.1 + 0.2 - 0.2 + 0.9 })).toEqual([]);
  });
});
