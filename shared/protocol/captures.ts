import { z } from 'zod';
import { STABILITY_KINDS, type StabilityKind } from '../analysis/taus.js';
import { DRIFT_CHOICES } from './uncertainty.js';
import { Text } from './text.js';
import { LinkProfile } from './linkProfile.js';
import { CaptureState } from './captureLifecycle.js';

export const QUANTITIES = ['frequency', 'acceleration', 'voltage', 'counts'] as const;
export const Quantity = z.enum(QUANTITIES);
export type Quantity = z.infer<typeof Quantity>;

export const ORIENTATIONS = [
  'flat',
  'on-edge',
  'inverted',
  'x-up',
  'x-down',
  'y-up',
  'y-down',
  'z-up',
  'z-down',
  'other',
] as const;

/** What the bench planned for a capture: run for a duration (capture seconds) or take n readings. */
export const CaptureTarget = z.discriminatedUnion('kind', [
  z.object({
    kind: z.literal('duration'),
    seconds: z.number().finite().positive().max(31_536_000),
  }),
  z.object({ kind: z.literal('count'), n: z.number().int().min(1).max(1_000_000_000) }),
]);
export type CaptureTarget = z.infer<typeof CaptureTarget>;

/** The body of `POST /api/captures`: what a capture binds to and the conditions it ran under. */
export const CaptureCreate = z.object({
  dutId: z.number().int().positive(),
  checkpointId: z.number().int().positive(),
  quantity: Quantity,
  unit: Text({ min: 1, max: 20 }),
  nominal: z.number().finite().positive().optional(),
  gateTime: z
    .number()
    .finite()
    .min(0.001, 'must be at least 1 ms')
    .max(1000, 'must be at most 1000 s'),
  deadTime: z.number().finite().min(0).max(1000).optional(),
  instrumentId: z.number().int().positive().optional(),
  referenceId: z.number().int().positive().optional(),
  ambientC: z.number().finite().min(-60).max(150).optional(),
  orientation: z.enum(ORIENTATIONS).optional(),
  /** How long the capture is planned to run; its operator is e-mailed when it is left open longer. */
  plannedMinutes: z.number().int().min(1).max(525_600).optional(),
  notes: Text({ max: 5000, trim: false }).optional(),
  tags: z
    .array(Text({ min: 1, max: 60 }))
    .max(20)
    .optional(),
  /** The link profile the capture ran with: the same schema as an instrument's (a few hundred bytes). */
  linkProfile: LinkProfile.optional(),
  /** Recorded from a simulator (also implied by a simulator link profile); stored on the capture for good. */
  simulated: z.boolean().optional(),
  /** What the bench planned, for watchers' progress and time left (none when the operator stops it). */
  target: CaptureTarget.optional(),
});
export type CaptureCreate = z.infer<typeof CaptureCreate>;

export const CapturePatch = z
  .object({
    notes: Text({ max: 5000, trim: false }).optional(),
    tags: z
      .array(Text({ min: 1, max: 60 }))
      .max(20)
      .optional(),
    ambientC: z.number().finite().min(-60).max(150).optional(),
  })
  .strict();
export type CapturePatch = z.infer<typeof CapturePatch>;

/** Most readings one batch may carry. */
export const MAX_BATCH = 20_000;

/** One reading as the bench sends it: its sequence number from 0, seconds since capture start, the value, flags. */
export interface ReadingIn {
  seq: number;
  t: number;
  value: number;
  flags?: number;
}

export interface IngestResult {
  accepted: number;
  duplicates: number;
  highestSeq: number;
}

/** `?studyId&dutId&checkpointId&state` of GET /api/captures (each optional; paging adds limit and cursor). */
export const CaptureListFilter = z.object({
  studyId: z.coerce.number().int().positive().optional(),
  dutId: z.coerce.number().int().positive().optional(),
  checkpointId: z.coerce.number().int().positive().optional(),
  state: CaptureState.optional(),
});
export type CaptureListFilter = z.infer<typeof CaptureListFilter>;

export const ReadingsQuery = z.object({
  from: z.coerce.number().int().min(0).optional(),
  to: z.coerce.number().int().min(0).optional(),
  maxPoints: z.coerce.number().int().min(10).max(100_000).optional(),
});

// The estimators have one list, beside their science.
export { STABILITY_KINDS, type StabilityKind };

export const AnalysisQuery = z.object({
  kind: z.enum(STABILITY_KINDS).default('oadev'),
  taus: z.enum(['octave', 'decade', 'all']).default('octave'),
  confidence: z.coerce.number().min(0.5).max(0.999).optional(),
  /** Drift removed before stability and the budget; default linear for frequency, none otherwise. */
  drift: z.enum(DRIFT_CHOICES).optional(),
});

export const ComparisonQuery = z.object({
  before: z.coerce.number().int().positive(),
  after: z.coerce.number().int().positive(),
});

/**
 * Checks a readings batch by hand (a schema library is too slow for 20,000 items on the hot
 * path). Returns the index and reason of the first bad reading, or null when all are good.
 */
export function findBadReading(readings: unknown): { index: number; reason: string } | null {
  if (!Array.isArray(readings)) return { index: -1, reason: 'readings must be an array' };
  if (readings.length > MAX_BATCH)
    return { index: MAX_BATCH, reason: `a batch holds at most ${MAX_BATCH} readings` };
  for (let i = 0; i < readings.length; i++) {
    const r = readings[i] as Partial<ReadingIn> | null;
    if (typeof r !== 'object' || r === null)
      return { index: i, reason: 'reading must be an object' };
    if (
      typeof r.seq !== 'number' ||
      !Number.isInteger(r.seq) ||
      r.seq < 0 ||
      r.seq > 2_147_483_647
    ) {
      return { index: i, reason: 'seq must be a whole number from 0' };
    }
    if (typeof r.t !== 'number' || !Number.isFinite(r.t))
      return { index: i, reason: 't must be a finite number of seconds' };
    if (typeof r.value !== 'number' || !Number.isFinite(r.value))
      return { index: i, reason: 'value must be a finite number' };
    if (
      r.flags !== undefined &&
      (typeof r.flags !== 'number' || !Number.isInteger(r.flags) || r.flags < 0 || r.flags > 32767)
    ) {
      return { index: i, reason: 'flags must be a whole number from 0 to 32767' };
    }
  }
  return null;
}
