import { compensatedSum } from './compensatedSum';
import { AnalysisError, assertSameLength, assertSeries } from './errors';

/** A straight-line least-squares fit y = intercept + slope·t. */
export interface DriftFit {
  /** Slope in units of y per second (t in seconds). */
  slopePerSecond: number;
  /** Slope × 86 400. */
  slopePerDay: number;
  /** Standard error of the slope, per day. */
  stderrPerDay: number;
  /** Fitted y at t = 0 (extrapolated; prefer yRef at tRef for epoch timestamps). */
  intercept: number;
  /** Mean of t: the fit's pivot, where it is best determined. */
  tRef: number;
  /** Fitted y at tRef (the mean of y). */
  yRef: number;
  /** √(Σ residual²/(n − 2)). */
  residualSd: number;
  n: number;
}

const SECONDS_PER_DAY = 86_400;

/**
 * Ordinary least-squares line through (t, y), centred on t̄ for accuracy with epoch timestamps;
 * slope standard error s/√Σ(t − t̄)² (NIST/SEMATECH e-Handbook of Statistical Methods §4.1.4.1;
 * NIST SP 1065 §6 for drift). Domain: ≥ 3 finite pairs of equal length, t not all equal.
 */
export function driftFit(t: ArrayLike<number>, y: ArrayLike<number>): DriftFit {
  assertSameLength(t, y, 't and y');
  assertSeries(t, 't', 3);
  assertSeries(y, 'y', 3);
  const n = t.length;
  const tRef = compensatedSum(t) / n;
  const yMean = compensatedSum(y) / n;
  let stt = 0;
  let sty = 0;
  for (let i = 0; i < n; i++) {
    const dt = t[i] - tRef;
    stt += dt * dt;
    sty += dt * (y[i] - yMean);
  }
  if (!(stt > 0)) {
    throw new AnalysisError('bad-argument', 'all timestamps are equal: no drift can be fitted');
  }
  const slope = sty / stt;
  let ssr = 0;
  for (let i = 0; i < n; i++) {
    const r = y[i] - yMean - slope * (t[i] - tRef);
    ssr += r * r;
  }
  const residualSd = Math.sqrt(ssr / (n - 2));
  return {
    slopePerSecond: slope,
    slopePerDay: slope * SECONDS_PER_DAY,
    stderrPerDay: (residualSd / Math.sqrt(stt)) * SECONDS_PER_DAY,
    intercept: yMean - slope * tRef,
    tRef,
    yRef: yMean,
    residualSd,
    n,
  };
}

/**
 * y with the fitted slope removed about the pivot, y − slope·(t − tRef): the level (mean) is kept,
 * only the drift goes (SP 1065 §6, drift removal). Domain: as driftFit, same length as the fit's t.
 */
export function removeDrift(
  t: ArrayLike<number>,
  y: ArrayLike<number>,
  fit: DriftFit,
): Float64Array {
  assertSeries(t, 't');
  assertSeries(y, 'y');
  assertSameLength(t, y, 't and y');
  const out = new Float64Array(y.length);
  for (let i = 0; i < y.length; i++) out[i] = y[i] - fit.slopePerSecond * (t[i] - fit.tRef);
  return out;
}

/** Drift removed before stability and noise identification. */
export const DRIFT_MODELS = ['none', 'linear', 'quadratic'] as const;
export type DriftModel = (typeof DRIFT_MODELS)[number];

/** A polynomial drift fit and the series with its trend removed. */
export interface DriftRemoval {
  model: DriftModel;
  /** Drift rate at the pivot tRef (d y/dt), per second; 0 for 'none'. */
  ratePerSecond: number;
  /** ratePerSecond × 86 400. */
  ratePerDay: number;
  /** Standard error of ratePerDay (OLS, white residuals assumed); 0 for 'none'. */
  rateStderrPerDay: number;
  /** Quadratic: change of the rate per day (d²y/dt² × 86 400²); 0 otherwise. */
  curvaturePerDay2: number;
  /** Mean of t, where the fit is pivoted. */
  tRef: number;
  /** √(Σ residual²/(n − p)), p the number of fitted coefficients. */
  residualSd: number;
  /**
   * Population standard deviation of the fitted trend over the readings' times: how much "the
   * mean" depends on when the capture stops. For a straight line over a span T it is
   * |rate|·T/√12, the standard deviation of a rectangular spread (JCGM 100 §4.3.7).
   */
  trendSd: number;
  /** y − (trend − its mean): the trend is removed, the mean is kept. */
  detrended: Float64Array;
  n: number;
}

/**
 * Fits and removes a drift (NIST SP 1065 §6: remove the deterministic drift before estimating
 * stability, or σ at long τ measures the drift, not the noise): 'none' returns y unchanged,
 * 'linear' an ordinary least-squares line, 'quadratic' a least-squares parabola (NIST/SEMATECH
 * e-Handbook §4.1.4.1, polynomial least squares; the standard errors from σ²(XᵀX)⁻¹, white
 * residuals assumed). Time is centred on t̄ and scaled by the half-span for conditioning. The
 * trend removed is the fitted curve minus its mean, so the mean of y is unchanged. Domain: ≥ 3
 * (linear) or ≥ 4 (quadratic) finite pairs, t not all equal.
 */
export function fitDrift(
  t: ArrayLike<number>,
  y: ArrayLike<number>,
  model: DriftModel,
): DriftRemoval {
  assertSameLength(t, y, 't and y');
  const p = model === 'quadratic' ? 3 : model === 'linear' ? 2 : 1;
  assertSeries(t, 't', p === 1 ? 1 : p + 1);
  assertSeries(y, 'y', p === 1 ? 1 : p + 1);
  if (!DRIFT_MODELS.includes(model))
    throw new AnalysisError('bad-argument', `unknown drift model ${String(model)}`);
  const n = t.length;
  const tRef = compensatedSum(t) / n;
  if (model === 'none') {
    return {
      model,
      ratePerSecond: 0,
      ratePerDay: 0,
      rateStderrPerDay: 0,
      curvaturePerDay2: 0,
      tRef,
      residualSd: NaN,
      trendSd: 0,
      detrended: Float64Array.from(y),
      n,
    };
  }
  let half = 0;
  for (let i = 0; i < n; i++) half = Math.max(half, Math.abs(t[i] - tRef));
  if (!(half > 0))
    throw new AnalysisError('bad-argument', 'all timestamps are equal: no drift can be fitted');
  // Normal equations in s = (t − t̄)/half: XᵀX β = Xᵀy with columns 1, s, s².
  // Power sums Σs^k (k ≤ 4) and Σs^k·y (k ≤ 2) in one pass, without allocating per point.
  let s1 = 0,
    s2 = 0,
    s3 = 0,
    s4 = 0,
    y0 = 0,
    y1 = 0,
    y2 = 0;
  for (let i = 0; i < n; i++) {
    const s = (t[i] - tRef) / half;
    const ss = s * s;
    const v = y[i];
    s1 += s;
    s2 += ss;
    s3 += ss * s;
    s4 += ss * ss;
    y0 += v;
    y1 += s * v;
    y2 += ss * v;
  }
  const moments = [n, s1, s2, s3, s4];
  const xtx = Array.from({ length: p }, (_, a) =>
    Array.from({ length: p }, (_, b) => moments[a + b]),
  );
  const xty = [y0, y1, y2].slice(0, p);
  const inv = invertSymmetric(xtx);
  const beta = inv.map((row) => row.reduce((acc, v, j) => acc + v * xty[j], 0));
  const trend = new Float64Array(n);
  let ssr = 0;
  for (let i = 0; i < n; i++) {
    const s = (t[i] - tRef) / half;
    trend[i] = beta[1] * s + (p === 3 ? beta[2] * s * s : 0);
    const r = y[i] - beta[0] - trend[i];
    ssr += r * r;
  }
  const trendMean = compensatedSum(trend) / n;
  let trendSs = 0;
  const detrended = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const d = trend[i] - trendMean;
    trendSs += d * d;
    detrended[i] = y[i] - d;
  }
  const residualSd = n > p ? Math.sqrt(ssr / (n - p)) : NaN;
  const ratePerSecond = beta[1] / half;
  const rateStderr = n > p ? (residualSd * Math.sqrt(inv[1][1])) / half : NaN;
  return {
    model,
    ratePerSecond,
    ratePerDay: ratePerSecond * SECONDS_PER_DAY,
    rateStderrPerDay: rateStderr * SECONDS_PER_DAY,
    curvaturePerDay2: p === 3 ? ((2 * beta[2]) / (half * half)) * SECONDS_PER_DAY ** 2 : 0,
    tRef,
    residualSd,
    trendSd: Math.sqrt(trendSs / n),
    detrended,
    n,
  };
}

/** Inverse of a small symmetric positive-definite matrix by Gauss–Jordan elimination with pivoting. */
function invertSymmetric(m: number[][]): number[][] {
  const n = m.length;
  const a = m.map((row, i) => [...row, ...Array.from({ length: n }, (_, j) => (i === j ? 1 : 0))]);
  for (let c = 0; c < n; c++) {
    let piv = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(a[r][c]) > Math.abs(a[piv][c])) piv = r;
    if (!(Math.abs(a[piv][c]) > 1e-300))
      throw new AnalysisError('bad-argument', 'too few distinct timestamps for this drift model');
    [a[c], a[piv]] = [a[piv], a[c]];
    const d = a[c][c];
    for (let j = 0; j < 2 * n; j++) a[c][j] /= d;
    for (let r = 0; r < n; r++) {
      if (r === c) continue;
      const f = a[r][c];
      if (f !== 0) for (let j = 0; j < 2 * n; j++) a[r][j] -= f * a[c][j];
    }
  }
  return a.map((row) => row.slice(n));
}
