import { assertNumber } from './errors';

export interface TuningForkOptions {
  /** Parabolic coefficient in ppm/°C² (default −0.034, typical datasheet value). */
  B?: number;
  /** Turnover temperature in °C (default 25). */
  T0?: number;
}

/**
 * Frequency shift of a tuning-fork (32.768 kHz) crystal in ppm, Δf/f = B·(T − T0)² (makers'
 * datasheets, B ≈ −0.034 ppm/°C², T0 = 25 °C; REFERENCES.md "Crystals and temperature").
 */
export function tuningForkShift(T: number, opts: TuningForkOptions = {}): number {
  const B = opts.B ?? -0.034;
  const T0 = opts.T0 ?? 25;
  assertNumber(T, 'T');
  assertNumber(B, 'B');
  assertNumber(T0, 'T0');
  return B * (T - T0) ** 2;
}

/**
 * A tuning-fork crystal's frequency measured at T brought to its turnover T0:
 * f(T0) = f(T)/(1 + shift·1e-6), shift from tuningForkShift (same source). Domain: finite f, T.
 */
export function normalizeTuningFork(f: number, T: number, opts: TuningForkOptions = {}): number {
  assertNumber(f, 'f');
  return f / (1 + tuningForkShift(T, opts) * 1e-6);
}

/**
 * A warning when ambient temperature changed by more than maxDelta °C between captures (default
 * 1 °C; common practice, no source: AT-cut crystals are warned about, not corrected), else null.
 */
export function temperatureWarning(tBefore: number, tAfter: number, maxDelta = 1): string | null {
  assertNumber(tBefore, 'tBefore');
  assertNumber(tAfter, 'tAfter');
  assertNumber(maxDelta, 'maxDelta');
  const d = tAfter - tBefore;
  if (Math.abs(d) <= maxDelta) return null;
  const sign = d > 0 ? '+' : '−';
  return (
    `Ambient temperature changed by ${sign}${Math.abs(d).toFixed(1)} °C between captures ` +
    `(more than ${maxDelta} °C): part of Δ may be temperature, not the process.`
  );
}
