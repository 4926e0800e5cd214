import { chiSquareInterval, ONE_SIGMA } from './confidence';
import { stabilityEdf } from './edf';
import { AnalysisError, assertNumber } from './errors';
import {
  modifiedSum,
  reflectPhase,
  secondDifferenceSum,
  thirdDifferenceSum,
  totalSum,
} from './estimators';
import { isNoiseType, type NoiseType } from './noise';
import { lag1NoiseOnPhase } from './noiseId';
import { normalizedPhase } from './phase';
import { borrowWorkspace } from './workspace';
import { maxM, octaveMs, type DataKind, type StabilityKind } from './taus';

/** Options shared by every stability estimator. */
export interface StabilityOptions {
  /** Two-sided confidence of the χ² interval (default ONE_SIGMA = 0.682689, SP 1065 §5.3). */
  confidence?: number;
  /** Noise type for the EDF; estimated per τ by the lag-1 autocorrelation method when omitted. */
  noise?: NoiseType;
  /** Input is fractional frequency y (default) or phase x in seconds. */
  data?: DataKind;
}

/** Where a point's noise type came from. */
export type NoiseSource = 'given' | 'lag1' | 'carried' | 'default';

/** One τ of a stability analysis. */
export interface StabilityPoint {
  m: number;
  /** τ = m·τ0 in seconds. */
  tau: number;
  /** The deviation: fractional for ADEV…TOTDEV, seconds for TDEV. */
  dev: number;
  /** Number of terms in the estimator's sum. */
  n: number;
  edf: number;
  lo: number;
  hi: number;
  noise: NoiseType;
  /** given; lag1 (estimated at this τ); carried (from the previous τ); default (white FM). */
  noiseSource: NoiseSource;
}

/** An averaging factor that was asked for but cannot be computed. */
export interface SkippedTau {
  m: number;
  reason: string;
}

/** Points computed plus the averaging factors left out, with the reason. */
export interface StabilityResult {
  kind: StabilityKind;
  points: StabilityPoint[];
  skipped: SkippedTau[];
}

/**
 * Computes one stability estimator at the averaging factors `ms` (default: octaves) from NIST
 * SP 1065: ADEV eqs 6–7, OADEV eq 11, MDEV eq 14, TDEV eq 15, HDEV eq 18, OHDEV eq 20, TOTDEV
 * eq 25; EDF per stabilityEdf, χ² interval per eq 45. Phase is built once; each τ is one O(N)
 * pass. Unsupported or invalid m are listed in `skipped`. Domain: ≥ 1 finite frequency value (≥ 2
 * phase values), τ0 > 0.
 */
export function stability(
  kind: StabilityKind,
  values: ArrayLike<number>,
  tau0: number,
  ms?: readonly number[],
  opts: StabilityOptions = {},
): StabilityResult {
  const data = opts.data ?? 'frequency';
  if (data !== 'frequency' && data !== 'phase') {
    throw new AnalysisError('bad-argument', `data must be 'frequency' or 'phase'`);
  }
  const confidence = opts.confidence ?? ONE_SIGMA;
  assertNumber(confidence, 'confidence', true);
  if (confidence >= 1) throw new AnalysisError('bad-argument', 'confidence must be below 1');
  if (opts.noise !== undefined && !isNoiseType(opts.noise)) {
    throw new AnalysisError('bad-argument', `unknown noise type ${String(opts.noise)}`);
  }
  const nPhase = data === 'phase' ? values.length : values.length + 1;
  const u = normalizedPhase(values, tau0, data, borrowWorkspace(0, nPhase));
  const top = maxM(kind, nPhase);
  const wanted = ms ?? octaveMs(values.length, kind, data);

  const points: StabilityPoint[] = [];
  const skipped: SkippedTau[] = [];
  const ext = kind === 'totdev' && top >= 1 ? reflectPhase(u, borrowWorkspace(1, 3 * nPhase - 4)) : null;
  let lastNoise: NoiseType | null = null;

  for (const m of wanted) {
    if (!Number.isInteger(m) || m < 1) {
      skipped.push({ m, reason: 'm must be a positive integer' });
      continue;
    }
    if (m > top) {
      skipped.push({ m, reason: `${kind} needs more data: at most m = ${top} for ${nPhase} phase points` });
      continue;
    }
    const { variance, terms } = varianceAt(kind, u, ext, m);
    const tau = m * tau0;
    let dev = Math.sqrt(variance);
    if (kind === 'tdev') dev *= tau / Math.sqrt(3);

    let noise: NoiseType;
    let noiseSource: NoiseSource;
    if (opts.noise) {
      noise = opts.noise;
      noiseSource = 'given';
    } else {
      const est = lag1NoiseOnPhase(u, m, data);
      if (est) {
        noise = est.noise;
        noiseSource = 'lag1';
        lastNoise = noise;
      } else if (lastNoise) {
        noise = lastNoise;
        noiseSource = 'carried';
      } else {
        noise = 'wfm';
        noiseSource = 'default';
      }
    }
    const edf = stabilityEdf(kind, nPhase, m, terms, noise);
    const { lo, hi } = chiSquareInterval(dev, edf, confidence);
    points.push({ m, tau, dev, n: terms, edf, lo, hi, noise, noiseSource });
  }
  return { kind, points, skipped };
}

/** Variance (in units where τ0 = 1, scaled back by m² here) and term count at one m. */
function varianceAt(
  kind: StabilityKind,
  u: Float64Array,
  ext: Float64Array | null,
  m: number,
): { variance: number; terms: number } {
  const N = u.length;
  switch (kind) {
    case 'oadev': {
      const terms = N - 2 * m;
      return { variance: secondDifferenceSum(u, m, 1) / (2 * terms * m * m), terms };
    }
    case 'adev': {
      const terms = Math.floor((N - 1) / m) - 1;
      return { variance: secondDifferenceSum(u, m, m) / (2 * terms * m * m), terms };
    }
    case 'mdev':
    case 'tdev': {
      const terms = N - 3 * m + 1;
      return { variance: modifiedSum(u, m) / (2 * terms * m ** 4), terms };
    }
    case 'ohdev': {
      const terms = N - 3 * m;
      return { variance: thirdDifferenceSum(u, m, 1) / (6 * terms * m * m), terms };
    }
    case 'hdev': {
      const terms = Math.floor((N - 1) / m) - 2;
      return { variance: thirdDifferenceSum(u, m, m) / (6 * terms * m * m), terms };
    }
    case 'totdev': {
      const terms = N - 2;
      return { variance: totalSum(ext!, N, m) / (2 * terms * m * m), terms };
    }
  }
}

type Estimator = (
  values: ArrayLike<number>,
  tau0: number,
  ms?: readonly number[],
  opts?: StabilityOptions,
) => StabilityPoint[];

const pointsOf =
  (kind: StabilityKind): Estimator =>
  (values, tau0, ms, opts) =>
    stability(kind, values, tau0, ms, opts).points;

/** Allan deviation, non-overlapping (NIST SP 1065 eqs 6–7); unsupported m are left out. */
export const adev: Estimator = pointsOf('adev');
/** Overlapping Allan deviation (NIST SP 1065 eq 11); unsupported m are left out. */
export const oadev: Estimator = pointsOf('oadev');
/** Modified Allan deviation (NIST SP 1065 eq 14); unsupported m are left out. */
export const mdev: Estimator = pointsOf('mdev');
/** Time deviation σ_x = (τ/√3)·MDEV in seconds (NIST SP 1065 eq 15); unsupported m left out. */
export const tdev: Estimator = pointsOf('tdev');
/** Hadamard deviation, non-overlapping (NIST SP 1065 eq 18); unsupported m are left out. */
export const hdev: Estimator = pointsOf('hdev');
/** Overlapping Hadamard deviation (NIST SP 1065 eq 20); unsupported m are left out. */
export const ohdev: Estimator = pointsOf('ohdev');
/** Total deviation, reflected phase (NIST SP 1065 eq 25); unsupported m are left out. */
export const totdev: Estimator = pointsOf('totdev');
