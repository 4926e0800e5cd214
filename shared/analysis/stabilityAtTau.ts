import { chiSquareInterval } from './confidence';
import { AnalysisError, assertNumber } from './errors';
import { stability, type StabilityPoint } from './stability';
import { maxM, octaveMs } from './taus';
import type { Verdict } from './verdict';

/**
 * A crystal's stability limit judged at its chosen averaging time: the overlapping Allan
 * deviation at the τ the capture supports nearest the limit's τ (m = round(τ/τ0)), its 95 %
 * χ² interval (NIST SP 1065 §5.3 eq 45, EDF by Greenhall & Riley as every stability point —
 * docs/stability.md) and a conservative verdict on the interval (common practice, no source:
 * within only when the whole interval lies at or below the limit).
 */

/** Confidence of the interval the verdict is judged on. */
export const STABILITY_VERDICT_CONFIDENCE = 0.95;

/** σy(τ) at the limit's τ, as a fraction (×1e9 = ppb), with its 95 % interval. */
export interface StabilityFigure {
  /** The τ the limit asks for, s. */
  tauRequested: number;
  /** The averaging factor used, round(τ/τ0) (at least 1). */
  m: number;
  /** The τ judged, m·τ0, s. */
  tau: number;
  dev: number;
  lo: number;
  hi: number;
  edf: number;
  /** The noise type the EDF assumes, and whether the identification supports it. */
  noise: string;
  noiseSupported: boolean;
}

/** The figure, or why there is none. */
export type StabilityAtTau =
  { figure: StabilityFigure; reason: null } | { figure: null; reason: string };

/** The averaging factor nearest τ for a series sampled every τ0 seconds (at least 1). */
export function mForTau(tauS: number, tau0: number): number {
  assertNumber(tauS, 'tauS', true);
  assertNumber(tau0, 'tau0', true);
  return Math.max(1, Math.round(tauS / tau0));
}

function fmt(x: number): string {
  return String(Number(x.toPrecision(3)));
}

/** The reason a capture of `n` frequency values at τ0 cannot give σy at τ (null when it can). */
export function tooShortFor(n: number, tau0: number, tauS: number): string | null {
  const m = mForTau(tauS, tau0);
  const top = maxM('oadev', n + 1);
  if (m <= top) return null;
  const need = 2 * m; // N − 2m ≥ 1 phase points, N = n + 1 (SP 1065 eq 11)
  return (
    `capture too short for τ = ${fmt(tauS)} s: σy at m = ${m} (τ0 = ${fmt(tau0)} s) needs at least ` +
    `${need} readings, the capture has ${n}` +
    (top >= 1 ? ` (longest τ it supports: ${fmt(top * tau0)} s)` : '')
  );
}

/** The figure from a stability point (its EDF kept) with the 95 % interval the verdict uses. */
export function figureFromPoint(
  p: Pick<StabilityPoint, 'm' | 'tau' | 'dev' | 'edf' | 'noise' | 'noiseSupported'>,
  tauRequested: number,
): StabilityFigure {
  const { lo, hi } = chiSquareInterval(p.dev, p.edf, STABILITY_VERDICT_CONFIDENCE);
  return {
    tauRequested,
    m: p.m,
    tau: p.tau,
    dev: p.dev,
    lo,
    hi,
    edf: p.edf,
    noise: p.noise,
    noiseSupported: p.noiseSupported,
  };
}

/**
 * σy(τ) of fractional-frequency values `y` sampled every τ0 (drift already removed as the caller
 * wants): OADEV (SP 1065 eq 11) at m = round(τ/τ0), computed together with the octaves so the
 * noise identification has its neighbours, exactly as the capture's stability curve; dead time
 * corrected as there when `gateTime` < τ0. A capture too short for τ gives no figure and says so.
 */
export function stabilityAtTau(
  y: ArrayLike<number>,
  tau0: number,
  tauS: number,
  opts: { gateTime?: number } = {},
): StabilityAtTau {
  const m = mForTau(tauS, tau0);
  const short = tooShortFor(y.length, tau0, tauS);
  if (short) return { figure: null, reason: short };
  const ms = [...new Set([...octaveMs(y.length, 'oadev'), m])].sort((a, b) => a - b);
  const r = stability('oadev', y, tau0, ms, {
    ...(opts.gateTime !== undefined ? { gateTime: opts.gateTime } : {}),
  });
  const p = r.points.find((q) => q.m === m);
  if (!p) throw new AnalysisError('too-short', `no OADEV point at m = ${m}`);
  return { figure: figureFromPoint(p, tauS), reason: null };
}

/**
 * Verdict of a stability figure against an upper limit in ppb: within when the interval's upper
 * bound ≤ limit, exceeds when its lower bound > limit, otherwise inconclusive — and inconclusive
 * without a figure (common practice, no source; conservative on both sides).
 */
export function stabilityVerdict(figure: StabilityFigure | null, limitPpb: number): Verdict {
  assertNumber(limitPpb, 'limitPpb', true);
  if (!figure) return 'inconclusive';
  if (figure.hi * 1e9 <= limitPpb) return 'within';
  if (figure.lo * 1e9 > limitPpb) return 'exceeds';
  return 'inconclusive';
}
