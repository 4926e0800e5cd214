import { z } from 'zod';

/** Free text a person writes (notes, comments, reasons): no NUL, no lone surrogates, trimmed. */
const Words = (max: number) =>
  z
    .string()
    .trim()
    .max(max, `must be at most ${max} characters`)
    .refine((s) => !s.includes('\u0000'), 'must not contain a NUL character')
    .refine(
      (s) => !/[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/.test(s),
      'must be valid Unicode text',
    );

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
export const ReturnBody = z
  .object({ comment: Words(4000).pipe(z.string().min(1, 'is required: say what must change')) })
  .strict();
export type ReturnBody = z.infer<typeof ReturnBody>;

/** `POST /api/studies/:id/reopen` */
export const ReopenBody = z
  .object({
    reason: Words(2000).pipe(z.string().min(1, 'is required: say why the study is reopened')),
  })
  .strict();
export type ReopenBody = z.infer<typeof ReopenBody>;

export const REVIEW_ACTIONS = ['start', 'submit', 'approve', 'return', 'reopen'] as const;
export type ReviewAction = (typeof REVIEW_ACTIONS)[number];

/** One step of the review history as the API shows it. */
export const ReviewEntry = z.object({
  id: z.number().int(),
  revision: z.number().int(),
  action: z.enum(REVIEW_ACTIONS),
  fromStatus: z.string(),
  toStatus: z.string(),
  note: z.string().nullable(),
  at: z.string(),
  actorId: z.number().int().nullable(),
  actorName: z.string().nullable(),
  actorRole: z.string().nullable(),
});
export type ReviewEntry = z.infer<typeof ReviewEntry>;

/** `GET /api/audit` query: filter by user, kind (action or its prefix, e.g. `study` or `study.approve`), date; paged by cursor. */
export const AuditQuery = z.object({
  userId: z.coerce.number().int().positive().max(2_147_483_647).optional(),
  kind: z
    .string()
    .trim()
    .regex(
      /^[a-z][a-z0-9-]*(\.[a-z0-9-]+)*$/,
      'must be an event kind such as study or study.approve',
    )
    .max(60)
    .optional(),
  from: z.coerce.date({ message: 'must be a date' }).optional(),
  to: z.coerce.date({ message: 'must be a date' }).optional(),
  limit: z.coerce.number().int().min(1).max(500).default(100),
  cursor: z
    .string()
    .regex(/^\d{1,15}$/, 'must be a cursor from a previous page')
    .optional(),
});
export type AuditQuery = z.infer<typeof AuditQuery>;

/** One audit event as the API shows it. */
export const AuditEntry = z.object({
  id: z.number().int(),
  at: z.string(),
  actorId: z.number().int().nullable(),
  actorName: z.string().nullable(),
  action: z.string(),
  subjectType: z.string(),
  subjectId: z.number().int().nullable(),
  details: z.unknown(),
  prevHash: z.string(),
  hash: z.string(),
});
export type AuditEntry = z.infer<typeof AuditEntry>;

/** `GET /api/audit/verify` */
export const AuditVerification = z.object({
  ok: z.boolean(),
  checked: z.number().int(),
  firstBroken: z
    .object({
      id: z.number().int(),
      reason: z.enum(['content-changed', 'link-broken']),
      message: z.string(),
    })
    .nullable(),
  headHash: z.string().nullable(),
});
export type AuditVerification = z.infer<typeof AuditVerification>;

/** `GET /api/captures/:id/seal` */
export const SealAnswer = z.object({
  captureId: z.number().int(),
  sha256: z.string().nullable(),
  readings: z.number().int(),
  recomputed: z.string(),
  verified: z.boolean().nullable(),
  sealedAt: z.string().nullable(),
  /** The readings' partition was archived: the seal cannot be checked until it is attached back. */
  archived: z.boolean().optional(),
});
export type SealAnswer = z.infer<typeof SealAnswer>;

export const MAIL_STATUSES = ['queued', 'retrying', 'sent', 'failed'] as const;
export const MailStatus = z.enum(MAIL_STATUSES);

/** `GET /api/outbox` and `?status=` */
export const OutboxQuery = z.object({
  status: MailStatus.optional(),
  limit: z.coerce.number().int().min(1).max(500).default(100),
  cursor: z
    .string()
    .regex(/^\d{1,15}$/, 'must be a cursor from a previous page')
    .optional(),
});

export const OutboxMessage = z.object({
  id: z.number().int(),
  kind: z.string(),
  to: z.string(),
  subject: z.string(),
  text: z.string(),
  status: MailStatus,
  attempts: z.number().int(),
  nextAttemptAt: z.string().nullable(),
  lastError: z.string().nullable(),
  sentAt: z.string().nullable(),
  createdAt: z.string(),
});
export type OutboxMessage = z.infer<typeof OutboxMessage>;

export const ReceivedMessage = z.object({
  id: z.number().int(),
  from: z.string().nullable(),
  to: z.string(),
  subject: z.string(),
  text: z.string(),
  messageId: z.string().nullable(),
  size: z.number().int(),
  receivedAt: z.string(),
});
export type ReceivedMessage = z.infer<typeof ReceivedMessage>;

export const ATTACHMENT_OWNERS = ['study', 'checkpoint', 'capture'] as const;
export type AttachmentOwner = (typeof ATTACHMENT_OWNERS)[number];

export const AttachmentInfo = z.object({
  id: z.number().int(),
  studyId: z.number().int(),
  ownerType: z.enum(ATTACHMENT_OWNERS),
  ownerId: z.number().int(),
  filename: z.string(),
  contentType: z.string(),
  size: z.number().int(),
  sha256: z.string(),
  uploadedBy: z.number().int().nullable(),
  uploaderName: z.string().nullable().optional(),
  createdAt: z.string(),
});
export type AttachmentInfo = z.infer<typeof AttachmentInfo>;
