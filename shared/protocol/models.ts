/**
 * The wire shapes of what the API answers: one zod schema per thing the server shows (a user, a
 * study, a DUT, a capture, a stored summary …), each with its inferred type. Responses are JSON,
 * so timestamps are ISO strings and dates `YYYY-MM-DD`; ids are numbers. Objects are not strict:
 * a server may add a field before the schema names it, but it may never drop or change one.
 *
 * Routes combine these in `responses.ts`; the client's `src/api/` takes its types from there.
 */
import { MatrixTiltCell } from './accelerometer.js';
import { StabilityJudgement } from './stabilityLimit.js';
import { QuantityLimitView } from './dutQuantities.js';
import { z } from 'zod';
import { VERDICTS } from '../analysis/verdict.js';
import { NOISE_TYPES } from '../analysis/noise.js';
import { Role } from './roles.js';
import { COUNTER_TYPES, REFERENCE_KINDS, DRIFT_CHOICES } from './uncertainty.js';
import { StudyStatus } from './api.js';
import { Exposure } from './process.js';
import { LinkProfile } from './linkProfile.js';
import { BudgetLine, BudgetWire } from './budget.js';
import { Quantity, STABILITY_KINDS } from './captures.js';
import { CaptureState } from './captureLifecycle.js';
import { CALIBRATION_STATES, CalibrationState, InstrumentOut, ReferenceOut } from './equipment.js';

// ---- one enum per concept -------------------------------------------------------------------

/** A capture's life (`captureLifecycle.ts`): recording, stalled, finished or aborted. */
export { CAPTURE_STATES, CaptureState } from './captureLifecycle.js';

/** The guard-banded decision of a comparison (ILAC-G8, `shared/analysis/verdict.ts`). */
export { VERDICTS };
export const Verdict = z.enum(VERDICTS);
export type Verdict = z.infer<typeof Verdict>;

/** An instrument's or a reference's calibration as the lab sees it today (the one rule: equipment.ts). */
export { CALIBRATION_STATES, CalibrationState };

/** Power-law noise types (NIST SP 1065 Table 3; `shared/analysis/noise.ts`). */
export { NOISE_TYPES };
export const NoiseTypeSchema = z.enum(NOISE_TYPES);

export const DriftModel = z.enum(DRIFT_CHOICES);
export type DriftModel = z.infer<typeof DriftModel>;

export const CounterTypeWire = z.enum(COUNTER_TYPES);
export const ReferenceKindWire = z.enum(REFERENCE_KINDS);

/** An ISO timestamp as JSON carries it. */
export const Timestamp = z.string().min(1);
/** A calendar day, `YYYY-MM-DD`. */
export const Day = z.string().regex(/^\d{4}-\d{2}-\d{2}/);
/** A database id. */
export const Id = z.number().int().positive();
/** An opaque cursor for the next page, null on the last. */
export const NextCursor = z.string().nullable();

// ---- people ---------------------------------------------------------------------------------

export const SessionUser = z.object({ id: Id, email: z.string(), name: z.string(), role: Role });
export type SessionUser = z.infer<typeof SessionUser>;

export const UserRecord = SessionUser.extend({
  active: z.boolean(),
  createdAt: Timestamp,
  lastLoginAt: Timestamp.nullable(),
  mustChangePassword: z.boolean().optional(),
});
export type UserRecord = z.infer<typeof UserRecord>;

// ---- studies, checkpoints, DUTs ---------------------------------------------------------------

export const StudyRecord = z.object({
  id: Id,
  title: z.string(),
  process: z.string().nullable(),
  description: z.string().nullable(),
  status: StudyStatus,
  createdBy: Id.nullable(),
  revision: z.number().int(),
  allowSimulated: z.boolean(),
  submittedBy: Id.nullable(),
  submittedAt: Timestamp.nullable(),
  approvedBy: Id.nullable(),
  approvedAt: Timestamp.nullable(),
  createdAt: Timestamp,
  updatedAt: Timestamp,
  /** Archived: kept with its record, out of the lists (issue 13). */
  archived: z.boolean().optional(),
});
export type StudyRecord = z.infer<typeof StudyRecord>;

export const StudySummary = StudyRecord.extend({
  checkpointCount: z.number().int(),
  dutCount: z.number().int(),
});
export type StudySummary = z.infer<typeof StudySummary>;

export const CheckpointRecord = z.object({
  id: Id,
  studyId: Id,
  name: z.string(),
  order: z.number().int(),
  /** What the parts went through before this checkpoint, by process kind (process.ts). */
  exposure: Exposure.nullable(),
  /** Archived: kept with its captures, out of the matrix and the bench (issue 13). */
  archived: z.boolean().optional(),
});
export type CheckpointRecord = z.infer<typeof CheckpointRecord>;

export const TuningForkParameters = z.object({
  T0: z.number(),
  uT0: z.number(),
  B: z.number(),
  uB: z.number(),
  defaults: z.boolean(),
});

/** A DUT's limit as every answer carries it: symmetric ±limit (null when asymmetric or one-sided), or low/high. */
export const DutLimit = z.object({
  limit: z.number().nullable(),
  limitLow: z.number().nullable(),
  limitHigh: z.number().nullable(),
  limitUnit: z.string(),
});

export const DutRecord = DutLimit.extend({
  id: Id,
  studyId: Id,
  label: z.string(),
  kind: z.string(),
  nominal: z.number(),
  unit: z.string(),
  tuningFork: TuningForkParameters.optional(),
  position: z.string().nullable(),
  serial: z.string().nullable(),
  /** Every quantity's limit of the DUT's kind (shared/protocol/dutQuantities.ts). */
  limits: z.array(QuantityLimitView).optional(),
  /** Archived: kept with its captures, out of the matrix and the bench (issue 13). */
  archived: z.boolean().optional(),
});
export type DutRecord = z.infer<typeof DutRecord>;

export const StudyDetail = StudyRecord.extend({
  checkpoints: z.array(CheckpointRecord),
  duts: z.array(DutRecord),
});
export type StudyDetail = z.infer<typeof StudyDetail>;

// ---- the lab ---------------------------------------------------------------------------------

/** Instruments and references as the API answers them: the equipment's schemas (equipment.ts). */
export const InstrumentRecord = InstrumentOut;
export type InstrumentRecord = InstrumentOut;
export const ReferenceRecord = ReferenceOut;
export type ReferenceRecord = ReferenceOut;

// ---- the analysis as stored and served --------------------------------------------------------

export const Stats = z.object({
  n: z.number(),
  mean: z.number(),
  sd: z.number(),
  sem: z.number(),
  min: z.number(),
  max: z.number(),
  median: z.number(),
  mad: z.number(),
  outliers: z.array(z.number()),
});
export type Stats = z.infer<typeof Stats>;

export const BiasCorrectionWire = z.object({
  kind: z.enum(['dead-time', 'totdev']),
  ratio: z.number(),
});

export const StabilityPointWire = z.object({
  tau: z.number(),
  m: z.number(),
  dev: z.number(),
  lo: z.number(),
  hi: z.number(),
  edf: z.number(),
  n: z.number(),
  noise: NoiseTypeSchema.optional(),
  /** Absent in summaries stored before bias corrections existed. */
  devRaw: z.number().optional(),
  noiseSource: z.enum(['given', 'lag1', 'b1', 'slope', 'carried', 'default']).optional(),
  noiseSupported: z.boolean().optional(),
  slope: z.number().nullable().optional(),
  corrections: z.array(BiasCorrectionWire).optional(),
  uncorrected: z.string().nullable().optional(),
});
export type StabilityPointWire = z.infer<typeof StabilityPointWire>;

export const StabilityWire = z.object({
  kind: z.enum(STABILITY_KINDS),
  tau0: z.number().optional(),
  points: z.array(StabilityPointWire),
  skipped: z.array(z.object({ m: z.number(), reason: z.string() })).optional(),
});
export type StabilityWire = z.infer<typeof StabilityWire>;

export { BudgetLine, BudgetWire };

export const CaptureCounts = z.object({
  total: z.number(),
  used: z.number(),
  flagged: z.number(),
  outliers: z.number(),
});

/** The drift found in a capture and what was removed; older summaries carry fewer fields. */
export const DriftWire = z.looseObject({
  model: DriftModel.optional(),
  removed: z.boolean().optional(),
  ratePerDay: z.number().optional(),
  rateStderrPerDay: z.number().optional(),
  /** 'ppb/day' for frequency, '<unit>/day' otherwise. */
  rateUnit: z.string().optional(),
  rateInUnit: z.number().optional(),
  rateStderrInUnit: z.number().optional(),
});
export type DriftWire = z.infer<typeof DriftWire>;

export const GapWire = z.looseObject({
  index: z.number().optional(),
  start: z.number().optional(),
  end: z.number().optional(),
  missing: z.number().optional(),
});

export const TemperatureWire = z.object({
  ambientC: z.number().nullable(),
  normalizedPpm: z.number().nullable(),
  t0: z.number(),
});

export const CorrectionWire = z.object({
  applied: z.boolean(),
  referenceId: Id.nullable(),
  yRef: z.number(),
  uRef: z.number().nullable(),
  convention: z.string(),
});

/** The cached reduction of a finished capture (`captures.summary`). */
export const CaptureSummary = z.object({
  version: z.number().optional(),
  counts: CaptureCounts,
  stats: Stats.nullable(),
  correction: CorrectionWire,
  offsetPpm: z.number().nullable(),
  temperature: TemperatureWire,
  drift: DriftWire.nullable(),
  gaps: z.array(GapWire),
  stability: StabilityWire,
  uncertainty: BudgetWire.nullable(),
  notes: z.array(z.string()),
});
export type CaptureSummary = z.infer<typeof CaptureSummary>;

/** `GET /api/captures/:id/analysis`: the same figures, for a chosen estimator, τ set and drift. */
export const CaptureAnalysis = CaptureSummary.omit({ version: true }).extend({
  driftModel: DriftModel.optional(),
  counter: z.object({ kind: z.string(), resolution: z.number(), assumed: z.boolean() }).optional(),
  /**
   * What the answer covers: `readings` analysed, the capture's count when asked
   * (`captureReadings`; an open capture's answer may be a few seconds old) and `computedAt`.
   */
  coverage: z
    .object({
      readings: z.number().int(),
      captureReadings: z.number().int(),
      computedAt: z.string(),
    })
    .optional(),
});
export type CaptureAnalysis = z.infer<typeof CaptureAnalysis>;

// ---- captures ----------------------------------------------------------------------------------

export const CaptureTargetWire = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('duration'), seconds: z.number() }),
  z.object({ kind: z.literal('count'), n: z.number() }),
]);

/** A capture as the API shows it (lists leave out `summary` and `linkProfile`). */
export const CaptureRecord = z.object({
  id: Id,
  dutId: Id,
  checkpointId: Id,
  instrumentId: Id.nullable(),
  referenceId: Id.nullable(),
  operatorId: Id.nullable(),
  quantity: Quantity,
  unit: z.string(),
  nominal: z.number().nullable(),
  gateTime: z.number(),
  deadTime: z.number().nullable(),
  ambientC: z.number().nullable(),
  orientation: z.string().nullable(),
  notes: z.string().nullable(),
  tags: z.array(z.string()),
  referenceOffset: z.number().nullable(),
  referenceUncertainty: z.number().nullable(),
  /** Copied from the reference and the instrument when the capture started. */
  referenceVerifiedAt: Day.nullable(),
  referenceAgeingPerDay: z.number().nullable(),
  referenceAgeingUPerDay: z.number().nullable(),
  counterType: CounterTypeWire.nullable(),
  counterResolution: z.number().nullable(),
  linkProfile: LinkProfile.nullable().optional(),
  state: CaptureState,
  startedAt: Timestamp,
  endedAt: Timestamp.nullable(),
  readingCount: z.number().int(),
  highestSeq: z.number().int(),
  summary: CaptureSummary.nullable().optional(),
  plannedMinutes: z.number().nullable(),
  /** Recorded from a simulator (set when the capture was created, never changed). */
  simulated: z.boolean(),
  target: CaptureTargetWire.nullable(),
  sealSha256: z.string().nullable(),
  sealedAt: Timestamp.nullable(),
  /** A sealed reading was updated or deleted after the capture finished (the seal route says more). */
  sealBroken: z.boolean(),
  /** When readings last arrived, when the stall sweep marked it, why and by whom it was aborted (issue 13). */
  lastReadingAt: Timestamp.nullable().optional(),
  stalledAt: Timestamp.nullable().optional(),
  abortReason: z.string().nullable().optional(),
  abortedBy: Id.nullable().optional(),
  /** Left out of the evidence by a lead, with the reason (issue 13; null while it counts). */
  excluded: z
    .object({ at: Timestamp, by: Id.nullable(), reason: z.string() })
    .nullable()
    .optional(),
});
export type CaptureRecord = z.infer<typeof CaptureRecord>;

const Named = z.object({ id: Id, name: z.string() });

/** One capture with the names its page needs (study › checkpoint › DUT, operator, instrument, reference). */
export const CaptureDetail = CaptureRecord.extend({
  study: StudyRecord.pick({ id: true, title: true, status: true }).nullable(),
  dut: DutRecord.nullable(),
  checkpoint: CheckpointRecord.nullable(),
  operator: Named.nullable(),
  instrument: Named.nullable(),
  reference: Named.nullable(),
});
export type CaptureDetail = z.infer<typeof CaptureDetail>;

/**
 * One row of `GET /api/captures`: the record (without its summary and link profile) with the
 * names a list shows, joined by the server so the browser never fetches them row by row.
 */
export const CaptureListItem = CaptureRecord.extend({
  study: StudyRecord.pick({ id: true, title: true }).nullable(),
  dut: DutRecord.pick({ id: true, label: true }).nullable(),
  checkpoint: Named.nullable(),
  operator: Named.nullable(),
});
export type CaptureListItem = z.infer<typeof CaptureListItem>;

/** A stored reading; `flags` only when non-zero. */
export const ReadingWire = z.object({
  seq: z.number().int(),
  t: z.number(),
  value: z.number(),
  flags: z.number().int().optional(),
});
export type ReadingWire = z.infer<typeof ReadingWire>;

// ---- comparisons and the matrix ----------------------------------------------------------------

export const CONDITION_KEYS = [
  'reference',
  'gate',
  'instrument',
  'orientation',
  'ambient',
  'simulated',
] as const;
const ConditionValue = z.union([z.string(), z.number(), z.boolean()]).nullable();
export const ConditionMismatchWire = z.object({
  key: z.enum(CONDITION_KEYS),
  message: z.string(),
  before: ConditionValue,
  after: ConditionValue,
});
export type ConditionMismatchWire = z.infer<typeof ConditionMismatchWire>;

const ComparisonSide = z.object({
  id: Id,
  mean: z.number(),
  checkpointId: Id,
  ambientC: z.number().nullable(),
});

/**
 * What a comparison and a matrix cell both show: Δ with its expanded uncertainty, the DUT's limit
 * (also in the quantity's own unit), the guard-banded verdict and the conditions that differ.
 */
const ComparisonFigures = DutLimit.extend({
  delta: z.number(),
  expandedUncertainty: z.number(),
  k: z.number(),
  effectiveDof: z.number().nullable(),
  coverage: z.string(),
  limitInUnit: z.number().nullable(),
  limitLowInUnit: z.number().nullable(),
  limitHighInUnit: z.number().nullable(),
  verdict: Verdict,
  significant: z.boolean(),
  conditions: z.array(ConditionMismatchWire),
});

/** `GET /api/comparisons`: Δ = after − before with its own budget and the guard-banded verdict. */
export const ComparisonWire = ComparisonFigures.extend({
  deltaPpm: z.number().optional(),
  deltaPpb: z.number().optional(),
  u: z.number(),
  referenceCorrelated: z.boolean(),
  budget: BudgetWire,
  notes: z.array(z.string()),
  temperatureNormalised: z.boolean().optional(),
  before: ComparisonSide,
  after: ComparisonSide,
  dut: DutRecord,
});
export type ComparisonWire = z.infer<typeof ComparisonWire>;

export const MatrixCellCapture = z.object({
  id: Id,
  readingCount: z.number().int(),
  ambientC: z.number().nullable(),
  mean: z.number().nullable(),
  offsetPpm: z.number().nullable(),
  simulated: z.boolean(),
  sealBroken: z.boolean(),
  /** A lead chose this capture for the cell; otherwise it is the latest valid one (issue 13). */
  chosen: z.boolean().optional(),
});

/** A cell's comparison with the baseline capture `before` (no budget: the comparison route has it). */
export const MatrixCellComparison = ComparisonFigures.extend({
  before: Id,
  deltaPpm: z.number().nullable(),
});

export const MatrixCell = z.object({
  checkpointId: Id,
  capture: MatrixCellCapture.nullable(),
  comparison: MatrixCellComparison.nullable(),
  /** Why this cell could not be compared (the rest of the matrix still is). */
  problem: z.string().optional(),
  /** An accelerometer's tilt-check result at this checkpoint and its change against the baseline's. */
  tiltCheck: MatrixTiltCell.nullable().optional(),
  /** A crystal's stability limit judged on this cell's capture (σy at the limit's τ, 95 % interval). */
  stability: StabilityJudgement.nullable().optional(),
});

export const StudyMatrix = z.object({
  studyId: Id,
  checkpoints: z.array(CheckpointRecord),
  rows: z.array(z.object({ dut: DutRecord, cells: z.array(MatrixCell) })),
});
export type StudyMatrix = z.infer<typeof StudyMatrix>;
