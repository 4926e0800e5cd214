import { AnalysisError } from './errors';

/** The stability estimators Driftbench computes (NIST SP 1065 §5.2), in the order it lists them. */
export const STABILITY_KINDS = [
  'adev',
  'oadev',
  'mdev',
  'tdev',
  'hdev',
  'ohdev',
  'totdev',
] as const;
export type StabilityKind = (typeof STABILITY_KINDS)[number];

/** Whether a series holds fractional frequency y or phase x in seconds (IEEE Std 1139-2008). */
export type DataKind = 'frequency' | 'phase';

/**
 * Largest averaging factor m an estimator supports on nPhase phase points, from the sum limits in
 * NIST SP 1065 eqs 6–7, 11, 14, 15, 18, 20, 25 (at least one term). TOTDEV is limited to
 * τ ≤ T/2 (SP 1065 §5.2.11). Returns 0 when no m is supported.
 */
export function maxM(kind: StabilityKind, nPhase: number): number {
  const n = Math.floor(nPhase);
  switch (kind) {
    case 'adev':
    case 'oadev':
      return Math.max(0, Math.floor((n - 1) / 2)); // N − 2m ≥ 1
    case 'mdev':
    case 'tdev':
      return Math.max(0, Math.floor(n / 3)); // N − 3m + 1 ≥ 1
    case 'hdev':
    case 'ohdev':
      return Math.max(0, Math.floor((n - 1) / 3)); // N − 3m ≥ 1
    case 'totdev':
      return n < 3 ? 0 : Math.floor((n - 1) / 2); // N − 2 ≥ 1 terms, τ ≤ T/2
    default:
      throw new AnalysisError('bad-argument', `unknown estimator ${String(kind)}`);
  }
}

/** Number of phase points behind `n` input values: N + 1 for frequency data (SP 1065 §2). */
export function phasePointCount(n: number, data: DataKind = 'frequency'): number {
  return data === 'phase' ? n : n + 1;
}

/** Octave averaging factors m = 1, 2, 4, … supported for n input values (SP 1065 §5.2). */
export function octaveMs(
  n: number,
  kind: StabilityKind = 'oadev',
  data: DataKind = 'frequency',
): number[] {
  const top = maxM(kind, phasePointCount(n, data));
  const ms: number[] = [];
  for (let m = 1; m <= top; m *= 2) ms.push(m);
  return ms;
}

/** Decade averaging factors in 1-2-5 steps (1, 2, 5, 10, 20, …) supported for n input values. */
export function decadeMs(
  n: number,
  kind: StabilityKind = 'oadev',
  data: DataKind = 'frequency',
): number[] {
  const top = maxM(kind, phasePointCount(n, data));
  const ms: number[] = [];
  for (let decade = 1; decade <= top; decade *= 10) {
    for (const step of [1, 2, 5]) if (step * decade <= top) ms.push(step * decade);
  }
  return ms;
}

/** Every averaging factor 1…max supported for n input values ("all τ"); O(N) work per m. */
export function allMs(
  n: number,
  kind: StabilityKind = 'oadev',
  data: DataKind = 'frequency',
): number[] {
  const top = maxM(kind, phasePointCount(n, data));
  const ms: number[] = [];
  for (let m = 1; m <= top; m++) ms.push(m);
  return ms;
}
