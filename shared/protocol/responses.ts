/**
 * What every API route answers: `RESPONSES` maps each line of `ROUTES` (roles.ts) to the zod
 * schema of its success body, or says it answers no JSON (`no-content`, `csv`, `file`). The server
 * types its handlers by it (`reply()` in server/middleware/responses.ts) and, under test, checks
 * every JSON answer against it, so a drift fails a test; the client's `src/api/` takes its types
 * from it. A new route adds its line here too (tests/unit/contract.test.ts checks that none lacks one).
 */
import { z } from 'zod';
import type { RouteKey } from './roles.js';
import { ApiErrorBody } from './api.js';
import {
  AttachmentInfo,
  AuditEntry,
  AuditVerification,
  OutboxMessage,
  ReceivedMessage,
  ReviewEntry,
  SealAnswer,
  MailStatus,
} from './review.js';
import { CaptureImportResult, ImportProgress } from './importCsv.js';
import {
  CalibrationHistory,
  CalibrationStatus,
  InstrumentCalibrated,
  ReferenceCalibrated,
} from './equipment.js';
import { CaptureBaseline, TiltCheckList, TiltCheckResponse } from './accelerometer.js';
import { CaptureStabilityLimit } from './stabilityLimit.js';
import { LinkProfile } from './linkProfile.js';
import {
  CaptureExclusionResult,
  CellCaptures,
  CellChoiceResult,
  StudyEditResult,
} from './studyEdit.js';
import { STABILITY_KINDS } from './captures.js';
import {
  BudgetWire,
  CalibrationState,
  CaptureAnalysis,
  CaptureDetail,
  CaptureListItem,
  CaptureRecord,
  CheckpointRecord,
  ComparisonWire,
  DutRecord,
  Id,
  InstrumentRecord,
  NextCursor,
  ReadingWire,
  ReferenceRecord,
  SessionUser,
  StabilityWire,
  Stats,
  StudyDetail,
  StudyMatrix,
  StudyRecord,
  StudySummary,
  Timestamp,
  UserRecord,
  Day,
} from './models.js';

// ---- auth and users ---------------------------------------------------------------------------

export const HealthResponse = z.object({
  status: z.enum(['ok', 'degraded']),
  database: z.object({ ok: z.boolean(), latencyMs: z.number().optional() }),
  version: z.string(),
});
export type HealthResponse = z.infer<typeof HealthResponse>;

export const LoginResponse = z.object({
  token: z.string(),
  user: SessionUser,
  /** Set after an admin reset: a new password must be chosen before anything else. */
  mustChangePassword: z.boolean(),
});
export type LoginResponse = z.infer<typeof LoginResponse>;

export const MeResponse = z.object({ user: SessionUser, mustChangePassword: z.boolean() });
export type MeResponse = z.infer<typeof MeResponse>;

export const UserList = z.object({ users: z.array(UserRecord), nextCursor: NextCursor });
export const UserResponse = z.object({ user: UserRecord });

// ---- studies ----------------------------------------------------------------------------------

export const StudyList = z.object({ studies: z.array(StudySummary), nextCursor: NextCursor });
export type StudyList = z.infer<typeof StudyList>;

// ---- the lab ----------------------------------------------------------------------------------

export const InstrumentList = z.object({
  instruments: z.array(InstrumentRecord),
  nextCursor: NextCursor,
});
export const InstrumentResponse = z.object({ instrument: InstrumentRecord });
export const LinkProfileResponse = z.object({ linkProfile: LinkProfile });
export const ReferenceList = z.object({
  references: z.array(ReferenceRecord),
  nextCursor: NextCursor,
});
export const ReferenceResponse = z.object({ reference: ReferenceRecord });
export const DutResponse = z.object({ dut: DutRecord });

/** A capture recording now, with the names a list needs. */
export const OnAirCapture = CaptureRecord.pick({
  id: true,
  dutId: true,
  checkpointId: true,
  startedAt: true,
}).extend({
  readings: z.number().int(),
  dutLabel: z.string(),
  checkpointName: z.string(),
  studyTitle: z.string(),
  studyId: Id,
  operator: z.string().nullable(),
});
export type OnAirCapture = z.infer<typeof OnAirCapture>;

export const DashboardResponse = z.object({
  counts: z.object({
    studies: z.number().int(),
    checkpoints: z.number().int(),
    duts: z.number().int(),
    instruments: z.number().int(),
    references: z.number().int(),
    captures: z.number().int(),
    users: z.number().int(),
  }),
  /** Instruments and references whose calibration needs attention (the server's one rule). */
  calibration: z.array(
    z.object({
      subject: z.enum(['instrument', 'reference']),
      id: Id,
      name: z.string(),
      kind: z.string(),
      calibrationDue: Day.nullable(),
      state: CalibrationState,
      calibration: CalibrationStatus,
    }),
  ),
  live: z.array(OnAirCapture),
});
export type DashboardResponse = z.infer<typeof DashboardResponse>;

// ---- captures ---------------------------------------------------------------------------------

/** Lists stay light: no stored summary and no link profile. */
export const CaptureList = z.object({ captures: z.array(CaptureListItem), nextCursor: NextCursor });
export type CaptureList = z.infer<typeof CaptureList>;

export const IngestResponse = z.object({
  accepted: z.number().int(),
  duplicates: z.number().int(),
  highestSeq: z.number().int(),
});
export type IngestResponse = z.infer<typeof IngestResponse>;

/** Raw pages carry `nextFrom` (null on the last); decimated answers do not. */
export const ReadingsPage = z.object({
  readings: z.array(ReadingWire),
  decimated: z.boolean(),
  nextFrom: z.number().int().nullable().optional(),
});
export type ReadingsPage = z.infer<typeof ReadingsPage>;

export const OverlayCurve = z.object({
  captureId: Id,
  dut: DutRecord.pick({ id: true, label: true, unit: true, kind: true, studyId: true }).nullable(),
  checkpoint: CheckpointRecord.pick({ id: true, name: true, order: true }).nullable(),
  readingCount: z.number().int(),
  startedAt: Timestamp,
  stability: StabilityWire,
});
export const OverlayResponse = z.object({
  kind: z.enum(STABILITY_KINDS),
  curves: z.array(OverlayCurve),
});
export type OverlayResponse = z.infer<typeof OverlayResponse>;

// ---- review and the record -------------------------------------------------------------------

export const ReviewsResponse = z.object({
  reviews: z.array(ReviewEntry),
  revisions: z.array(
    z.object({
      revision: z.number().int(),
      approvedAt: Timestamp,
      approvedBy: Id.nullable(),
      approvedByName: z.string().nullable(),
    }),
  ),
});
export type ReviewsResponse = z.infer<typeof ReviewsResponse>;

export const AuditPage = z.object({ events: z.array(AuditEntry), nextCursor: NextCursor });
export type AuditPage = z.infer<typeof AuditPage>;

export const AttachmentList = z.object({ attachments: z.array(AttachmentInfo) });
export const OutboxPage = z.object({ messages: z.array(OutboxMessage), nextCursor: NextCursor });
export const ReceivedPage = z.object({
  messages: z.array(ReceivedMessage),
  nextCursor: NextCursor,
});
export const RetryResponse = z.object({ id: Id, status: MailStatus });

export const ReportCapture = CaptureRecord.pick({
  id: true,
  dutId: true,
  checkpointId: true,
  startedAt: true,
  endedAt: true,
  readingCount: true,
  gateTime: true,
  ambientC: true,
  orientation: true,
  instrumentId: true,
  referenceId: true,
  referenceOffset: true,
  referenceUncertainty: true,
  notes: true,
}).extend({
  /** The operator's name. */
  operator: z.string().nullable(),
  seal: z.object({
    sha256: z.string().nullable(),
    recomputed: z.string(),
    verified: z.boolean().nullable(),
    readings: z.number().int(),
  }),
  stats: Stats.nullable(),
  offsetPpm: z.number().nullable(),
  uncertainty: BudgetWire.nullable(),
  stability: StabilityWire.nullable(),
  summaryNotes: z.array(z.string()),
});
export type ReportCapture = z.infer<typeof ReportCapture>;

/** The study report: everything a printed record needs, as the server read it (approved revisions as approved). */
export const StudyReport = z.object({
  kind: z.literal('driftbench-study-report'),
  version: z.number().int(),
  generatedAt: Timestamp,
  study: StudyRecord.pick({
    id: true,
    title: true,
    process: true,
    description: true,
    status: true,
    revision: true,
    createdAt: true,
    submittedAt: true,
    approvedAt: true,
  }).extend({
    createdBy: z.string().nullable(),
    submittedBy: z.string().nullable(),
    approvedBy: z.string().nullable(),
  }),
  checkpoints: z.array(CheckpointRecord),
  duts: z.array(DutRecord),
  instruments: z.array(
    InstrumentRecord.pick({
      id: true,
      name: true,
      kind: true,
      maker: true,
      model: true,
      serial: true,
      calibrationDue: true,
      calibrationState: true,
    }).extend({
      /** The calibration rule's answer when the report was built; absent in reports stored before. */
      calibration: InstrumentRecord.shape.calibration.optional(),
    }),
  ),
  references: z.array(
    ReferenceRecord.pick({
      id: true,
      name: true,
      nominalHz: true,
      fractionalOffset: true,
      standardUncertainty: true,
      verifiedBy: true,
      verifiedAt: true,
    }).extend({
      /** As the instruments' (absent in reports stored before they were added). */
      calibrationDue: ReferenceRecord.shape.calibrationDue.optional(),
      calibration: ReferenceRecord.shape.calibration.optional(),
    }),
  ),
  matrix: StudyMatrix,
  captures: z.array(ReportCapture),
  comparisons: z.array(
    z.object({
      dutId: Id,
      checkpointId: Id,
      result: ComparisonWire.omit({ conditions: true }).optional(),
      problem: z.string().optional(),
    }),
  ),
  reviews: z.array(ReviewEntry),
  decisionRule: z.string(),
});
export type StudyReport = z.infer<typeof StudyReport>;

// ---- the table --------------------------------------------------------------------------------

export { ApiErrorBody };

/** A route that answers no JSON: 204, a CSV download, or a stored file's bytes. */
export type NonJson = 'no-content' | 'csv' | 'file';
export type ResponseSpec = z.ZodType | NonJson;

/**
 * The success body of every route in `ROUTES`. Error answers of every route use
 * {@link ApiErrorBody}.
 */
export const RESPONSES = {
  'GET /api/health': HealthResponse,
  'POST /api/auth/login': LoginResponse,
  'GET /api/auth/me': MeResponse,
  'POST /api/auth/password': LoginResponse,
  'POST /api/auth/logout': 'no-content',
  'GET /api/users': UserList,
  'POST /api/users': UserResponse,
  'PATCH /api/users/:id': UserResponse,
  'POST /api/users/:id/password-reset': UserResponse,
  'GET /api/studies': StudyList,
  'POST /api/studies': StudyDetail,
  'GET /api/studies/:id': StudyDetail,
  'GET /api/studies/:id/matrix': StudyMatrix,
  'POST /api/studies/:id/checkpoints': CheckpointRecord,
  'POST /api/studies/:id/duts': DutRecord,
  'GET /api/instruments': InstrumentList,
  'POST /api/instruments': InstrumentResponse,
  'GET /api/instruments/:id': InstrumentResponse,
  'PATCH /api/instruments/:id': InstrumentResponse,
  'PUT /api/instruments/:id/link-profile': LinkProfileResponse,
  'DELETE /api/instruments/:id/link-profile': 'no-content',
  'GET /api/references': ReferenceList,
  'POST /api/references': ReferenceResponse,
  'PATCH /api/references/:id': ReferenceResponse,
  'GET /api/instruments/:id/calibrations': CalibrationHistory,
  'POST /api/instruments/:id/calibrations': InstrumentCalibrated,
  'POST /api/instruments/:id/away': InstrumentResponse,
  'POST /api/instruments/:id/retire': InstrumentResponse,
  'POST /api/instruments/:id/reinstate': InstrumentResponse,
  'GET /api/references/:id': ReferenceResponse,
  'GET /api/references/:id/calibrations': CalibrationHistory,
  'POST /api/references/:id/calibrations': ReferenceCalibrated,
  'POST /api/references/:id/away': ReferenceResponse,
  'POST /api/references/:id/retire': ReferenceResponse,
  'POST /api/references/:id/reinstate': ReferenceResponse,
  'POST /api/references/:id/lab-default': ReferenceResponse,
  'PATCH /api/duts/:id': DutResponse,
  'POST /api/duts/:id/tilt-checks': TiltCheckResponse,
  'GET /api/duts/:id/tilt-checks': TiltCheckList,
  'GET /api/captures/:id/baseline': CaptureBaseline,
  'GET /api/captures/:id/stability-limit': CaptureStabilityLimit,
  'PATCH /api/studies/:id/settings': StudyRecord,
  'GET /api/dashboard': DashboardResponse,
  'GET /api/captures': CaptureList,
  'POST /api/captures': CaptureRecord,
  'POST /api/captures/import': CaptureImportResult,
  'GET /api/captures/import/progress/:key': ImportProgress,
  'GET /api/captures/stability': OverlayResponse,
  'GET /api/captures/:id/export.csv': 'csv',
  'GET /api/studies/:id/captures.csv': 'csv',
  'GET /api/captures/:id': CaptureDetail,
  'PATCH /api/captures/:id': CaptureRecord,
  'POST /api/captures/:id/readings': IngestResponse,
  'POST /api/captures/:id/finish': CaptureRecord,
  'POST /api/captures/:id/abort': CaptureRecord,
  'GET /api/captures/:id/readings': ReadingsPage,
  'GET /api/captures/:id/readings.csv': 'csv',
  'GET /api/captures/:id/analysis': CaptureAnalysis,
  'GET /api/comparisons': ComparisonWire,
  'POST /api/studies/:id/start': StudyDetail,
  'POST /api/studies/:id/submit': StudyDetail,
  'POST /api/studies/:id/approve': StudyDetail,
  'POST /api/studies/:id/return': StudyDetail,
  'POST /api/studies/:id/reopen': StudyDetail,
  'GET /api/studies/:id/reviews': ReviewsResponse,
  'GET /api/studies/:id/audit': AuditPage,
  'GET /api/studies/:id/report': StudyReport,
  'GET /api/studies/:id/attachments': AttachmentList,
  'POST /api/studies/:id/attachments': AttachmentInfo,
  'GET /api/checkpoints/:id/attachments': AttachmentList,
  'POST /api/checkpoints/:id/attachments': AttachmentInfo,
  'GET /api/captures/:id/attachments': AttachmentList,
  'POST /api/captures/:id/attachments': AttachmentInfo,
  'GET /api/captures/:id/seal': SealAnswer,
  'GET /api/attachments/:id': 'file',
  'DELETE /api/attachments/:id': 'no-content',
  'GET /api/audit': AuditPage,
  'GET /api/audit/verify': AuditVerification,
  'GET /api/outbox': OutboxPage,
  'GET /api/outbox/received': ReceivedPage,
  'POST /api/outbox/:id/retry': RetryResponse,
  // Editing with history (issue 13 part B; shared/protocol/studyEdit.ts).
  'PATCH /api/studies/:id': StudyEditResult,
  'DELETE /api/studies/:id': 'no-content',
  'POST /api/studies/:id/checkpoints/order': z.object({ checkpoints: z.array(CheckpointRecord) }),
  'PATCH /api/checkpoints/:id': CheckpointRecord,
  'DELETE /api/checkpoints/:id': 'no-content',
  'DELETE /api/duts/:id': 'no-content',
  'GET /api/studies/:id/cells': CellCaptures,
  'PUT /api/studies/:id/cells': CellChoiceResult,
  'POST /api/captures/:id/exclude': CaptureExclusionResult,
  'POST /api/captures/:id/include': CaptureExclusionResult,
} as const satisfies Partial<Record<RouteKey, ResponseSpec>>;

export type ResponseKey = keyof typeof RESPONSES;
/** The JSON body a route answers, as the client receives it. */
export type ResponseOf<K extends ResponseKey> = (typeof RESPONSES)[K] extends z.ZodType
  ? z.infer<(typeof RESPONSES)[K]>
  : never;
/** The JSON-answering routes. */
export type JsonRouteKey = {
  [K in ResponseKey]: (typeof RESPONSES)[K] extends z.ZodType ? K : never;
}[ResponseKey];

/** The spec of a route, or undefined when the table has none (a test fails on that). */
export function responseSpec(key: string): ResponseSpec | undefined {
  return (RESPONSES as Record<string, ResponseSpec>)[key];
}
