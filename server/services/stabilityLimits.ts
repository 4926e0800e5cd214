import type pg from 'pg';
import { Capture, Dut } from '../models/index.js';
import { NotFoundError } from '../errors.js';
import {
  AnalysisError,
  figureFromPoint,
  mForTau,
  stabilityAtTau,
  stabilityVerdict,
  STABILITY_VERDICT_CONFIDENCE,
  tooShortFor,
  type StabilityAtTau,
} from '../../shared/analysis/index.js';
import type {
  StabilityAtTauWire,
  StabilityJudgement,
} from '../../shared/protocol/stabilityLimit.js';
import {
  defaultDrift,
  preparedFor,
  tau0Of,
  withDrift,
  type CaptureSummary,
} from './captureAnalysis.js';
import { summaryOf } from './summaries.js';
import { captureBaseline } from './baseline.js';

/**
 * A crystal's stability limit, judged per capture at read time from the DUT's current limit: a
 * changed limit (or τ) never leaves a stale verdict behind. σy at the octave τ comes from the
 * stored summary (its OADEV points keep their EDF, so the 95 % interval is re-formed exactly);
 * another τ is computed from the readings, on the series the summary's curve used (default drift
 * removed), and kept for finished captures.
 */

/** The DUT's stability limit (ppb at τ s), or null when none is set. */
export function stabilityLimitOf(dut: Dut): { limitPpb: number; tauS: number } | null {
  const s = dut.quantityLimits?.stability;
  if (!s || s.limit == null || s.tauS === undefined) return null;
  return { limitPpb: s.limit, tauS: s.tauS };
}

/** Figures of settled captures at a non-octave m, by `captureId:m` (a few, most recent kept). */
const computed = new Map<string, StabilityAtTau>();
const COMPUTED_SIZE = 64;

/** σy of one capture at τ (see the module comment). */
export async function stabilityFigureOf(
  pool: pg.Pool,
  c: Capture,
  dut: Dut,
  tauS: number,
): Promise<StabilityAtTauWire> {
  const wire = (r: StabilityAtTau): StabilityAtTauWire => ({
    captureId: c.id,
    figure: r.figure,
    reason: r.reason,
  });
  if (c.quantity !== 'frequency')
    return wire({ figure: null, reason: 'σy(τ) applies to frequency captures only' });
  let summary: CaptureSummary;
  try {
    summary = await summaryOf(pool, c, dut);
  } catch (err) {
    if (err instanceof AnalysisError) return wire({ figure: null, reason: err.message });
    throw err;
  }
  const tau0 = tau0Of(c);
  const used = summary.counts.used;
  const short = tooShortFor(used, tau0, tauS);
  if (short) return wire({ figure: null, reason: short });
  const m = mForTau(tauS, tau0);
  const point = summary.stability.points.find((p) => p.m === m);
  if (point) return wire({ figure: figureFromPoint(point, tauS), reason: null });
  const key = `${c.id}:${m}`;
  const settled = c.state === 'finished' || c.state === 'aborted';
  const hit = settled ? computed.get(key) : undefined;
  if (hit)
    return wire(hit.figure ? { figure: { ...hit.figure, tauRequested: tauS }, reason: null } : hit);
  const notes: string[] = [];
  const { prepared } = withDrift(await preparedFor(pool, c), defaultDrift(c), notes);
  const gateTime =
    prepared.gateTime > 0 && prepared.gateTime < prepared.tau0 ? prepared.gateTime : undefined;
  let r: StabilityAtTau;
  try {
    r = stabilityAtTau(prepared.y, prepared.tau0, tauS, { gateTime });
  } catch (err) {
    if (!(err instanceof AnalysisError)) throw err;
    r = { figure: null, reason: err.message };
  }
  if (settled) {
    computed.set(key, r);
    if (computed.size > COMPUTED_SIZE) computed.delete(computed.keys().next().value!);
  }
  return wire(r);
}

/** The judgement of `c` against the DUT's current stability limit (null: no limit, or not frequency). */
export async function judgeStability(
  pool: pg.Pool,
  c: Capture,
  dut: Dut,
  baseline: Capture | null,
): Promise<StabilityJudgement | null> {
  const lim = stabilityLimitOf(dut);
  if (!lim || c.quantity !== 'frequency') return null;
  const after = await stabilityFigureOf(pool, c, dut, lim.tauS);
  const before =
    baseline && baseline.id !== c.id
      ? await stabilityFigureOf(pool, baseline, dut, lim.tauS)
      : null;
  const verdict = stabilityVerdict(after.figure, lim.limitPpb);
  return {
    limitPpb: lim.limitPpb,
    tauS: lim.tauS,
    confidence: STABILITY_VERDICT_CONFIDENCE,
    after,
    verdict,
    reason: after.figure ? null : `inconclusive: ${after.reason}`,
    before,
  };
}

/** `GET /api/captures/:id/stability-limit`: the capture's stability judgement, with its baseline's figure. */
export async function captureStabilityLimit(
  pool: pg.Pool,
  id: number,
): Promise<{ stability: StabilityJudgement | null }> {
  const c = await Capture.findByPk(id);
  if (!c) throw new NotFoundError('Capture');
  const dut = await Dut.findByPk(c.dutId);
  if (!dut || !stabilityLimitOf(dut) || c.quantity !== 'frequency') return { stability: null };
  if (c.state === 'aborted') return { stability: null };
  const b = await captureBaseline(id);
  const base = b.baseline ? await Capture.findByPk(b.baseline.id) : null;
  return { stability: await judgeStability(pool, c, dut, base) };
}
