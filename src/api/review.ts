/**
 * Review, sign-off and the record: the workflow calls, the review history, audit trails, seals,
 * attachments (with upload progress), the outbox and the report.
 */
import { ApiError, callRoute, fetchBlob, toApiError } from './http';
import type { StudyDetail } from '../../shared/protocol/models';
import type {
  AuditPage,
  ReportCapture,
  ReviewsResponse,
  StudyReport,
} from '../../shared/protocol/responses';
import type {
  AttachmentInfo,
  AttachmentOwner,
  AuditEntry,
  AuditVerification,
  OutboxMessage,
  ReceivedMessage,
  ReviewEntry,
  SealAnswer,
} from '../../shared/protocol/review';

export type {
  AttachmentInfo,
  AttachmentOwner,
  AuditEntry,
  AuditVerification,
  OutboxMessage,
  ReceivedMessage,
  ReviewEntry,
  SealAnswer,
};

/** A study after a workflow step: the study as GET /api/studies/:id answers it. */
export type StudyState = StudyDetail;
export type Revision = ReviewsResponse['revisions'][number];
export type { AuditPage, ReportCapture, StudyReport };

export type ReviewStep = 'submit' | 'approve' | 'return' | 'reopen';

export const startStudy = (id: number): Promise<StudyState> =>
  callRoute('POST /api/studies/:id/start', { id });
export const submitStudy = (id: number, note?: string): Promise<StudyState> =>
  callRoute('POST /api/studies/:id/submit', { id }, { body: note ? { note } : {} });
export const approveStudy = (id: number, password: string, note?: string): Promise<StudyState> =>
  callRoute(
    'POST /api/studies/:id/approve',
    { id },
    { body: note ? { password, note } : { password } },
  );
export const returnStudy = (id: number, comment: string): Promise<StudyState> =>
  callRoute('POST /api/studies/:id/return', { id }, { body: { comment } });
export const reopenStudy = (id: number, reason: string): Promise<StudyState> =>
  callRoute('POST /api/studies/:id/reopen', { id }, { body: { reason } });

export const getReviews = (id: number): Promise<ReviewsResponse> =>
  callRoute('GET /api/studies/:id/reviews', { id });

export const getStudyAudit = (id: number, cursor?: string | null, limit = 25): Promise<AuditPage> =>
  callRoute('GET /api/studies/:id/audit', { id }, { query: { limit, cursor } });

export const getSeal = (captureId: number): Promise<SealAnswer> =>
  callRoute('GET /api/captures/:id/seal', { id: captureId });

// ---- attachments ----------------------------------------------------------------------------

const OWNER_PATH: Record<AttachmentOwner, string> = {
  study: 'studies',
  checkpoint: 'checkpoints',
  capture: 'captures',
};

const LIST_ROUTE = {
  study: 'GET /api/studies/:id/attachments',
  checkpoint: 'GET /api/checkpoints/:id/attachments',
  capture: 'GET /api/captures/:id/attachments',
} as const;

export const listAttachments = async (
  owner: AttachmentOwner,
  id: number,
): Promise<AttachmentInfo[]> => (await callRoute(LIST_ROUTE[owner], { id })).attachments;

export const deleteAttachment = (id: number): Promise<void> =>
  callRoute('DELETE /api/attachments/:id', { id });

/**
 * Uploads one file as multipart (field `file`) with progress (XMLHttpRequest: fetch has no upload
 * progress). Resolves with the stored attachment; rejects with the server's ApiError (413, 415, 409 …).
 */
export function uploadAttachment(
  owner: AttachmentOwner,
  id: number,
  file: File,
  token: string | null,
  onProgress: (fraction: number) => void,
  signal?: AbortSignal,
): Promise<AttachmentInfo> {
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    xhr.open('POST', `/api/${OWNER_PATH[owner]}/${id}/attachments`);
    if (token) xhr.setRequestHeader('Authorization', `Bearer ${token}`);
    xhr.setRequestHeader('Accept', 'application/json');
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable) onProgress(e.loaded / e.total);
    };
    xhr.onload = () => {
      let body: unknown;
      try {
        body = xhr.responseText ? JSON.parse(xhr.responseText) : undefined;
      } catch {
        body = undefined;
      }
      if (xhr.status >= 200 && xhr.status < 300) resolve(body as AttachmentInfo);
      else reject(toApiError(xhr.status, body));
    };
    xhr.onerror = () =>
      reject(
        new ApiError(
          0,
          'network',
          'The upload was interrupted. Check the connection and try again.',
        ),
      );
    xhr.onabort = () => reject(new DOMException('Upload cancelled', 'AbortError'));
    signal?.addEventListener('abort', () => xhr.abort());
    const form = new FormData();
    form.append('file', file, file.name);
    xhr.send(form);
  });
}

/** Fetches an attachment's bytes with the session token (images for thumbnails, files to save). */
export async function fetchAttachment(
  id: number,
  token: string | null,
  inline = false,
): Promise<Blob> {
  return fetchBlob(`/api/attachments/${id}${inline ? '?inline=1' : ''}`, token);
}

// ---- outbox and the lab-wide audit -----------------------------------------------------------

export const getOutbox = (status?: string) =>
  callRoute('GET /api/outbox', {}, { query: { limit: 200, status: status || undefined } });
export const getReceived = () =>
  callRoute('GET /api/outbox/received', {}, { query: { limit: 200 } });
export const retryMail = (id: number) => callRoute('POST /api/outbox/:id/retry', { id });
export const verifyAudit = (): Promise<AuditVerification> => callRoute('GET /api/audit/verify', {});

// ---- the report ------------------------------------------------------------------------------

export const getReport = (id: number, revision?: number): Promise<StudyReport> =>
  callRoute('GET /api/studies/:id/report', { id }, { query: { revision: revision || undefined } });
