/**
 * Parsing of numeric instrument replies with units and SI prefixes.
 *
 * Accepts what bench instruments print: `+1.6000012E+07`, `16.000012 MHz`, `32768.0021 Hz`,
 * `-12.5 mg`, `1.2e3 kHz`, `5 ms`, `9.81 m/s2`. Values come back in the quantity's base unit
 * (Hz, g, V, s; counts are unitless), so `1.2e3 kHz` → 1.2e6 Hz and `-12.5 mg` → −0.0125 g.
 */

import type { Quantity as CaptureQuantity } from './captures.js';
import { G_N } from '../analysis/gravity.js';

/**
 * What a parsed unit measures: a capture's quantity (captures.ts, the one list) or a time, which a
 * link may report but no capture records.
 */
export type UnitQuantity = CaptureQuantity | 'time';

/** The base unit each quantity's values are returned in. */
export const BASE_UNIT: Record<UnitQuantity, string> = {
  frequency: 'Hz',
  acceleration: 'g',
  voltage: 'V',
  time: 's',
  counts: '',
};

export type ParseFailureReason =
  'empty' | 'not-a-number' | 'unknown-unit' | 'wrong-quantity' | 'overrange' | 'unit-not-allowed';

export type ParseResult =
  | { ok: true; value: number; unit: string; quantity: UnitQuantity | null }
  | { ok: false; reason: ParseFailureReason; message: string };

export interface ParseOptions {
  /** Only units of this quantity are accepted; a bare number is taken in its base unit. */
  quantity?: UnitQuantity;
  /** `false` rejects any unit text (the `number` parse rule). Default true. */
  allowUnit?: boolean;
}

const SI_PREFIX: Record<string, number> = {
  p: 1e-12,
  n: 1e-9,
  u: 1e-6,
  µ: 1e-6, // U+00B5 micro sign
  μ: 1e-6, // U+03BC Greek mu
  m: 1e-3,
  '': 1,
  k: 1e3,
  M: 1e6,
  G: 1e9,
};

/** Base symbols: the quantity and the factor to that quantity's base unit. */
const UNIT_SYMBOL: Record<string, { quantity: UnitQuantity; factor: number }> = {
  Hz: { quantity: 'frequency', factor: 1 },
  g: { quantity: 'acceleration', factor: 1 },
  V: { quantity: 'voltage', factor: 1 },
  s: { quantity: 'time', factor: 1 },
};

/** Standard gravity, exact (3rd CGPM 1901; ISO 80000-3): converts m/s² to g. */
/** g_n, defined once in shared/analysis/gravity.ts. */
export const STANDARD_GRAVITY = G_N;

const SPECIAL_UNITS: Record<string, { quantity: UnitQuantity; factor: number }> = {
  'm/s2': { quantity: 'acceleration', factor: 1 / STANDARD_GRAVITY },
  'm/s^2': { quantity: 'acceleration', factor: 1 / STANDARD_GRAVITY },
  'm/s²': { quantity: 'acceleration', factor: 1 / STANDARD_GRAVITY },
  cts: { quantity: 'counts', factor: 1 },
  counts: { quantity: 'counts', factor: 1 },
};

/**
 * Resolves a unit symbol to its quantity and the factor to the base unit.
 * Case-sensitive first (mHz is milli-hertz); then, for all-capital symbols that instruments
 * print (`MHZ`, `KHZ`), a case-insensitive match with `M` read as mega — common practice, no
 * source: counters never print milli-hertz in capitals.
 */
export function resolveUnit(unit: string): { quantity: UnitQuantity; factor: number } | null {
  if (unit in SPECIAL_UNITS) return SPECIAL_UNITS[unit];
  for (const [sym, base] of Object.entries(UNIT_SYMBOL)) {
    if (unit.endsWith(sym)) {
      const prefix = unit.slice(0, unit.length - sym.length);
      if (prefix in SI_PREFIX)
        return { quantity: base.quantity, factor: base.factor * SI_PREFIX[prefix] };
    }
  }
  const upper = unit.toUpperCase();
  if (upper === unit && upper.endsWith('HZ')) {
    const p = upper.slice(0, -2);
    const prefix = p === 'K' ? 'k' : p === 'U' ? 'u' : p === 'N' ? 'n' : p === 'P' ? 'p' : p;
    if (prefix in SI_PREFIX) return { quantity: 'frequency', factor: SI_PREFIX[prefix] };
  }
  return null;
}

/** Factor from `unit` to its quantity's base unit (e.g. `mg` → 1e-3), or null if unknown. */
export function unitFactor(unit: string): number | null {
  if (unit === '') return 1;
  return resolveUnit(unit)?.factor ?? null;
}

const NUMBER_RE = /^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*)$/;

/** SCPI's conventions: 9.9E+37 means overrange, 9.91E+37 means "not a number". */
const SCPI_OVERRANGE = 9.9e37;

/**
 * Parses one reply such as `16.000012 MHz` into a value in the base unit.
 * Never throws; failures carry a reason and a human-readable message.
 */
export function parseMeasurement(text: string, options: ParseOptions = {}): ParseResult {
  const trimmed = text.trim();
  if (trimmed === '') return { ok: false, reason: 'empty', message: 'empty reply' };
  const m = NUMBER_RE.exec(trimmed);
  if (!m) return { ok: false, reason: 'not-a-number', message: `not a number: "${clip(trimmed)}"` };
  const num = Number(m[1]);
  const unitText = m[2].trim();
  if (!Number.isFinite(num))
    return { ok: false, reason: 'not-a-number', message: 'number out of range' };
  if (Math.abs(num) >= SCPI_OVERRANGE) {
    return Math.abs(num) >= 9.91e37 - 1e33
      ? { ok: false, reason: 'not-a-number', message: 'instrument reported not-a-number' }
      : { ok: false, reason: 'overrange', message: 'instrument reported overrange' };
  }
  const quantity = options.quantity ?? null;
  if (unitText === '') {
    return { ok: true, value: num, unit: quantity ? BASE_UNIT[quantity] : '', quantity };
  }
  if (options.allowUnit === false) {
    return {
      ok: false,
      reason: 'unit-not-allowed',
      message: `unexpected text after number: "${clip(unitText)}"`,
    };
  }
  const unit = resolveUnit(unitText);
  if (!unit)
    return { ok: false, reason: 'unknown-unit', message: `unknown unit "${clip(unitText)}"` };
  if (quantity && unit.quantity !== quantity) {
    return {
      ok: false,
      reason: 'wrong-quantity',
      message: `unit "${unitText}" is ${unit.quantity}, expected ${quantity}`,
    };
  }
  return {
    ok: true,
    value: num * unit.factor,
    unit: BASE_UNIT[unit.quantity],
    quantity: unit.quantity,
  };
}

/** Converts a base-unit value into `unit` of the same quantity (e.g. 0.0125 g → 12.5 mg). */
export function fromBaseUnit(value: number, unit: string): number {
  const f = unitFactor(unit);
  if (f === null) throw new RangeError(`unknown unit "${unit}"`);
  return value / f;
}

function clip(s: string): string {
  return s.length > 40 ? `${s.slice(0, 40)}…` : s;
}
