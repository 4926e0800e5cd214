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
import { isNoiseType, noiseFromAlpha, type NoiseType } from './noise';
import { b1NoiseOnPhase, lag1NoiseOnPhase } from './noiseId';
import { barnesAllanB2, DEAD_TIME_MU, deadTimeRatio, totdevBias } from './deadTime';
import { normalizedPhase } from './phase';
import { borrowWorkspace } from './workspace';
import { maxM, octaveMs, type DataKind, type StabilityKind } from './taus';

/** Options shared by every stability estimator. */
export interface StabilityOptions {
  /** Two-sided confidence of the χ² interval (default ONE_SIGMA = 0.682689, SP 1065 §5.3). */
  confidence?: number;
  /** Noise type for the EDF; identified per τ (lag-1, B1 and the local slope) when omitted. */
  noise?: NoiseType;
  /** Input is fractional frequency y (default) or phase x in seconds. */
  data?: DataKind;
  /**
   * Gate time of each reading in seconds, when τ0 = gate + dead time: ADEV and OADEV are then
   * corrected for the dead-time bias (Barnes & Allan B2) where the noise type is identified.
   */
  gateTime?: number;
}

/** Where a point's noise type came from. */
export type NoiseSource = 'given' | 'lag1' | 'b1' | 'slope' | 'carried' | 'default';

/** A bias correction applied to a point's variance. */
export interface BiasCorrection {
  kind: 'dead-time' | 'totdev';
  /** E[measured variance]/true variance; the variance was divided by it. */
  ratio: number;
}

/** One τ of a stability analysis. */
export interface StabilityPoint {
  m: number;
  /** τ = m·τ0 in seconds. */
  tau: number;
  /** The deviation, bias-corrected where `corrections` says: fractional, seconds for TDEV. */
  dev: number;
  /** The deviation as the estimator computes it, before any bias correction. */
  devRaw: number;
  /** Number of terms in the estimator's sum. */
  n: number;
  edf: number;
  lo: number;
  hi: number;
  /** The noise type the EDF (and any bias correction) assumes at this τ. */
  noise: NoiseType;
  /** given; lag1 / b1 (identified at this τ); slope (from the curve); carried; default (white FM). */
  noiseSource: NoiseSource;
  /**
   * Whether the identification supports the label: given, or an identification that agrees with
   * the local slope of the curve within its uncertainty. Unsupported points assume, of the
   * candidate noises, the one with the smaller EDF (the wider interval) and are shown unlabelled.
   */
  noiseSupported: boolean;
  /** Local log–log slope of the deviation around this τ, null at a single point. */
  slope: number | null;
  corrections: BiasCorrection[];
  /** A bias that applies but was not corrected, with the reason. */
  uncorrected: string | null;
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
 * Expected log–log slope of each deviation for each noise (NIST SP 1065 Table 3 and §5.2.5: MDEV
 * separates white from flicker PM; TDEV = τ/√3·MDEV adds one).
 */
export function expectedSlope(kind: StabilityKind, noise: NoiseType): number {
  const base: Record<NoiseType, number> = { wpm: -1, fpm: -1, wfm: -0.5, ffm: 0, rwfm: 0.5 };
  if (kind === 'mdev' || kind === 'tdev') {
    const mod: Record<NoiseType, number> = { wpm: -1.5, fpm: -1, wfm: -0.5, ffm: 0, rwfm: 0.5 };
    return mod[noise] + (kind === 'tdev' ? 1 : 0);
  }
  return base[noise];
}

const NOISES: readonly NoiseType[] = ['wpm', 'fpm', 'wfm', 'ffm', 'rwfm'];

/**
 * Computes one stability estimator at the averaging factors `ms` (default: octaves) from NIST
 * SP 1065: ADEV eqs 6–7, OADEV eq 11, MDEV eq 14, TDEV eq 15, HDEV eq 18, OHDEV eq 20, TOTDEV
 * eq 25; EDF per stabilityEdf (Greenhall & Riley), χ² interval per eq 45. Noise per τ: the lag-1
 * autocorrelation estimate taken as the median over a window of τ/2 … 2τ, else the B1 ratio, then
 * checked against the local slope of the curve (identifyNoise). Bias corrections: dead time for
 * ADEV/OADEV (Barnes & Allan B2, when opts.gateTime < τ0) and TOTVAR's flicker/random-walk bias
 * (SP 1065 §5.2.11) — only where the noise type is supported. Domain: ≥ 1 finite frequency value
 * (≥ 2 phase values), τ0 > 0.
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
  if (opts.gateTime !== undefined) {
    assertNumber(opts.gateTime, 'gateTime', true);
    if (opts.gateTime > tau0 * (1 + 1e-9))
      throw new AnalysisError('bad-argument', 'the gate time exceeds τ0');
  }
  const nPhase = data === 'phase' ? values.length : values.length + 1;
  const u = normalizedPhase(values, tau0, data, borrowWorkspace(0, nPhase));
  const top = maxM(kind, nPhase);
  const wanted = ms ?? octaveMs(values.length, kind, data);

  const raw: Array<{ m: number; tau: number; dev: number; terms: number }> = [];
  const skipped: SkippedTau[] = [];
  const ext =
    kind === 'totdev' && top >= 1 ? reflectPhase(u, borrowWorkspace(1, 3 * nPhase - 4)) : null;

  for (const m of wanted) {
    if (!Number.isInteger(m) || m < 1) {
      skipped.push({ m, reason: 'm must be a positive integer' });
      continue;
    }
    if (m > top) {
      skipped.push({
        m,
        reason: `${kind} needs more data: at most m = ${top} for ${nPhase} phase points`,
      });
      continue;
    }
    const { variance, terms } = varianceAt(kind, u, ext, m);
    const tau = m * tau0;
    let dev = Math.sqrt(variance);
    if (kind === 'tdev') dev *= tau / Math.sqrt(3);
    raw.push({ m, tau, dev, terms });
  }

  const ids = identifyNoise(kind, u, data, nPhase, raw, opts.noise);
  const recordLength = (nPhase - 1) * tau0;
  const points: StabilityPoint[] = raw.map((r, i) => {
    const { noise, noiseSource, noiseSupported, slope } = ids[i];
    const edf = stabilityEdf(kind, nPhase, r.m, r.terms, noise);
    const corrections: BiasCorrection[] = [];
    let uncorrected: string | null = null;
    let ratio = 1;
    if ((kind === 'adev' || kind === 'oadev') && opts.gateTime !== undefined) {
      const rDead = deadTimeRatio(tau0, opts.gateTime, r.m);
      if (rDead > 1 + 1e-12) {
        const mu = DEAD_TIME_MU[noise];
        if (!noiseSupported)
          uncorrected = 'dead-time bias not corrected: noise type not identified at this τ';
        else if (mu === undefined)
          uncorrected = 'dead-time bias not corrected: no B2 for flicker PM';
        else {
          const b2 = barnesAllanB2(rDead, mu);
          if (Math.abs(b2 - 1) > 1e-12) corrections.push({ kind: 'dead-time', ratio: b2 });
          ratio *= b2;
        }
      }
    }
    if (kind === 'totdev' && r.m > 1) {
      const bias = totdevBias(noise, r.tau, recordLength);
      if (noise !== 'wfm') {
        if (!noiseSupported)
          uncorrected = 'TOTDEV bias not corrected: noise type not identified at this τ';
        else if (bias === null)
          uncorrected = 'TOTDEV bias not corrected: none is published for phase noise';
        else if (bias > 0) {
          corrections.push({ kind: 'totdev', ratio: bias });
          ratio *= bias;
        }
      }
    }
    const dev = r.dev / Math.sqrt(ratio);
    const { lo, hi } = chiSquareInterval(dev, edf, confidence);
    return {
      m: r.m,
      tau: r.tau,
      dev,
      devRaw: r.dev,
      n: r.terms,
      edf,
      lo,
      hi,
      noise,
      noiseSource,
      noiseSupported,
      slope,
      corrections,
      uncorrected,
    };
  });
  return { kind, points, skipped };
}

interface NoiseId {
  noise: NoiseType;
  noiseSource: NoiseSource;
  noiseSupported: boolean;
  slope: number | null;
}

/**
 * Noise type per τ (SP 1065 §5.6). Candidates: the lag-1 autocorrelation α (Riley & Greenhall) at
 * every τ with ≥ 30 averaged points, taken as the median over the computed τ within a factor 2
 * (a window: single lag-1 estimates scatter at low point counts); else Barnes' B1 ratio (≥ 8
 * averaged points); else the neighbour's. Support: the local log–log slope of the deviation (between
 * the neighbouring τ) must be nearer the candidate's expected slope than any other noise's, or
 * within two of its standard errors (each log σ has sd ≈ 1/√(2·edf)). Where it is not supported, the
 * EDF assumes whichever of the candidate and the slope's noise gives the smaller EDF.
 */
function identifyNoise(
  kind: StabilityKind,
  u: Float64Array,
  data: DataKind,
  nPhase: number,
  raw: ReadonlyArray<{ m: number; tau: number; dev: number; terms: number }>,
  given: NoiseType | undefined,
): NoiseId[] {
  // sd of ln σ ≈ 1/√(2·edf) (SP 1065 §5.3); the white-FM EDF is the yardstick for the slope's sd
  const sdLn = raw.map((r) => 1 / Math.sqrt(2 * stabilityEdf(kind, nPhase, r.m, r.terms, 'wfm')));
  const slopes = raw.map((_, i) => localSlope(raw, sdLn, i));
  if (given)
    return raw.map((_, i) => ({
      noise: given,
      noiseSource: 'given',
      noiseSupported: true,
      slope: slopes[i]?.value ?? null,
    }));

  const lag1 = raw.map((r) => lag1NoiseOnPhase(u, r.m, data));
  const out: NoiseId[] = [];
  let last: NoiseType | null = null;
  raw.forEach((r, i) => {
    const window: number[] = [];
    raw.forEach((q, j) => {
      const est = lag1[j];
      if (est && q.m >= r.m / 2 && q.m <= r.m * 2) window.push(est.alphaRaw);
    });
    let noise: NoiseType;
    let source: NoiseSource;
    if (window.length) {
      noise = noiseFromAlpha(median(window));
      source = 'lag1';
    } else {
      const b1 = data === 'frequency' || data === 'phase' ? b1NoiseOnPhase(u, r.m) : null;
      if (b1) {
        noise = b1.noise;
        source = 'b1';
      } else if (last) {
        noise = last;
        source = 'carried';
      } else {
        noise = 'wfm';
        source = 'default';
      }
    }
    last = noise;
    const slope = slopes[i];
    let supported = false;
    let alternative: NoiseType | null = null;
    if (slope !== null && (source === 'lag1' || source === 'b1')) {
      const nearest = nearestBySlope(kind, slope.value);
      const distance = Math.abs(slope.value - expectedSlope(kind, noise));
      supported =
        distance <= 2 * slope.sd || expectedSlope(kind, nearest) === expectedSlope(kind, noise);
      if (!supported) alternative = nearest;
    } else if (slope !== null) {
      alternative = nearestBySlope(kind, slope.value);
    }
    if (alternative && alternative !== noise) {
      const a = stabilityEdf(kind, nPhase, r.m, r.terms, alternative);
      const b = stabilityEdf(kind, nPhase, r.m, r.terms, noise);
      if (a < b) {
        noise = alternative;
        if (source === 'carried' || source === 'default') source = 'slope';
      }
    }
    out.push({
      noise,
      noiseSource: source,
      noiseSupported: supported,
      slope: slope?.value ?? null,
    });
  });
  return out;
}

function localSlope(
  raw: ReadonlyArray<{ tau: number; dev: number }>,
  sdLn: readonly number[],
  i: number,
): { value: number; sd: number } | null {
  const ia = Math.max(0, i - 1);
  const ib = Math.min(raw.length - 1, i + 1);
  const a = raw[ia];
  const b = raw[ib];
  if (ia === ib || !(a.dev > 0) || !(b.dev > 0)) return null;
  const span = Math.log(b.tau / a.tau);
  if (!(span > 0)) return null;
  return { value: Math.log(b.dev / a.dev) / span, sd: Math.hypot(sdLn[ia], sdLn[ib]) / span };
}

function nearestBySlope(kind: StabilityKind, slope: number): NoiseType {
  let best: NoiseType = 'wfm';
  let bestDistance = Infinity;
  for (const n of NOISES) {
    const d = Math.abs(slope - expectedSlope(kind, n));
    if (d < bestDistance - 1e-12) {
      best = n;
      bestDistance = d;
    }
  }
  return best;
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const h = s.length >> 1;
  return s.length % 2 ? s[h] : (s[h - 1] + s[h]) / 2;
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
