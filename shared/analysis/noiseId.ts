import { AnalysisError } from './errors';
import { NOISE_ALPHA, noiseFromAlpha, type NoiseType } from './noise';
import { normalizedPhase } from './phase';
import type { DataKind } from './taus';

/** Result of the lag-1 autocorrelation noise identification at one averaging factor. */
export interface NoiseEstimate {
  noise: NoiseType;
  /** α rounded to the nearest integer in −2 … 2, S_y(f) ∝ f^α. */
  alpha: number;
  /** The unrounded estimate p + 2θ, clamped to [−2.5, 2.5]. */
  alphaRaw: number;
  /** Number of differences taken before the series looked stationary. */
  d: number;
  /** Lag-1 autocorrelation of the final, differenced series. */
  r1: number;
  /** Length of the averaged (frequency) or decimated (phase) series the estimate rests on. */
  points: number;
}

/** Fewest averaged points the lag-1 method is trusted on (Riley & Greenhall suggest ≳ 30). */
export const LAG1_MIN_POINTS = 30;
const DMAX = 2; // Allan-family variances: differencing beyond 2 adds nothing (Riley & Greenhall)

/**
 * Lag-1 autocorrelation noise identification (W. J. Riley & C. A. Greenhall, "Power law noise
 * identification using the lag 1 autocorrelation", EFTF 2004; NIST SP 1065 §5.6): average the
 * frequency over m (or decimate phase by m), difference d times until δ = r1/(1 + r1) < 0.25 or
 * d = 2, then α = −2(δ + d) + 2θ (θ = 1 for phase, 0 for frequency). Works on phase in units of
 * τ0 from normalizedPhase: the m-averaged frequency is the first difference of the phase decimated
 * by m, so every differenced series is read straight from u without a copy. Returns null when
 * fewer than LAG1_MIN_POINTS points remain or the series does not vary.
 */
export function lag1NoiseOnPhase(u: Float64Array, m: number, data: DataKind): NoiseEstimate | null {
  const count = Math.floor((u.length - 1) / m) + 1; // decimated phase points
  const base = data === 'frequency' ? 1 : 0; // differences already implied by the data kind
  const points = count - base;
  if (points < LAG1_MIN_POINTS) return null;
  const theta = data === 'phase' ? 1 : 0;
  for (let d = 0; ; d++) {
    const r1 = lag1OfDifference(u, m, base + d, count - base - d);
    if (r1 === null) return null;
    const delta = r1 / (1 + r1);
    if (delta < 0.25 || d >= DMAX) {
      let alphaRaw = -2 * (delta + d) + 2 * theta;
      if (!(alphaRaw <= 2.5)) alphaRaw = 2.5; // r1 → −1 sends δ to −∞
      if (alphaRaw < -2.5) alphaRaw = -2.5;
      const noise = noiseFromAlpha(alphaRaw);
      return { noise, alpha: NOISE_ALPHA[noise], alphaRaw, d, r1, points };
    }
  }
}

/** k-th element of the r-th difference (r ≤ 3) of u decimated by m. */
function diffAt(u: Float64Array, m: number, r: number, k: number): number {
  const i = k * m;
  switch (r) {
    case 0:
      return u[i];
    case 1:
      return u[i + m] - u[i];
    case 2:
      return u[i + 2 * m] - 2 * u[i + m] + u[i];
    default:
      return u[i + 3 * m] - 3 * u[i + 2 * m] + 3 * u[i + m] - u[i];
  }
}

/**
 * Lag-1 autocorrelation Σ(z_i − z̄)(z_{i+1} − z̄)/Σ(z_i − z̄)² of the r-th difference of u
 * decimated by m, of length len; null if it does not vary.
 */
function lag1OfDifference(u: Float64Array, m: number, r: number, len: number): number | null {
  let mean = 0;
  for (let k = 0; k < len; k++) mean += diffAt(u, m, r, k);
  mean /= len;
  let prev = diffAt(u, m, r, 0) - mean;
  let num = 0;
  let den = prev * prev;
  for (let k = 1; k < len; k++) {
    const cur = diffAt(u, m, r, k) - mean;
    num += prev * cur;
    den += cur * cur;
    prev = cur;
  }
  if (!(den > 0)) return null;
  return num / den;
}

/**
 * Estimates the dominant power-law noise at averaging factor m by the lag-1 autocorrelation method
 * (Riley & Greenhall, EFTF 2004; NIST SP 1065 §5.6). Domain: finite data with at least 30 m-averaged
 * points that are not all equal; throws AnalysisError otherwise.
 */
export function estimateNoise(
  values: ArrayLike<number>,
  m: number,
  opts: { data?: DataKind } = {},
): NoiseEstimate {
  const data = opts.data ?? 'frequency';
  if (!Number.isInteger(m) || m < 1)
    throw new AnalysisError('bad-argument', 'm must be an integer ≥ 1');
  const u = normalizedPhase(values, 1, data);
  const count = Math.floor((u.length - 1) / m) + (data === 'phase' ? 1 : 0);
  if (count < LAG1_MIN_POINTS) {
    throw new AnalysisError(
      'too-short',
      `noise identification needs ${LAG1_MIN_POINTS} averaged points at m = ${m}, got ${count}`,
    );
  }
  const est = lag1NoiseOnPhase(u, m, data);
  if (!est) throw new AnalysisError('bad-argument', 'the data do not vary: no noise to identify');
  return est;
}

/** Fewest averaged frequency points the B1 ratio is used on (Driftbench's choice). */
export const B1_MIN_POINTS = 8;

/**
 * Barnes' B1 bias function, the expected ratio of the N-sample (classical) variance to the
 * two-sample (Allan) variance for σ²_y ∝ τ^μ (NIST SP 1065 §5.6, after Barnes 1969 / TN 375):
 * B1(N, μ) = N(1 − N^μ)/[2(N − 1)(1 − 2^μ)], and N·ln N/[2(N − 1)·ln 2] at μ = 0.
 */
export function barnesB1(n: number, mu: number): number {
  if (mu === 0) return (n * Math.log(n)) / (2 * (n - 1) * Math.LN2);
  return (n * (1 - n ** mu)) / (2 * (n - 1) * (1 - 2 ** mu));
}

/** The noise read from the B1 ratio at one averaging factor, where lag-1 has too few points. */
export interface B1Estimate {
  /** μ of σ²_y ∝ τ^μ nearest to the observed ratio (−2 … 1). */
  mu: number;
  /** Observed classical/Allan variance ratio. */
  ratio: number;
  /** μ = −2 cannot tell white from flicker PM (that needs the R(n) ratio): the label is 'wpm'. */
  noise: NoiseType;
  points: number;
}

/**
 * B1-ratio noise identification (NIST SP 1065 §5.6): the classical variance of the n averaged
 * frequencies over their Allan variance, compared with B1(n, μ) for μ = −2 … 1; the nearest in
 * log ratio wins (boundaries at geometric means). u is phase in units of τ0 (normalizedPhase).
 * Returns null below B1_MIN_POINTS averaged points or when the data do not vary.
 */
export function b1NoiseOnPhase(u: Float64Array, m: number): B1Estimate | null {
  const n = Math.floor((u.length - 1) / m);
  if (n < B1_MIN_POINTS) return null;
  let mean = 0;
  for (let k = 0; k < n; k++) mean += u[(k + 1) * m] - u[k * m];
  mean /= n;
  let ss = 0;
  let sa = 0;
  let prev = u[m] - u[0];
  ss += (prev - mean) ** 2;
  for (let k = 1; k < n; k++) {
    const cur = u[(k + 1) * m] - u[k * m];
    ss += (cur - mean) ** 2;
    sa += (cur - prev) ** 2;
    prev = cur;
  }
  if (!(sa > 0) || !(ss > 0)) return null;
  const ratio = ss / (n - 1) / (sa / (2 * (n - 1)));
  let best = -2;
  let bestDist = Infinity;
  for (const mu of [-2, -1, 0, 1]) {
    const dist = Math.abs(Math.log(ratio / barnesB1(n, mu)));
    if (dist < bestDist) {
      bestDist = dist;
      best = mu;
    }
  }
  const noise: NoiseType = best === -2 ? 'wpm' : best === -1 ? 'wfm' : best === 0 ? 'ffm' : 'rwfm';
  return { mu: best, ratio, noise, points: n };
}
