/**
 * The planner's inputs in one unit: fractional frequency for frequency DUTs (the unit of their
 * stability curves), the DUT's own unit otherwise. Pure, tested in Node.
 */
import { unitFactor } from '../../shared/protocol/parse';
import type { DutRecord } from '../../shared/protocol/models';

/** The DUT fields the planner reads (the contract's DUT; an asymmetric limit's low/high may be left out). */
export type LimitDut = Pick<DutRecord, 'nominal' | 'unit' | 'limit' | 'limitUnit'> &
  Partial<Pick<DutRecord, 'limitLow' | 'limitHigh'>>;

export const isFrequencyUnit = (unit: string) => /hz$/i.test(unit);

/** Value of 1 DUT-unit in curve units: 1/nominal for frequency (Hz → fractional), 1 otherwise. */
export function curveScale(dut: Pick<LimitDut, 'nominal' | 'unit'>): number {
  return isFrequencyUnit(dut.unit) && dut.nominal > 0 ? 1 / dut.nominal : 1;
}

/**
 * The limit half-width in curve units: the symmetric limit, or the nearer side of an asymmetric
 * one (the planner decides against the side a shift would reach first). Null without a limit.
 */
export function limitInCurveUnits(dut: LimitDut): number | null {
  const sides =
    dut.limit !== null && dut.limit !== undefined
      ? [dut.limit]
      : [dut.limitLow, dut.limitHigh]
          .filter((x): x is number => typeof x === 'number')
          .map(Math.abs);
  if (!sides.length) return null;
  const L = Math.min(...sides);
  if (!(L > 0)) return null;
  const frequency = isFrequencyUnit(dut.unit);
  switch (dut.limitUnit) {
    case 'ppm':
      return frequency ? L * 1e-6 : L * 1e-6 * Math.abs(dut.nominal);
    case 'ppb':
      return frequency ? L * 1e-9 : L * 1e-9 * Math.abs(dut.nominal);
    case '%':
      return frequency ? L * 1e-2 : L * 1e-2 * Math.abs(dut.nominal);
    default: {
      // An absolute limit (Hz, mg): into the DUT's unit, then fractional for frequency.
      const from = unitFactor(dut.limitUnit);
      const to = unitFactor(dut.unit);
      const inUnit = from !== null && to !== null && to !== 0 ? (L * from) / to : L;
      return frequency ? (dut.nominal > 0 ? inUnit / dut.nominal : null) : inUnit;
    }
  }
}

/** A length of time as people say it: 45 s, 12 min, 2 h 30 min, 3.5 d. */
export function formatDuration(seconds: number): string {
  if (!Number.isFinite(seconds)) return '—';
  if (seconds < 60) return `${Number(seconds.toPrecision(2))} s`;
  if (seconds < 3600) return `${Math.ceil(seconds / 60)} min`;
  if (seconds < 86_400) {
    const h = Math.floor(seconds / 3600);
    const m = Math.ceil((seconds - h * 3600) / 60);
    return m ? `${h} h ${m} min` : `${h} h`;
  }
  return `${Number((seconds / 86_400).toPrecision(2))} d`;
}
