import { AnalysisError, assertNumber } from './errors';

/** Outcome of a guard-banded conformity decision. */
export type Verdict = 'within' | 'exceeds' | 'inconclusive';

/**
 * Guard-banded decision with guard band w = U (ILAC-G8:09/2019; Driftbench's rule in
 * REFERENCES.md): within when |Δ| + U ≤ L, exceeds when |Δ| − U > L, otherwise inconclusive.
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
