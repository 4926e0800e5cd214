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
  fitDrift,
  uncertaintyBudget,
  tuningForkShift,
  hzPerUnit,
  AnalysisError,
  accelerationBudget,
  axisOrientation,
  DEFAULT_ACCEL_LSB_MG,
  DEFAULT_ORIENTATION_ERROR_DEG,
  type DriftModel,
  type DriftRemoval,
  type StabilityKind,
  type Summary,
} from '../../shared/analysis/index.js';
import { spiAxisOf } from '../../shared/protocol/accelerometer.js';
import { implausibleNote } from '../../shared/protocol/plausibility.js';
import type { Capture, Dut } from '../models/index.js';
import { TUNING_FORK_DEFAULTS } from '../models/Dut.js';
import { loadSeries, type Series } from './readings.js';

/** Standard uncertainty of the bench thermometer assumed when none is recorded (common practice, no source). */
export const THERMOMETER_U_C = 0.3;
/** Standard uncertainty of the bench thermometer's calibration bias, shared by every capture (common practice, no source). */
export const THERMOMETER_BIAS_U_C = 0.5;
/** Where a lab's ambient lies when a capture recorded none, taken as rectangular (common practice, no source). */
export const LAB_AMBIENT_RANGE_C = [18, 28] as const;
/** Tuning-fork parabolic coefficient, ppm/°C² (REFERENCES: makers' datasheets, typical −0.034). */
export const TUNING_FORK_B = TUNING_FORK_DEFAULTS.B;
export const TUNING_FORK_T0 = TUNING_FORK_DEFAULTS.T0;
/** Counter assumed when a capture recorded none: reciprocal, 100 ps (common practice, no source). */
const ASSUMED_COUNTER = { kind: 'reciprocal' as const, tRes: 100e-12 };
/**
 * 2: k from ν_eff, counter type, reference ageing, drift removal and its budget line (issue 8).
 * 3: an acceleration capture's own budget (scatter, the sensor's LSB, orientation; issue 13).
 * Stored summaries of an older version are recomputed when read (comparisons.summaryOf).
 */
export const SUMMARY_VERSION = 3;

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
  const y =
    c.quantity === 'frequency' && nominal > 0
      ? values.map((v) => (v - nominal) / nominal)
      : values.slice();
  return {
    values,
    t,
    tUnflagged,
    y,
    tau0: tau0Of(c),
    gateTime: c.gateTime,
    total: s.seq.length,
    flagged,
    outliers,
    stats,
    yRef,
  };
}

/** The averaging factors of a τ set for a series of n points. */
export function msFor(set: 'octave' | 'decade' | 'all', n: number, kind: StabilityKind): number[] {
  if (set === 'decade') return decadeMs(n, kind);
  if (set === 'all') return n <= 2000 ? allMs(n, kind) : octaveMs(n, kind);
  return octaveMs(n, kind);
}

export function stabilityOf(
  p: Prepared,
  kind: StabilityKind,
  taus: 'octave' | 'decade' | 'all',
  confidence?: number,
) {
  if (p.y.length < 3)
    return {
      kind,
      tau0: p.tau0,
      points: [],
      skipped: [{ m: 1, reason: 'fewer than 3 usable readings' }],
    };
  // Dead-time bias (ADEV/OADEV) is corrected only for frequency readings with a known gate shorter than τ0.
  const gateTime = p.gateTime > 0 && p.gateTime < p.tau0 ? p.gateTime : undefined;
  const r = stability(kind, p.y, p.tau0, msFor(taus, p.y.length, kind), {
    ...(confidence ? { confidence } : {}),
    gateTime,
  });
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

/**
 * The Allan deviation at the capture span for the type A term. The longest octave τ is at most
 * T/2 (often T/4), so σ_y(τ_last) is carried to τ = T with the slope of the noise: 0 for white and
 * flicker noise (σ_y falls or stays, so τ_last is conservative), +1/2 for random-walk FM, and where
 * the noise type is not supported the plotted slope clamped to 0 … +1/2 (+1/2 when there is none, or
 * when the label carried from shorter τ is random-walk FM).
 * Review of issue 8, F8; slopes from NIST SP 1065 Table 3.
 */
function longTermInstability(
  last: {
    tau: number;
    dev: number;
    edf: number;
    noise: string;
    noiseSupported: boolean;
    slope: number | null;
  },
  span: number,
  notes: string[],
): { dev: number; edf: number } {
  if (!(span > last.tau)) return { dev: last.dev, edf: last.edf };
  const exponent = last.noiseSupported
    ? last.noise === 'rwfm'
      ? 0.5
      : 0
    : Math.max(Math.min(0.5, Math.max(0, last.slope ?? 0.5)), last.noise === 'rwfm' ? 0.5 : 0);
  if (exponent === 0) return { dev: last.dev, edf: last.edf };
  const dev = last.dev * (span / last.tau) ** exponent;
  notes.push(
    `Long-term instability: σ_y at τ = ${Number(last.tau.toPrecision(3))} s carried to the span (${Number(span.toPrecision(3))} s) ` +
      `with slope +${exponent.toFixed(2)}${last.noiseSupported ? ' (random-walk FM)' : ' (noise type not identified: the plotted slope, at most +1/2)'}.`,
  );
  return { dev, edf: last.edf };
}

/**
 * The counter-resolution input. Recorded type and resolution are used as they are. When the capture
 * does not say which counter it came from, nothing may be assumed in the reading's favour (review
 * of issue 8, F3): the display step q is inferred from the readings (the smallest difference
 * between distinct values) and booked as ±1 step, never less than a 100 ps reciprocal counter;
 * identical readings give no step, so a gated counter's ±1 count in the gate is taken.
 */
function resolutionFor(
  c: Capture,
  p: Prepared,
  counter:
    | { kind: 'gated'; counts: number; assumed?: boolean }
    | { kind: 'reciprocal' | 'time-interval'; tRes: number; assumed?: boolean },
  notes: string[],
): { kind: 'gated'; counts: number } | { kind: 'reciprocal' | 'time-interval'; tRes: number } {
  if (c.counterType) return counter;
  // The readings, the step and the nominal are in the capture's unit; a gated count is in Hz·s.
  const perUnit = hzPerUnit(c.unit) ?? 1;
  const step = displayStep(p.values);
  const nominal = c.nominal ?? 0;
  const reciprocalHz = (ASSUMED_COUNTER.tRes / c.gateTime) * nominal;
  if (step === null) {
    notes.push(
      "The counter type was not recorded and every reading is identical: the resolution is taken as a gated counter's ±1 count in the gate (±" +
        `${Number((1 / c.gateTime).toPrecision(3))} Hz).`,
    );
    return { kind: 'gated', counts: 1 };
  }
  if (step > reciprocalHz) {
    notes.push(
      `The counter type was not recorded: the resolution is taken as ±1 display step of the readings (${Number(step.toPrecision(3))} ${c.unit}).`,
    );
    return { kind: 'gated', counts: step * perUnit * c.gateTime };
  }
  notes.push(
    'The counter type was not recorded: the readings resolve finer than a 100 ps reciprocal counter, which is assumed.',
  );
  return { kind: ASSUMED_COUNTER.kind, tRes: ASSUMED_COUNTER.tRes };
}

/** The smallest positive difference between distinct values (the display's step), null when all are equal. */
export function displayStep(values: Float64Array): number | null {
  if (values.length < 2) return null;
  const sorted = Float64Array.from(values).sort();
  let step = Infinity;
  for (let i = 1; i < sorted.length; i++) {
    const d = sorted[i] - sorted[i - 1];
    if (d > 0 && d < step) step = d;
  }
  return Number.isFinite(step) ? step : null;
}

/** Temperature coefficient (fractional per °C) at the capture's ambient, where the DUT kind has a known curve. */
function temperatureCoefficient(dut: Dut | null, ambientC: number | null): number | undefined {
  if (!dut || ambientC === null) return undefined;
  if (dut.kind === 'tuning-fork') {
    const { B, T0 } = dut.tuningFork();
    return Math.abs(2 * B * (ambientC - T0)) * 1e-6;
  }
  return undefined;
}

/** The drift removed by default: linear for frequency (SP 1065 §6), none for other quantities. */
export function defaultDrift(c: Pick<Capture, 'quantity'>): DriftModel {
  return c.quantity === 'frequency' ? 'linear' : 'none';
}

/**
 * The series with the chosen drift removed (the mean kept), ready for stabilityOf, and the fit.
 * Too few or disordered timestamps leave the series as it is and say why.
 */
export function withDrift(
  p: Prepared,
  model: DriftModel,
  notes: string[],
): { prepared: Prepared; fit: DriftRemoval | null } {
  if (model === 'none' || p.y.length < (model === 'quadratic' ? 4 : 3))
    return { prepared: p, fit: null };
  const fit = tryAnalysis(() => fitDrift(p.t, p.y, model), notes, 'Drift removal');
  if (!fit) return { prepared: p, fit: null };
  return { prepared: { ...p, y: fit.detrended }, fit };
}

/** Seconds from the reference's verification day (00:00 UTC) to the capture's middle, in days. */
function daysSinceVerification(c: Capture, p: Prepared): number | null {
  if (!c.referenceVerifiedAt) return null;
  const mid = captureMidpoint(c, p);
  if (mid === null) return null;
  return (mid.getTime() - new Date(`${c.referenceVerifiedAt}T00:00:00Z`).getTime()) / 86_400_000;
}

/** The middle of a capture's readings in wall-clock time (start + mean of first and last t). */
export function captureMidpoint(
  c: Pick<Capture, 'startedAt'>,
  p: Pick<Prepared, 't'>,
): Date | null {
  if (!c.startedAt || p.t.length === 0) return null;
  return new Date(new Date(c.startedAt).getTime() + ((p.t[0] + p.t[p.t.length - 1]) / 2) * 1000);
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
export function reduce(
  c: Capture,
  dut: Dut | null,
  p: Prepared,
  opts: { drift?: DriftModel } = {},
) {
  const notes: string[] = [];
  const driftModel = opts.drift ?? defaultDrift(c);
  if (p.flagged)
    notes.push(`${p.flagged} flagged reading(s) (garbled or timed out) left out of the analysis.`);
  if (p.outliers)
    notes.push(
      `${p.outliers} outlier(s) by robust z > 5 left out of the statistics; raw readings kept.`,
    );
  // Timestamps come from outside (the bench, a CSV): a series whose times run backwards or stand
  // still still reduces; only the gap and drift figures that need ordered times are left out.
  const gaps =
    p.tUnflagged.length >= 2
      ? (tryAnalysis(() => findGaps(p.tUnflagged, p.tau0), notes, 'Gaps') ?? [])
      : [];
  if (gaps.length)
    notes.push(
      `${gaps.length} gap(s) in the timestamps; stability treats the series as contiguous.`,
    );
  const linear = p.t.length >= 3 ? tryAnalysis(() => driftFit(p.t, p.y), notes, 'Drift') : null;
  // Stability and noise identification run on the series with its drift removed (issue 8).
  const detrended = withDrift(p, driftModel, notes);
  const fit = detrended.fit;
  const stab = stabilityOf(detrended.prepared, 'oadev', 'octave');
  const perDay = c.quantity === 'frequency' ? 1e9 : 1;
  const drift = linear
    ? {
        ...linear,
        model: fit ? fit.model : 'none',
        removed: fit !== null,
        ratePerDay: fit ? fit.ratePerDay : linear.slopePerDay,
        rateStderrPerDay: fit ? fit.rateStderrPerDay : linear.stderrPerDay,
        curvaturePerDay2: fit ? fit.curvaturePerDay2 : 0,
        trendSd: fit ? fit.trendSd : null,
        // Frequency: y is fractional, so the rate reads in ppb/day; other quantities in their unit per day.
        rateUnit: c.quantity === 'frequency' ? 'ppb/day' : `${c.unit}/day`,
        rateInUnit: (fit ? fit.ratePerDay : linear.slopePerDay) * perDay,
        rateStderrInUnit: (fit ? fit.rateStderrPerDay : linear.stderrPerDay) * perDay,
      }
    : null;
  const span = p.t.length ? p.t[p.t.length - 1] - p.t[0] + p.tau0 : 0;
  const counter:
    | { kind: 'gated'; counts: number; assumed?: boolean }
    | { kind: 'reciprocal' | 'time-interval'; tRes: number; assumed?: boolean } =
    c.counterType === 'gated'
      ? { kind: 'gated', counts: c.counterResolution ?? 1 }
      : c.counterType
        ? { kind: c.counterType, tRes: c.counterResolution ?? ASSUMED_COUNTER.tRes }
        : { ...ASSUMED_COUNTER, assumed: true };
  let uncertainty = null;
  let usedResolution:
    { kind: 'gated'; counts: number } | { kind: 'reciprocal' | 'time-interval'; tRes: number } =
    counter;
  const perUnit = hzPerUnit(c.unit);
  if (c.quantity === 'frequency' && p.stats && (c.nominal ?? 0) > 0 && perUnit === null) {
    notes.push(
      `No uncertainty budget: a frequency budget needs readings in Hz, kHz, MHz or GHz, not ${c.unit}.`,
    );
  }
  if (c.quantity === 'frequency' && p.stats && (c.nominal ?? 0) > 0 && perUnit !== null) {
    const last = stab.points[stab.points.length - 1];
    const tempco = temperatureCoefficient(dut, c.ambientC);
    // With the drift removed, the scatter about the trend is the repeatability; the drift itself
    // becomes its own line (the mean depends on when the capture stops).
    let stats: { n: number; mean: number; sd: number; sem: number; dof?: number } = p.stats;
    if (fit && p.y.length === p.stats.n) {
      const nominal = c.nominal!;
      let ss = 0;
      let mean = 0;
      for (let i = 0; i < fit.detrended.length; i++) mean += fit.detrended[i];
      mean /= fit.detrended.length;
      for (let i = 0; i < fit.detrended.length; i++) ss += (fit.detrended[i] - mean) ** 2;
      // The residuals about a fitted line (parabola) keep n − 2 (n − 3) degrees of freedom.
      const dof = Math.max(1, fit.detrended.length - 1 - (fit.model === 'quadratic' ? 2 : 1));
      const sd = Math.sqrt(ss / dof) * nominal;
      stats = { n: p.stats.n, mean: p.stats.mean, sd, sem: sd / Math.sqrt(p.stats.n), dof };
    }
    const longTerm = last ? longTermInstability(last, span, notes) : undefined;
    const days = daysSinceVerification(c, p);
    const ageing =
      c.referenceAgeingPerDay !== null && c.referenceAgeingPerDay !== undefined && days !== null
        ? { perDay: c.referenceAgeingPerDay, uPerDay: c.referenceAgeingUPerDay ?? 0, days }
        : undefined;
    if (c.referenceId !== null && c.referenceUncertainty !== null && !ageing) {
      notes.push(
        days === null
          ? 'The reference has no verification date: its ageing since verification is not in the budget.'
          : 'The reference has no ageing rate recorded: its ageing since verification is not in the budget.',
      );
    }
    const budget = uncertaintyBudget({
      stats,
      nominal: c.nominal!,
      unit: c.unit,
      gateTime: c.gateTime,
      span,
      adevAtSpan: longTerm?.dev,
      adevEdf: longTerm?.edf,
      // A noise label the plotted slope does not support is no basis for choosing s/√n: the
      // budget then takes the larger of s/√n and the long-term term (review of issue 8, F1).
      noise: last?.noiseSupported ? last.noise : undefined,
      resolution: (usedResolution = resolutionFor(c, p, counter, notes)),
      reference:
        c.referenceUncertainty !== null
          ? {
              offset: c.referenceOffset ?? 0,
              u: c.referenceUncertainty,
              ...(ageing ? { ageing } : {}),
            }
          : undefined,
      temperature: tempco !== undefined ? { coeffPerC: tempco, uC: THERMOMETER_U_C } : undefined,
      drift: fit
        ? {
            model: fit.model,
            trendSd: fit.trendSd,
            ratePerDay: fit.ratePerDay,
            rateStderrPerDay: fit.rateStderrPerDay,
          }
        : undefined,
    });
    // The statistics are already reference-corrected (prepare); the budget's own mean would
    // apply the correction a second time. Its uncertainty components are what we need.
    uncertainty = { ...budget, mean: p.stats.mean };
  }
  if (c.quantity === 'acceleration' && c.unit === 'mg' && p.stats) {
    // An acceleration capture's own budget: the scatter, the sensor's LSB and the board's pose.
    // The pose is judged for the axis the capture read (its link profile's register; Z otherwise).
    const axis = spiAxisOf(c.linkProfile) ?? 'z';
    uncertainty = accelerationBudget(p.stats, axisOrientation(axis, c.orientation), {
      lsbMg: DEFAULT_ACCEL_LSB_MG,
      orientationErrorDeg: DEFAULT_ORIENTATION_ERROR_DEG,
    });
  }
  const nominal = c.nominal ?? 0;
  const offsetPpm =
    c.quantity === 'frequency' && p.stats && nominal > 0
      ? ((p.stats.mean - nominal) / nominal) * 1e6
      : null;
  const fork = dut?.kind === 'tuning-fork' ? dut.tuningFork() : null;
  const normalizedPpm =
    fork && offsetPpm !== null && c.ambientC !== null
      ? offsetPpm - tuningForkShift(c.ambientC, { B: fork.B, T0: fork.T0 })
      : null;
  if (fork && c.quantity === 'frequency' && c.ambientC === null) {
    notes.push(
      `No ambient temperature was recorded: this tuning fork's mean cannot be taken to its turnover (${fork.T0} °C); a comparison takes the ambient anywhere in ${LAB_AMBIENT_RANGE_C[0]}–${LAB_AMBIENT_RANGE_C[1]} °C and widens U.`,
    );
  }
  const midpoint = captureMidpoint(c, p);
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
    temperature: {
      ambientC: c.ambientC,
      normalizedPpm,
      t0: fork?.T0 ?? TUNING_FORK_T0,
      ...(fork ? { tuningFork: fork } : {}),
    },
    drift,
    midpoint: midpoint ? midpoint.toISOString() : null,
    counter: {
      kind: usedResolution.kind,
      resolution: 'counts' in usedResolution ? usedResolution.counts : usedResolution.tRes,
      assumed: !c.counterType,
    },
    gaps,
    stability: stab,
    uncertainty,
    notes,
  };
}

export type CaptureSummary = ReturnType<typeof reduce>;

/**
 * The summary a finish stores: prepare + reduce over all the capture's readings, and the note on
 * implausible readings. When the analysis refuses the readings (AnalysisError), the reduction of
 * no readings with the counts and the reason as a note, so finishing always succeeds and the
 * readings stay for a later look. `between` runs between the two heavy steps (finish's in-thread
 * path gives the event loop a turn there; an analysis worker needs none).
 */
export async function finishSummary(
  c: Capture,
  dut: Dut | null,
  s: Series,
  between: () => Promise<void> = async () => {},
): Promise<CaptureSummary> {
  let summary: CaptureSummary;
  try {
    const prepared = prepare(c, s);
    await between();
    summary = reduce(c, dut, prepared);
  } catch (err) {
    if (!(err instanceof AnalysisError)) throw err;
    const empty: Series = {
      seq: new Int32Array(0),
      t: new Float64Array(0),
      value: new Float64Array(0),
      flags: new Int16Array(0),
    };
    summary = reduce(c, dut, prepare(c, empty));
    summary.counts = { ...summary.counts, total: s.seq.length };
    summary.notes.push(`Analysis not computed: ${err.message} The readings are kept.`);
  }
  const implausible = implausibleNote(s.flags);
  if (implausible) summary.notes.push(implausible);
  return summary;
}

/** Finished captures never change, so their prepared readings can be kept for repeated analyses. */
const cache = new Map<number, Prepared>();
const CACHE_SIZE = 6;

export async function preparedFor(pool: pg.Pool, c: Capture): Promise<Prepared> {
  // A stalled capture may still take readings: only finished and aborted ones are cached.
  const settled = c.state === 'finished' || c.state === 'aborted';
  const hit = settled ? cache.get(c.id) : undefined;
  if (hit) return hit;
  const p = prepare(c, await loadSeries(pool, c.id));
  if (settled) {
    cache.set(c.id, p);
    if (cache.size > CACHE_SIZE) cache.delete(cache.keys().next().value!);
  }
  return p;
}
