import { describe, expect, it, test } from 'vitest';
import {
  captureKind,
  conditionRows,
  gravityFigures,
  idealZ,
  orientationText,
  sectionsFor,
} from '../../../src/utils/captureKind';
import { formatSi } from '../../../src/utils/si';
import type { CaptureDetail } from '../../../src/api/captures';

const MINUS = '\u2212';

/** A capture as the page receives it, with only what the conditions read. */
function capture(over: Partial<CaptureDetail>): CaptureDetail {
  return {
    id: 1,
    dutId: 1,
    checkpointId: 1,
    instrumentId: null,
    referenceId: null,
    operatorId: null,
    quantity: 'frequency',
    unit: 'Hz',
    nominal: 16e6,
    gateTime: 1,
    deadTime: null,
    ambientC: 23,
    orientation: null,
    notes: null,
    tags: [],
    referenceOffset: null,
    referenceUncertainty: null,
    linkProfile: null,
    state: 'finished',
    startedAt: '2026-12-01T10:00:00Z',
    endedAt: '2026-12-01T10:10:00Z',
    readingCount: 600,
    highestSeq: 599,
    summary: null,
    referenceVerifiedAt: null,
    referenceAgeingPerDay: null,
    referenceAgeingUPerDay: null,
    counterType: null,
    counterResolution: null,
    plannedMinutes: null,
    simulated: false,
    target: null,
    sealSha256: null,
    sealedAt: null,
    sealBroken: false,
    study: null,
    dut: null,
    checkpoint: null,
    operator: null,
    instrument: null,
    reference: null,
    ...over,
  };
}

describe('the capture page by quantity', () => {
  it('gives a frequency capture stability and an acceleration capture its gravity section instead', () => {
    expect(captureKind({ quantity: 'frequency' })).toBe('frequency');
    expect(captureKind({ quantity: 'acceleration' })).toBe('acceleration');
    expect(captureKind({ quantity: 'voltage' })).toBe('plain');
    expect(sectionsFor('frequency')).toContain('stability');
    expect(sectionsFor('acceleration')).not.toContain('stability');
    expect(sectionsFor('acceleration')).toEqual(expect.arrayContaining(['gravity', 'budget']));
  });

  it("lists an acceleration capture's conditions without counter, reference or gate wording", () => {
    const rows = conditionRows(
      capture({
        quantity: 'acceleration',
        unit: 'mg',
        nominal: null,
        gateTime: 0.1,
        orientation: 'flat',
      }),
    );
    const text = JSON.stringify(rows);
    expect(text).not.toMatch(/gate|counter|timebase|reference|dead time/i);
    expect(rows.map((r) => r.term)).toEqual(
      expect.arrayContaining(['Sample interval', 'Sensor resolution', 'Orientation']),
    );
    expect(rows.find((r) => r.term === 'Sample interval')?.value).toBe('100 ms');
    expect(rows.find((r) => r.term === 'Orientation')?.value).toBe('flat (Z up)');
  });

  it("keeps a frequency capture's counter and reference rows", () => {
    const rows = conditionRows(capture({}));
    expect(rows.map((r) => r.term)).toEqual(
      expect.arrayContaining(['Gate time', 'Dead time', 'Reference', 'Counter']),
    );
    expect(rows.find((r) => r.term === 'Reference')?.value).toBe(
      'none (counter timebase taken as exact)',
    );
  });
});

describe('an acceleration mean against gravity (1 g = 1000 mg at g_n; common practice, no source)', () => {
  test.each([
    ['flat', 1, 1010.1, `+10.100 mg`],
    ['inverted', -1, -997.9, `+2.100 mg`],
    ['on-edge', 0, 6.1, `+6.100 mg`],
    ['x-up', 0, -3, `${MINUS}3.000 mg`],
  ])('%s: ideal %i g, the mean %f mg lies %s from it', (o, z, mean, fromIdeal) => {
    expect(idealZ(o)).toBe(z);
    expect(gravityFigures(mean, o)?.fromIdeal).toBe(fromIdeal);
  });

  it('gives the tilt a level axis implies: asin(17.452 mg / 1000 mg) = 1.000° (sin 1° = 0.0174524, by hand)', () => {
    expect(gravityFigures(17.4524, 'on-edge')?.tilt).toBe('+1.000°');
    expect(gravityFigures(1000, 'flat')?.tilt).toBeNull();
  });

  it('has nothing to hold the mean against when the pose is unknown', () => {
    expect(gravityFigures(5, null)).toBeNull();
    expect(gravityFigures(5, 'other')).toBeNull();
    expect(orientationText(null)).toBe('not recorded');
  });
});

describe('units that carry their own scale', () => {
  test.each([
    [0.0853, 'mg', '0.0853 mg'], // the bug printed "85.3 mmg"
    [1.2, 'mg', '1.2 mg'],
    [0.25, '%', '0.25 %'],
    [0.004, 's', '4 ms'], // SI units still take prefixes
  ])('formatSi(%f, %s) → %s', (value, unit, expected) => {
    expect(formatSi(value, unit)).toBe(expected);
  });

  it('never writes a doubled prefix', () => {
    for (const v of [1e-6, 1e-3, 0.5, 5, 5000])
      expect(formatSi(v, 'mg')).not.toMatch(/[mµnpkMG]mg/);
  });
});
