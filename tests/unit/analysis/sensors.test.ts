import { describe, expect, it, test } from 'vitest';
import {
  decodeAxis,
  G_N,
  normalizeTuningFork,
  offsetSensitivityFromFlipPair,
  sixPosition,
  temperatureWarning,
  tiltFromAxis,
  tuningForkShift,
  wgs84Gravity,
} from '../../../shared/analysis';

describe('WGS84 normal gravity (Somigliana, NIMA TR8350.2 3rd ed.)', () => {
  test.each([
    [0, 9.7803253359, 10], // γe, TR8350.2 3rd ed.
    [45, 9.80619777, 8], // published test value (the formula gives 9.8061977694, computed)
    [45, 9.8061977694, 10], // computed from the formula
    [90, 9.8321849378, 9], // γp, TR8350.2 3rd ed. (formula 9.83218493786: agree to 1e-9)
    [-45, 9.8061977694, 10], // symmetric in latitude
  ])('at %f° is %f m/s²', (lat, expected, digits) => {
    expect(wgs84Gravity(lat)).toBeCloseTo(expected, digits);
  });

  it('applies the free-air gradient −3.086e-6 m/s² per metre (common approximation)', () => {
    expect(wgs84Gravity(45, 100)).toBeCloseTo(9.8061977694 - 3.086e-4, 10);
  });

  it('defines g_n = 9.80665 m/s² exactly (3rd CGPM, 1901)', () => {
    expect(G_N).toBe(9.80665);
  });

  it('refuses a latitude beyond the poles', () => {
    expect(() => wgs84Gravity(91)).toThrow(expect.objectContaining({ code: 'bad-argument' }));
  });
});

describe('tuning-fork crystals (Δf/f = B(T − T0)², makers’ datasheets)', () => {
  test.each([
    [-40, -143.65], // −0.034 × 65², computed (docs/references.md)
    [85, -122.4], // −0.034 × 60², computed (docs/references.md)
    [25, 0],
  ])('shifts by %f ppm at %f °C', (T, ppm) => {
    expect(tuningForkShift(T)).toBeCloseTo(ppm, 10);
  });

  it('accepts another parabolic coefficient and turnover', () => {
    expect(tuningForkShift(30, { B: -0.04, T0: 20 })).toBeCloseTo(-4, 12);
  });

  it('normalises a reading back to the turnover temperature', () => {
    const f25 = 32768;
    const fCold = f25 * (1 + tuningForkShift(-40) * 1e-6);
    expect(normalizeTuningFork(fCold, -40)).toBeCloseTo(f25, 9);
  });

  it('warns only when the ambient moved more than the threshold (common practice, no source)', () => {
    expect(temperatureWarning(23, 23.8)).toBeNull();
    expect(temperatureWarning(23, 24.5)).toMatch(/\+1\.5 °C/);
    expect(temperatureWarning(23, 22.5, 0.25)).toMatch(/−0\.5 °C/);
  });
});

describe('accelerometer axes', () => {
  test.each([
    // raw, format, mg — two's complement layouts (makers' datasheets, computed)
    [0x4000, { bits: 16, leftJustified: true, mgPerDigit: 0.061 }, 16384 * 0.061],
    [0xc000, { bits: 16, leftJustified: false, mgPerDigit: 0.061 }, -16384 * 0.061],
    [[0xff, 0xc0], { bits: 10, leftJustified: true, mgPerDigit: 4 }, -4], // 0xffc0 >> 6 = −1
    [[0x01, 0xff], { bits: 10, leftJustified: false, mgPerDigit: 4 }, 511 * 4],
    [[0x02, 0x00], { bits: 10, leftJustified: false, mgPerDigit: 4 }, -512 * 4],
    [0x7ff0, { bits: 12, leftJustified: true, mgPerDigit: 1 }, 2047],
    [0x0800, { bits: 12, leftJustified: false, mgPerDigit: 1 }, -2048],
  ] as const)('decodes %j to mg', (raw, format, mg) => {
    expect(decodeAxis(raw, format)).toBeCloseTo(mg, 9);
  });

  it('refuses out-of-range words and bytes', () => {
    const f = { bits: 12, leftJustified: true, mgPerDigit: 1 } as const;
    expect(() => decodeAxis(0x10000, f)).toThrow(expect.objectContaining({ code: 'bad-argument' }));
    expect(() => decodeAxis([256, 0], f)).toThrow(
      expect.objectContaining({ code: 'bad-argument' }),
    );
  });

  test.each([
    [1, 90],
    [0.5, 30],
    [0, 0],
    [-1.02, -90], // clamped
  ])('tilts %f g to %f°', (aG, deg) => {
    expect(tiltFromAxis(aG)).toBeCloseTo(deg, 9);
  });

  it('finds offset and sensitivity from a flip pair', () => {
    const r = offsetSensitivityFromFlipPair(1015, -985);
    expect(r.offsetMg).toBe(15);
    expect(r.sensitivity).toBeCloseTo(1, 12);
    const s = offsetSensitivityFromFlipPair(1010, -1010);
    expect(s.sensitivityErrorPct).toBeCloseTo(1, 9);
  });

  it('references sensitivity to local gravity when given', () => {
    const g = wgs84Gravity(0);
    const ideal = (1000 * g) / G_N;
    expect(offsetSensitivityFromFlipPair(ideal, -ideal, g).sensitivity).toBeCloseTo(1, 12);
  });

  it('calibrates all three axes from six positions', () => {
    const offset = { x: 12, y: -8, z: 30 };
    const gain = { x: 1.01, y: 0.99, z: 1 };
    const reading = (up: 'x' | 'y' | 'z', sign: 1 | -1) => ({
      x: offset.x + (up === 'x' ? sign * 1000 * gain.x : 0),
      y: offset.y + (up === 'y' ? sign * 1000 * gain.y : 0),
      z: offset.z + (up === 'z' ? sign * 1000 * gain.z : 0),
    });
    const r = sixPosition({
      '+x': reading('x', 1),
      '-x': reading('x', -1),
      '+y': reading('y', 1),
      '-y': reading('y', -1),
      '+z': reading('z', 1),
      '-z': reading('z', -1),
    });
    for (const axis of ['x', 'y', 'z'] as const) {
      expect(r[axis].offsetMg).toBeCloseTo(offset[axis], 9);
      expect(r[axis].offsetHorizontalMg).toBeCloseTo(offset[axis], 9);
      expect(r[axis].sensitivity).toBeCloseTo(gain[axis], 12);
    }
  });
});
