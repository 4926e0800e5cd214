/**
 * Neumaier's improved Kahan summation (A. Neumaier, ZAMM 54, 1974): the sum of `values` with the
 * rounding error of each addition carried forward. Domain: finite values (not checked here).
 */
export function compensatedSum(values: ArrayLike<number>, start = 0, end = values.length): number {
  let sum = 0;
  let c = 0;
  for (let i = start; i < end; i++) {
    const v = values[i];
    const t = sum + v;
    if (Math.abs(sum) >= Math.abs(v)) c += sum - t + v;
    else c += v - t + sum;
    sum = t;
  }
  return sum + c;
}

/** Mean by compensated (Neumaier) summation; see compensatedSum. Domain: length ≥ 1. */
export function compensatedMean(values: ArrayLike<number>): number {
  return compensatedSum(values) / values.length;
}
