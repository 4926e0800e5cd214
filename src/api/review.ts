/**
 * Review, sign-off and the record: the workflow calls, the review history, audit trails, seals,
 * attachments (with upload progress), the outbox and the report.
 */
import { ApiError, http, toApiError } from './http';
import type { StudyDetail } from '../../shared/protocol/models';
import type {
  AuditPage,
  ReportCapture,
  RetryResponse,
  ReviewsResponse,
  StudyReport,
} from '../../shared/protocol/responses';
import type { z } from 'zod';
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

export const startStudy = (id: number) => http.post<StudyState>(`/api/studies/${id}/start`);
export const submitStudy = (id: number, note?: string) =>
  http.post<StudyState>(`/api/studies/${id}/submit`, note ? { note } : {});
export const approveStudy = (id: number, password: string, note?: string) =>
  http.post<StudyState>(`/api/studies/${id}/approve`, note ? { password, note } : { password });
export const returnStudy = (id: number, comment: string) =>
  http.post<StudyState>(`/api/studies/${id}/return`, { comment });
export const reopenStudy = (id: number, reason: string) =>
  http.post<StudyState>(`/api/studies/${id}/reopen`, { reason });

export const getReviews = (id: number) => http.get<ReviewsResponse>(`/api/studies/${id}/reviews`);

export const getStudyAudit = (id: number, cursor?: string | null, limit = 25) =>
  http.get<AuditPage>(
    `/api/studies/${id}/audit?limit=${limit}${cursor ? `&cursor=${encodeURIComponent(cursor)}` : ''}`,
  );

export const getSeal = (captureId: number) =>
  http.get<SealAnswer>(`/api/captures/${captureId}/seal`);

// ---- attachments ----------------------------------------------------------------------------

const OWNER_PATH: Record<AttachmentOwner, string> = {
  study: 'studies',
  checkpoint: 'checkpoints',
  capture: 'captures',
};

export const listAttachments = (owner: AttachmentOwner, id: number) =>
  http
    .get<{ attachments: AttachmentInfo[] }>(`/api/${OWNER_PATH[owner]}/${id}/attachments`)
    .then((r) => r.attachments);

export const deleteAttachment = (id: number) => http.delete<void>(`/api/attachments/${id}`);

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
  const res = await fetch(`/api/attachments/${id}${inline ? '?inline=1' : ''}`, {
    headers: token ? { Authorization: `Bearer ${token}` } : {},
  });
  if (!res.ok) {
    let body: unknown;
    try {
      body = await res.json();
    } catch {
      body = undefined;
    }
    throw toApiError(res.status, body);
  }
  return res.blob();
}

// ---- outbox and the lab-wide audit -----------------------------------------------------------

export const getOutbox = (status?: string) =>
  http.get<{ messages: OutboxMessage[]; nextCursor: string | null }>(
    `/api/outbox?limit=200${status ? `&status=${status}` : ''}`,
  );
export const getReceived = () =>
  http.get<{ messages: ReceivedMessage[]; nextCursor: string | null }>(
    '/api/outbox/received?limit=200',
  );
export const retryMail = (id: number) =>
  http.post<z.infer<typeof RetryResponse>>(`/api/outbox/${id}/retry`);
export const verifyAudit = () => http.get<AuditVerification>('/api/audit/verify');

// ---- the report ------------------------------------------------------------------------------

export const getReport = (id: number, revision?: number) =>
  http.get<StudyReport>(`/api/studies/${id}/report${revision ? `?revision=${revision}` : ''}`);
