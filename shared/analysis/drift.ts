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
export function removeDrift(t: ArrayLike<number>, y: ArrayLike<number>, fit: DriftFit): Float64Array {
  assertSeries(t, 't');
  assertSeries(y, 'y');
  assertSameLength(t, y, 't and y');
  const out = new Float64Array(y.length);
  for (let i = 0; i < y.length; i++) out[i] = y[i] - fit.slopePerSecond * (t[i] - fit.tRef);
  return out;
}
