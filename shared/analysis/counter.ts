import { AnalysisError, assertNumber } from './errors';

/**
 * How the counter measures: ±1 count in the gate (gated), an interpolated period over the gate
 * (reciprocal), or phase against the reference read at both ends of τ (time-interval).
 */
export const COUNTER_KINDS = ['gated', 'reciprocal', 'time-interval'] as const;
export type CounterKind = (typeof COUNTER_KINDS)[number];

export interface CounterResolutionInput {
  kind: CounterKind;
  /** Gate time in seconds. */
  gateTime: number;
  /** Time-interval resolution of a reciprocal or time-interval counter in seconds (default 100 ps). */
  tRes?: number;
  /** Counts of a gated counter's last digit (default ±1 count). */
  counts?: number;
  /** Measured frequency, in Hz unless `unit` says otherwise. */
  f: number;
  /** Unit of f (Hz, kHz, MHz, GHz; default Hz): a gated count is in Hz and is converted to it. */
  unit?: string;
}

const HZ_PER_UNIT: Record<string, number> = { Hz: 1, kHz: 1e3, MHz: 1e6, GHz: 1e9 };

/** Hz in one unit of a frequency unit (Hz, kHz, MHz, GHz), or null for another unit. */
export function hzPerUnit(unit: string | undefined): number | null {
  return HZ_PER_UNIT[unit ?? 'Hz'] ?? null;
}

/** ± half-width of one reading's quantisation. */
export interface CounterResolution {
  /** In Hz. */
  absoluteHz: number;
  /** In the unit of f (equal to absoluteHz when f is in Hz). */
  absolute: number;
  relative: number;
}

/**
 * Single-reading resolution (± half-width) of a frequency counter, general counter theory
 * (docs/references.md, "Counter resolution"): gated ±counts/t_gate Hz (±1 count by default),
 * converted to f's unit when f is in kHz, MHz or GHz;
 * reciprocal ±tRes/t_gate relative; a time-interval counter reads phase to ±tRes at each end of
 * τ = t_gate, so the same ±tRes/t_gate relative bounds one reading (default tRes 100 ps, common
 * practice, no source). Domain: gateTime > 0, f > 0, tRes > 0, counts > 0.
 */
export function counterResolution(input: CounterResolutionInput): CounterResolution {
  assertNumber(input.gateTime, 'gateTime', true);
  assertNumber(input.f, 'f', true);
  const perUnit = hzPerUnit(input.unit);
  if (perUnit === null)
    throw new AnalysisError(
      'bad-argument',
      `a counter reads Hz, kHz, MHz or GHz, not ${String(input.unit)}`,
    );
  if (input.kind === 'gated') {
    const counts = input.counts ?? 1;
    assertNumber(counts, 'counts', true);
    // ±counts in the gate is a frequency in Hz whatever unit f is stated in (review8 F11).
    const absoluteHz = counts / input.gateTime;
    return {
      absoluteHz,
      absolute: absoluteHz / perUnit,
      relative: absoluteHz / (input.f * perUnit),
    };
  }
  if (input.kind === 'reciprocal' || input.kind === 'time-interval') {
    const tRes = input.tRes ?? 100e-12;
    assertNumber(tRes, 'tRes', true);
    const relative = tRes / input.gateTime;
    return { absoluteHz: relative * input.f * perUnit, absolute: relative * input.f, relative };
  }
  throw new AnalysisError('bad-argument', `unknown counter kind ${String(input.kind)}`);
}
