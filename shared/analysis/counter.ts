import { AnalysisError, assertNumber } from './errors';

/** How the counter measures: ±1 count in the gate, or reciprocal (interpolated time interval). */
export type CounterKind = 'reciprocal' | 'gated';

export interface CounterResolutionInput {
  kind: CounterKind;
  /** Gate time in seconds. */
  gateTime: number;
  /** Time-interval resolution of a reciprocal counter in seconds (default 100 ps). */
  tRes?: number;
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
 * (REFERENCES.md; e.g. Instrumentation Reference Book 3rd ed. §20): gated ±1/t_gate Hz; reciprocal
 * ±tRes/t_gate relative (default tRes 100 ps, common practice, no source). Domain: gateTime > 0,
 * f > 0, tRes > 0.
 */
export function counterResolution(input: CounterResolutionInput): CounterResolution {
  assertNumber(input.gateTime, 'gateTime', true);
  assertNumber(input.f, 'f', true);
  if (input.kind === 'gated') {
    const absoluteHz = 1 / input.gateTime;
    return { absoluteHz, relative: absoluteHz / input.f };
  }
  if (input.kind === 'reciprocal') {
    const tRes = input.tRes ?? 100e-12;
    assertNumber(tRes, 'tRes', true);
    const relative = tRes / input.gateTime;
    return { absoluteHz: relative * input.f, relative };
  }
  throw new AnalysisError('bad-argument', `unknown counter kind ${String(input.kind)}`);
}
