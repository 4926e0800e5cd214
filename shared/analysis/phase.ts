import { compensatedSum } from './compensatedSum';
import { assertNumber, assertSeries } from './errors';
import type { DataKind } from './taus';

/**
 * Phase in units of τ0, u = x/τ0, with its linear part removed: the cumulative sum of y − ȳ
 * (u0 = 0; SP 1065 §2) for frequency data, or x/τ0 minus the line through its end points for
 * phase data. Every estimator in SP 1065 eqs 6–25 is a second or third difference of x (TOTDEV's
 * reflections preserve lines), so removing a line changes none of them and keeps the phase small.
 * Writes into `out` (length N + 1 for frequency, N for phase) when given.
 * Domain: ≥ 1 finite frequency value or ≥ 2 finite phase values, τ0 > 0.
 */
export function normalizedPhase(
  values: ArrayLike<number>,
  tau0: number,
  data: DataKind,
  out?: Float64Array,
): Float64Array {
  assertNumber(tau0, 'tau0', true);
  if (data === 'phase') {
    assertSeries(values, 'x', 2);
    const n = values.length;
    const u = out ?? new Float64Array(n);
    const x0 = values[0];
    const slope = (values[n - 1] - x0) / (n - 1);
    for (let i = 0; i < n; i++) u[i] = (values[i] - x0 - slope * i) / tau0;
    return u;
  }
  assertSeries(values, 'y');
  const n = values.length;
  const mean = compensatedSum(values) / n;
  const u = out ?? new Float64Array(n + 1);
  u[0] = 0;
  let acc = 0;
  for (let i = 0; i < n; i++) {
    acc += values[i] - mean;
    u[i + 1] = acc;
  }
  return u;
}
