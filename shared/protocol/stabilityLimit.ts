import { z } from 'zod';
import { VERDICTS } from '../analysis/verdict.js';

/** σy(τ) at a stability limit's τ, fractional (×1e9 = ppb), with its 95 % χ² interval. */
export const StabilityFigureWire = z.object({
  /** The τ the limit asks for, s. */
  tauRequested: z.number(),
  /** round(τ/τ0), at least 1. */
  m: z.number().int(),
  /** The τ judged, m·τ0, s. */
  tau: z.number(),
  dev: z.number(),
  lo: z.number(),
  hi: z.number(),
  edf: z.number(),
  noise: z.string(),
  noiseSupported: z.boolean(),
});
export type StabilityFigureWire = z.infer<typeof StabilityFigureWire>;

/** One capture's σy at τ, or why there is none (e.g. the capture is too short for τ). */
export const StabilityAtTauWire = z.object({
  captureId: z.number().int(),
  figure: StabilityFigureWire.nullable(),
  reason: z.string().nullable(),
});
export type StabilityAtTauWire = z.infer<typeof StabilityAtTauWire>;

/**
 * A crystal's stability limit judged on one capture: within when the 95 % interval's upper bound
 * ≤ limit, exceeds when its lower bound > limit, otherwise inconclusive (no figure: inconclusive
 * with the reason). Judged on each capture, not as a change; `before` is the baseline capture's
 * figure at the same τ, for information. Always formed from the DUT's current limit.
 */
export const StabilityJudgement = z.object({
  limitPpb: z.number(),
  tauS: z.number(),
  confidence: z.number(),
  after: StabilityAtTauWire,
  verdict: z.enum(VERDICTS),
  /** "inconclusive: capture too short for τ = 1000 s …" or null. */
  reason: z.string().nullable(),
  before: StabilityAtTauWire.nullable(),
});
export type StabilityJudgement = z.infer<typeof StabilityJudgement>;

/** `GET /api/captures/:id/stability-limit`: null when the DUT has no stability limit or the capture is not of frequency. */
export const CaptureStabilityLimit = z.object({ stability: StabilityJudgement.nullable() });
export type CaptureStabilityLimit = z.infer<typeof CaptureStabilityLimit>;
