import { AnalysisError, assertNumber } from './errors';

/** Outcomes of a guard-banded conformity decision (the API's Verdict enum is this list). */
export const VERDICTS = ['within', 'exceeds', 'inconclusive'] as const;
export type Verdict = (typeof VERDICTS)[number];

/**
 * Guard-banded decision with guard band w = U (ILAC-G8:09/2019; Driftbench's rule in
 * docs/references.md): within when |Δ| + U ≤ L, exceeds when |Δ| − U > L, otherwise inconclusive.
 * Domain: finite Δ, U ≥ 0, L > 0.
 */
export function guardBandVerdict(delta: number, expanded: number, limit: number): Verdict {
  assertNumber(delta, 'delta');
  assertNumber(expanded, 'expanded uncertainty');
  assertNumber(limit, 'limit', true);
  if (expanded < 0) throw new AnalysisError('bad-argument', 'expanded uncertainty is negative');
  const a = Math.abs(delta);
  if (a + expanded <= limit) return 'within';
  if (a - expanded > limit) return 'exceeds';
  return 'inconclusive';
}

/** Allowed change: lower and upper bounds in the quantity's unit; null for an open side. */
export interface LimitInterval {
  low: number | null;
  high: number | null;
}

/**
 * Guard-banded decision against a possibly asymmetric or one-sided limit, the guard band w = U
 * applied to each side (ILAC-G8:09/2019 §4.2.2, docs/references.md "Decision rule"): within when
 * Δ + U ≤ L_hi and Δ − U ≥ L_lo; exceeds when Δ − U > L_hi or Δ + U < L_lo; otherwise
 * inconclusive. An open side (null) never binds. For L_lo = −L, L_hi = +L this is
 * guardBandVerdict. Domain: finite Δ, U ≥ 0, at least one bound, L_lo < L_hi when both are given.
 */
export function guardBandVerdictInterval(
  delta: number,
  expanded: number,
  limits: LimitInterval,
): Verdict {
  assertNumber(delta, 'delta');
  assertNumber(expanded, 'expanded uncertainty');
  if (expanded < 0) throw new AnalysisError('bad-argument', 'expanded uncertainty is negative');
  const { low, high } = limits;
  if (low === null && high === null)
    throw new AnalysisError('bad-argument', 'a limit needs at least one bound');
  if (low !== null) assertNumber(low, 'limit low');
  if (high !== null) assertNumber(high, 'limit high');
  if (low !== null && high !== null && !(low < high))
    throw new AnalysisError('bad-argument', 'the lower limit must lie below the upper limit');
  if ((high !== null && delta - expanded > high) || (low !== null && delta + expanded < low))
    return 'exceeds';
  if ((high === null || delta + expanded <= high) && (low === null || delta - expanded >= low))
    return 'within';
  return 'inconclusive';
}
