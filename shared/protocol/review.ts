import { z } from 'zod';

/** Free text a person writes (notes, comments, reasons): no NUL, no lone surrogates, trimmed. */
const Words = (max: number) =>
  z
    .string()
    .trim()
    .max(max, `must be at most ${max} characters`)
    .refine((s) => !s.includes('\u0000'), 'must not contain a NUL character')
    .refine((s) => !/[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/.test(s), 'must be valid Unicode text');

/** `POST /api/studies/:id/submit` */
export const SubmitBody = z.object({ note: Words(2000).optional() }).strict();
export type SubmitBody = z.infer<typeof SubmitBody>;

/** `POST /api/studies/:id/approve` — the password is the signature. */
export const ApproveBody = z
  .object({
    password: z.string().min(1, 'is required: re-enter your password to sign').max(200),
    note: Words(2000).optional(),
  })
  .strict();
export type ApproveBody = z.infer<typeof ApproveBody>;

/** `POST /api/studies/:id/return` — the comment tells the engineer what to change. */
export const ReturnBody = z.object({ comment: Words(4000).pipe(z.string().min(1, 'is required: say what must change')) }).strict();
export type ReturnBody = z.infer<typeof ReturnBody>;

/** `POST /api/studies/:id/reopen` */
export const ReopenBody = z.object({ reason: Words(2000).pipe(z.string().min(1, 'is required: say why the study is reopened')) }).strict();
export type ReopenBody = z.infer<typeof ReopenBody>;

export const REVIEW_ACTIONS = ['start', 'submit', 'approve', 'return', 'reopen'] as const;
export type ReviewAction = (typeof REVIEW_ACTIONS)[number];

/** One step of the review history as the API shows it. */
export interface ReviewEntry {
  id: number;
  revision: number;
  action: ReviewAction;
  fromStatus: string;
  toStatus: string;
  note: string | null;
  at: string;
  actorId: number | null;
  actorName: string | null;
  actorRole: string | null;
}

/** `GET /api/audit` query: filter by user, kind (action or its prefix, e.g. `study` or `study.approve`), date; paged by cursor. */
export const AuditQuery = z.object({
  userId: z.coerce.number().int().positive().max(2_147_483_647).optional(),
  kind: z
    .string()
    .trim()
    .regex(/^[a-z][a-z0-9-]*(\.[a-z0-9-]+)*$/, 'must be an event kind such as study or study.approve')
    .max(60)
    .optional(),
  from: z.coerce.date({ message: 'must be a date' }).optional(),
  to: z.coerce.date({ message: 'must be a date' }).optional(),
  limit: z.coerce.number().int().min(1).max(500).default(100),
  cursor: z.string().regex(/^\d{1,15}$/, 'must be a cursor from a previous page').optional(),
});
export type AuditQuery = z.infer<typeof AuditQuery>;

/** One audit event as the API shows it. */
export interface AuditEntry {
  id: number;
  at: string;
  actorId: number | null;
  actorName: string | null;
  action: string;
  subjectType: string;
  subjectId: number | null;
  details: unknown;
  prevHash: string;
  hash: string;
}

/** `GET /api/audit/verify` */
export interface AuditVerification {
  ok: boolean;
  checked: number;
  firstBroken: { id: number; reason: 'content-changed' | 'link-broken'; message: string } | null;
  headHash: string | null;
}

/** `GET /api/captures/:id/seal` */
export interface SealAnswer {
  captureId: number;
  sha256: string | null;
  readings: number;
  recomputed: string;
  verified: boolean | null;
  sealedAt: string | null;
}

/** `GET /api/outbox` and `?status=` */
export const OutboxQuery = z.object({
  status: z.enum(['queued', 'retrying', 'sent', 'failed']).optional(),
  limit: z.coerce.number().int().min(1).max(500).default(100),
  cursor: z.string().regex(/^\d{1,15}$/, 'must be a cursor from a previous page').optional(),
});

export interface OutboxMessage {
  id: number;
  kind: string;
  to: string;
  subject: string;
  text: string;
  status: 'queued' | 'retrying' | 'sent' | 'failed';
  attempts: number;
  nextAttemptAt: string | null;
  lastError: string | null;
  sentAt: string | null;
  createdAt: string;
}

export interface ReceivedMessage {
  id: number;
  from: string | null;
  to: string;
  subject: string;
  text: string;
  messageId: string | null;
  size: number;
  receivedAt: string;
}

export const ATTACHMENT_OWNERS = ['study', 'checkpoint', 'capture'] as const;
export type AttachmentOwner = (typeof ATTACHMENT_OWNERS)[number];

export interface AttachmentInfo {
  id: number;
  studyId: number;
  ownerType: AttachmentOwner;
  ownerId: number;
  filename: string;
  contentType: string;
  size: number;
  sha256: string;
  uploadedBy: number | null;
  uploaderName?: string | null;
  createdAt: string;
}
