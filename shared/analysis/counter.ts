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
  /** Measured frequency in Hz. */
  f: number;
}

/** ± half-width of one reading's quantisation. */
export interface CounterResolution {
  absoluteHz: number;
  relative: number;
}

/**
 * Single-reading resolution (± half-width) of a frequency counter, general counter theory
 * (docs/references.md, "Counter resolution"): gated ±counts/t_gate Hz (±1 count by default);
 * reciprocal ±tRes/t_gate relative; a time-interval counter reads phase to ±tRes at each end of
 * τ = t_gate, so the same ±tRes/t_gate relative bounds one reading (default tRes 100 ps, common
 * practice, no source). Domain: gateTime > 0, f > 0, tRes > 0, counts > 0.
 */
export function counterResolution(input: CounterResolutionInput): CounterResolution {
  assertNumber(input.gateTime, 'gateTime', true);
  assertNumber(input.f, 'f', true);
  if (input.kind === 'gated') {
    const counts = input.counts ?? 1;
    assertNumber(counts, 'counts', true);
    const absoluteHz = counts / input.gateTime;
    return { absoluteHz, relative: absoluteHz / input.f };
  }
  if (input.kind === 'reciprocal' || input.kind === 'time-interval') {
    const tRes = input.tRes ?? 100e-12;
    assertNumber(tRes, 'tRes', true);
    const relative = tRes / input.gateTime;
    return { absoluteHz: relative * input.f, relative };
  }
  throw new AnalysisError('bad-argument', `unknown counter kind ${String(input.kind)}`);
}
