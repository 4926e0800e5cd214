// Sums behind the variance estimators of NIST SP 1065, on phase u = x/τ0 (see normalizedPhase).
// Each is one pass over u per τ with no allocation; the loops keep two accumulators so the
// additions of neighbouring terms do not wait on each other.

/**
 * Σ (u[i+2m] − 2u[i+m] + u[i])² over i = 0, s, 2s, … with i + 2m < N: the numerator of OADEV
 * (s = 1, SP 1065 eq 11) and ADEV (s = m, eqs 6–7). Returns the sum; terms = ⌊(N−1−2m)/s⌋ + 1.
 */
export function secondDifferenceSum(u: Float64Array, m: number, s: number): number {
  const last = u.length - 1 - 2 * m; // last admissible i
  const m2 = 2 * m;
  let a0 = 0;
  let a1 = 0;
  let i = 0;
  for (; i + s <= last; i += 2 * s) {
    const d0 = u[i + m2] - 2 * u[i + m] + u[i];
    const j = i + s;
    const d1 = u[j + m2] - 2 * u[j + m] + u[j];
    a0 += d0 * d0;
    a1 += d1 * d1;
  }
  if (i <= last) {
    const d0 = u[i + m2] - 2 * u[i + m] + u[i];
    a0 += d0 * d0;
  }
  return a0 + a1;
}

/**
 * Σ (u[i+3m] − 3u[i+2m] + 3u[i+m] − u[i])² over i = 0, s, 2s, … with i + 3m < N: the numerator
 * of OHDEV (s = 1, SP 1065 eq 20) and HDEV (s = m, eq 18). Terms = ⌊(N−1−3m)/s⌋ + 1.
 */
export function thirdDifferenceSum(u: Float64Array, m: number, s: number): number {
  const last = u.length - 1 - 3 * m;
  const m2 = 2 * m;
  const m3 = 3 * m;
  let a0 = 0;
  let a1 = 0;
  let i = 0;
  for (; i + s <= last; i += 2 * s) {
    const d0 = u[i + m3] - 3 * u[i + m2] + 3 * u[i + m] - u[i];
    const j = i + s;
    const d1 = u[j + m3] - 3 * u[j + m2] + 3 * u[j + m] - u[j];
    a0 += d0 * d0;
    a1 += d1 * d1;
  }
  if (i <= last) {
    const d0 = u[i + m3] - 3 * u[i + m2] + 3 * u[i + m] - u[i];
    a0 += d0 * d0;
  }
  return a0 + a1;
}

/**
 * Σ_j [Σ_{i=j}^{j+m−1} (u[i+2m] − 2u[i+m] + u[i])]² for j = 0 … N−3m: the numerator of MDEV
 * (SP 1065 eq 14). The inner sum slides: moving the window by one adds d[j+m] and drops d[j],
 * and d[j+m] − d[j] is the third difference u[j+3m] − 3u[j+2m] + 3u[j+m] − u[j], so each τ costs
 * O(N) with four loads per step. (A running sum of differences rather than a prefix sum of x: a
 * prefix sum of a random-walk phase grows like N^2.5 and would cancel away the digits.)
 */
export function modifiedSum(u: Float64Array, m: number): number {
  const terms = u.length - 3 * m + 1;
  const m2 = 2 * m;
  const m3 = 3 * m;
  let inner = 0;
  for (let i = 0; i < m; i++) inner += u[i + m2] - 2 * u[i + m] + u[i];
  let acc = inner * inner;
  for (let i = 0; i < terms - 1; i++) {
    inner += u[i + m3] - 3 * u[i + m2] + 3 * u[i + m] - u[i];
    acc += inner * inner;
  }
  return acc;
}

/**
 * Phase extended by reflection at both ends for TOTDEV (SP 1065 eq 25): x*(1−j) = 2x(1) − x(1+j),
 * x*(N+j) = 2x(N) − x(N−j), j = 1 … N−2. Original point k (0-based) sits at index N−2+k.
 * Writes into `out` (length 3N − 4) when given. Domain: N ≥ 3.
 */
export function reflectPhase(u: Float64Array, out?: Float64Array): Float64Array {
  const n = u.length;
  const off = n - 2;
  const ext = out ?? new Float64Array(3 * n - 4);
  ext.set(u, off);
  for (let j = 1; j <= n - 2; j++) {
    ext[off - j] = 2 * u[0] - u[j];
    ext[off + n - 1 + j] = 2 * u[n - 1] - u[n - 1 - j];
  }
  return ext;
}

/**
 * Σ_{i=2}^{N−1} (x*[i−m] − 2x*[i] + x*[i+m])² on the reflected phase: the numerator of TOTDEV
 * (SP 1065 eq 25), N − 2 terms. `ext` comes from reflectPhase of N points.
 */
export function totalSum(ext: Float64Array, n: number, m: number): number {
  const off = n - 2;
  let a0 = 0;
  for (let i = off + 1; i <= off + n - 2; i++) {
    const d = ext[i - m] - 2 * ext[i] + ext[i + m];
    a0 += d * d;
  }
  return a0;
}
