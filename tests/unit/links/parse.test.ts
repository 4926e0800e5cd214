import { describe, expect, it } from 'vitest';
import {
  fromBaseUnit,
  parseMeasurement,
  type UnitQuantity as Quantity,
} from '../../../shared/protocol/parse';

describe('parseMeasurement', () => {
  // Expected values are the SI prefix definitions (BIPM SI Brochure, 9th ed., Table 7);
  // m/s² to g uses standard gravity 9.80665 m/s² (3rd CGPM 1901).
  it.each<[string, Quantity | undefined, number, string]>([
    ['16.000012 MHz', 'frequency', 16.000012e6, 'Hz'],
    ['+1.6000012E+07', 'frequency', 1.6000012e7, 'Hz'],
    ['32768.0021 Hz', 'frequency', 32768.0021, 'Hz'],
    ['1.2e3 kHz', 'frequency', 1.2e6, 'Hz'],
    ['16.000012MHZ', 'frequency', 16.000012e6, 'Hz'], // capitals as counters print them (common practice, no source)
    ['250 mHz', 'frequency', 0.25, 'Hz'],
    ['-12.5 mg', 'acceleration', -0.0125, 'g'],
    ['0.998 g', 'acceleration', 0.998, 'g'],
    ['9.80665 m/s2', 'acceleration', 1, 'g'],
    ['5 ms', 'time', 0.005, 's'],
    ['10 us', 'time', 1e-5, 's'],
    ['3.3 V', 'voltage', 3.3, 'V'],
    ['-250 µV', 'voltage', -250e-6, 'V'],
    ['.5', 'time', 0.5, 's'],
    ['42', undefined, 42, ''],
  ])('reads "%s" as a %s', (text, quantity, value, unit) => {
    const r = parseMeasurement(text, { quantity });
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(Math.abs(r.value - value)).toBeLessThanOrEqual(Math.abs(value) * 2e-16 + 1e-18);
    expect(r.unit).toBe(unit);
  });

  it.each<[string, Quantity | undefined, string]>([
    ['', undefined, 'empty'],
    ['   ', undefined, 'empty'],
    ['abc', undefined, 'not-a-number'],
    ['+1.6\uFFFD0E+07', 'frequency', 'unknown-unit'],
    ['16 furlongs', 'frequency', 'unknown-unit'],
    ['12.5 mg', 'frequency', 'wrong-quantity'],
    ['+9.9E+37', 'frequency', 'overrange'], // SCPI's overrange value (common practice, no source)
    ['+9.91E+37', 'frequency', 'not-a-number'], // SCPI's not-a-number value
    ['1e999', undefined, 'not-a-number'],
  ])('refuses "%s" (%s) with reason %s', (text, quantity, reason) => {
    const r = parseMeasurement(text, { quantity });
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.reason).toBe(reason);
      expect(r.message.length).toBeGreaterThan(0);
    }
  });

  it('refuses any unit under the bare-number rule', () => {
    const r = parseMeasurement('16 MHz', { allowUnit: false });
    expect(r).toMatchObject({ ok: false, reason: 'unit-not-allowed' });
  });

  it('converts a base-unit value into the profile unit', () => {
    expect(fromBaseUnit(-0.0125, 'mg')).toBeCloseTo(-12.5, 12);
    expect(fromBaseUnit(16e6, 'MHz')).toBeCloseTo(16, 12);
    expect(() => fromBaseUnit(1, 'parsec')).toThrow();
  });
});
