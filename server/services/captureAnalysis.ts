import type pg from 'pg';
import {
  summarize,
  referenceCorrect,
  stability,
  octaveMs,
  decadeMs,
  allMs,
  findGaps,
  driftFit,
  uncertaintyBudget,
  tuningForkShift,
  AnalysisError,
  type StabilityKind,
  type Summary,
} from '../../shared/analysis/index.js';
import type { Capture, Dut } from '../models/index.js';
import { loadSeries, type Series } from './readings.js';

/** Standard uncertainty of the bench thermometer assumed when none is recorded (common practice, no source). */
export const THERMOMETER_U_C = 0.3;
/** Tuning-fork parabolic coefficient, ppm/°C² (REFERENCES: makers' datasheets, typical −0.034). */
export const TUNING_FORK_B = -0.034;
export const TUNING_FORK_T0 = 25;
const SUMMARY_VERSION = 1;

/** The readings of a capture ready for analysis: reference-corrected values and fractional frequency. */
export interface Prepared {
  /** Values used (flags = 0, not outliers), reference-corrected for frequency captures. */
  values: Float64Array;
  t: Float64Array;
  /** Times of every unflagged reading, outliers included: the basis for finding gaps. */
  tUnflagged: Float64Array;
  /** Fractional frequency (frequency captures) or the values themselves (other quantities). */
  y: Float64Array;
  tau0: number;
  /** Gate time of each reading in seconds (τ0 − gateTime is the counter's dead time). */
  gateTime: number;
  total: number;
  flagged: number;
  outliers: number;
  stats: Summary | null;
  yRef: number;
}

/** Seconds between readings: gate time plus dead time (the counter's τ0). */
export function tau0Of(c: Pick<Capture, 'gateTime' | 'deadTime'>): number {
  return c.gateTime + (c.deadTime ?? 0);
}

/**
 * Drops flagged readings (garbled or timed-out lines), applies the reference correction
 * f_true = f_displayed·(1 + y_ref), flags robust outliers (kept in the database, left out of the
 * statistics and stability) and forms fractional frequency.
 */
export function prepare(c: Capture, s: Series): Prepared {
  const yRef = c.quantity === 'frequency' ? (c.referenceOffset ?? 0) : 0;
  const keep: number[] = [];
  for (let i = 0; i < s.seq.length; i++) if (s.flags[i] === 0) keep.push(i);
  const flagged = s.seq.length - keep.length;
  let values: Float64Array = Float64Array.from(keep, (i) => s.value[i]);
  let t: Float64Array = Float64Array.from(keep, (i) => s.t[i]);
  if (yRef !== 0 && values.length > 0) values = referenceCorrect(values, yRef);
  const tUnflagged = t;
  let stats: Summary | null = null;
  let outliers = 0;
  if (values.length >= 2) {
    const first = summarize(values);
    outliers = first.outliers.length;
    if (outliers > 0) {
      const drop = new Set(first.outliers);
      const idx = [...values.keys()].filter((i) => !drop.has(i));
      values = Float64Array.from(idx, (i) => values[i]);
      t = Float64Array.from(idx, (i) => t[i]);
    }
    stats = values.length >= 2 ? summarize(values) : null;
  }
  const nominal = c.nominal ?? stats?.mean ?? 0;
  const y = c.quantity === 'frequency' && nominal > 0 ? values.map((v) => (v - nominal) / nominal) : values.slice();
  return { values, t, tUnflagged, y, tau0: tau0Of(c), gateTime: c.gateTime, total: s.seq.length, flagged, outliers, stats, yRef };
}

/** The averaging factors of a τ set for a series of n points. */
export function msFor(set: 'octave' | 'decade' | 'all', n: number, kind: StabilityKind): number[] {
  if (set === 'decade') return decadeMs(n, kind);
  if (set === 'all') return n <= 2000 ? allMs(n, kind) : octaveMs(n, kind);
  return octaveMs(n, kind);
}

export function stabilityOf(p: Prepared, kind: StabilityKind, taus: 'octave' | 'decade' | 'all', confidence?: number) {
  if (p.y.length < 3) return { kind, tau0: p.tau0, points: [], skipped: [{ m: 1, reason: 'fewer than 3 usable readings' }] };
  // Dead-time bias (ADEV/OADEV) is corrected only for frequency readings with a known gate shorter than τ0.
  const gateTime = p.gateTime > 0 && p.gateTime < p.tau0 ? p.gateTime : undefined;
  const r = stability(kind, p.y, p.tau0, msFor(taus, p.y.length, kind), { ...(confidence ? { confidence } : {}), gateTime });
  return {
    kind,
    tau0: p.tau0,
    points: r.points.map((q) => ({
      tau: q.tau,
      m: q.m,
      dev: q.dev,
      devRaw: q.devRaw,
      lo: q.lo,
      hi: q.hi,
      edf: q.edf,
      n: q.n,
      noise: q.noise,
      noiseSource: q.noiseSource,
      noiseSupported: q.noiseSupported,
      slope: q.slope,
      corrections: q.corrections,
      uncorrected: q.uncorrected,
    })),
    skipped: r.skipped,
  };
}

/** Temperature coefficient (fractional per °C) at the capture's ambient, where the DUT kind has a known curve. */
function temperatureCoefficient(dut: Dut | null, ambientC: number | null): number | undefined {
  if (!dut || ambientC === null) return undefined;
  if (dut.kind === 'tuning-fork') return Math.abs(2 * TUNING_FORK_B * (ambientC - TUNING_FORK_T0)) * 1e-6;
  return undefined;
}

/** Runs one optional figure; an AnalysisError becomes a note instead of failing the reduction. */
function tryAnalysis<T>(run: () => T, notes: string[], what: string): T | null {
  try {
    return run();
  } catch (err) {
    if (!(err instanceof AnalysisError)) throw err;
    notes.push(`${what} not computed: ${err.message}`);
    return null;
  }
}

/** The full reduction of one capture: what the capture page shows and what a comparison uses. */
export function reduce(c: Capture, dut: Dut | null, p: Prepared) {
  const notes: string[] = [];
  if (p.flagged) notes.push(`${p.flagged} flagged reading(s) (garbled or timed out) left out of the analysis.`);
  if (p.outliers) notes.push(`${p.outliers} outlier(s) by robust z > 5 left out of the statistics; raw readings kept.`);
  // Timestamps come from outside (the bench, a CSV): a series whose times run backwards or stand
  // still still reduces; only the gap and drift figures that need ordered times are left out.
  const gaps = p.tUnflagged.length >= 2 ? (tryAnalysis(() => findGaps(p.tUnflagged, p.tau0), notes, 'Gaps') ?? []) : [];
  if (gaps.length) notes.push(`${gaps.length} gap(s) in the timestamps; stability treats the series as contiguous.`);
  const drift = p.t.length >= 3 ? tryAnalysis(() => driftFit(p.t, p.y), notes, 'Drift') : null;
  const stab = stabilityOf(p, 'oadev', 'octave');
  const span = p.t.length ? p.t[p.t.length - 1] - p.t[0] + p.tau0 : 0;
  let uncertainty = null;
  if (c.quantity === 'frequency' && p.stats && (c.nominal ?? 0) > 0) {
    const last = stab.points[stab.points.length - 1];
    const tempco = temperatureCoefficient(dut, c.ambientC);
    const budget = uncertaintyBudget({
      stats: p.stats,
      nominal: c.nominal!,
      gateTime: c.gateTime,
      span,
      adevAtSpan: last?.dev,
      adevEdf: last?.edf,
      noise: last?.noise,
      resolution: { kind: 'reciprocal' },
      reference: c.referenceUncertainty !== null ? { offset: c.referenceOffset ?? 0, u: c.referenceUncertainty } : undefined,
      temperature: tempco !== undefined ? { coeffPerC: tempco, uC: THERMOMETER_U_C } : undefined,
    });
    // The statistics are already reference-corrected (prepare); the budget's own mean would
    // apply the correction a second time. Its uncertainty components are what we need.
    uncertainty = { ...budget, mean: p.stats.mean };
  }
  const nominal = c.nominal ?? 0;
  const offsetPpm = c.quantity === 'frequency' && p.stats && nominal > 0 ? ((p.stats.mean - nominal) / nominal) * 1e6 : null;
  const normalizedPpm =
    dut?.kind === 'tuning-fork' && offsetPpm !== null && c.ambientC !== null
      ? offsetPpm - tuningForkShift(c.ambientC, { B: TUNING_FORK_B, T0: TUNING_FORK_T0 })
      : null;
  return {
    version: SUMMARY_VERSION,
    counts: { total: p.total, used: p.values.length, flagged: p.flagged, outliers: p.outliers },
    stats: p.stats,
    correction: {
      applied: p.yRef !== 0,
      referenceId: c.referenceId,
      yRef: p.yRef,
      uRef: c.referenceUncertainty,
      convention: 'f_true = f_displayed · (1 + y_ref)',
    },
    offsetPpm,
    temperature: { ambientC: c.ambientC, normalizedPpm, t0: TUNING_FORK_T0 },
    drift,
    gaps,
    stability: stab,
    uncertainty,
    notes,
  };
}

export type CaptureSummary = ReturnType<typeof reduce>;

/** Finished captures never change, so their prepared readings can be kept for repeated analyses. */
const cache = new Map<number, Prepared>();
const CACHE_SIZE = 6;

export async function preparedFor(pool: pg.Pool, c: Capture): Promise<Prepared> {
  const hit = c.state !== 'open' ? cache.get(c.id) : undefined;
  if (hit) return hit;
  const p = prepare(c, await loadSeries(pool, c.id));
  if (c.state !== 'open') {
    cache.set(c.id, p);
    if (cache.size > CACHE_SIZE) cache.delete(cache.keys().next().value!);
  }
  return p;
}
