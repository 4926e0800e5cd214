import { assertSeries } from './errors';

/**
 * k-th smallest element (0-based) by Hoare's quickselect (C. A. R. Hoare, CACM 4, 1961),
 * rearranging `a` in place; expected O(n). Domain: 0 ≤ k < a.length.
 */
export function selectInPlace(a: Float64Array, k: number): number {
  let lo = 0;
  let hi = a.length - 1;
  while (hi > lo) {
    // median-of-three pivot keeps sorted and reversed inputs O(n)
    const mid = (lo + hi) >>> 1;
    const p = median3(a[lo], a[mid], a[hi]);
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i] < p) i++;
      while (a[j] > p) j--;
      if (i <= j) {
        const t = a[i];
        a[i] = a[j];
        a[j] = t;
        i++;
        j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return a[k];
  }
  return a[k];
}

function median3(a: number, b: number, c: number): number {
  if (a < b) return b < c ? b : a < c ? c : a;
  return a < c ? a : b < c ? c : b;
}

/**
 * Median of a set (the middle order statistic, mean of the two middle ones for even n; common
 * definition, e.g. NIST/SEMATECH e-Handbook §1.3.5.1), on a copy. Domain: at least one finite value.
 */
export function median(values: ArrayLike<number>): number {
  assertSeries(values, 'values');
  return medianInPlace(Float64Array.from(values));
}

/** Median that reorders `a` (see median); used where a copy already exists. */
export function medianInPlace(a: Float64Array): number {
  const n = a.length;
  const k = n >>> 1;
  const upper = selectInPlace(a, k);
  if (n % 2 === 1) return upper;
  // after selection every element below index k is ≤ a[k]: the lower middle is their maximum
  let lower = -Infinity;
  for (let i = 0; i < k; i++) if (a[i] > lower) lower = a[i];
  return (lower + upper) / 2;
}
