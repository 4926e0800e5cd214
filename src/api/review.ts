/**
 * Review, sign-off and the record: the workflow calls, the review history, audit trails, seals,
 * attachments (with upload progress), the outbox and the report.
 */
import { ApiError, http, toApiError } from './http';
import type { StudyStatus } from './studies';
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

export type { AttachmentInfo, AttachmentOwner, AuditEntry, AuditVerification, OutboxMessage, ReceivedMessage, ReviewEntry, SealAnswer };

export interface StudyState {
  id: number;
  title: string;
  status: StudyStatus;
  revision: number;
  submittedBy: number | null;
  submittedAt: string | null;
  approvedBy: number | null;
  approvedAt: string | null;
}

export interface Revision {
  revision: number;
  approvedAt: string;
  approvedBy: number | null;
  approvedByName: string | null;
}

export type ReviewStep = 'submit' | 'approve' | 'return' | 'reopen';

export const startStudy = (id: number) => http.post<StudyState>(`/api/studies/${id}/start`);
export const submitStudy = (id: number, note?: string) => http.post<StudyState>(`/api/studies/${id}/submit`, note ? { note } : {});
export const approveStudy = (id: number, password: string, note?: string) =>
  http.post<StudyState>(`/api/studies/${id}/approve`, note ? { password, note } : { password });
export const returnStudy = (id: number, comment: string) => http.post<StudyState>(`/api/studies/${id}/return`, { comment });
export const reopenStudy = (id: number, reason: string) => http.post<StudyState>(`/api/studies/${id}/reopen`, { reason });

export const getReviews = (id: number) => http.get<{ reviews: ReviewEntry[]; revisions: Revision[] }>(`/api/studies/${id}/reviews`);

export interface AuditPage {
  events: AuditEntry[];
  nextCursor: string | null;
}
export const getStudyAudit = (id: number, cursor?: string | null, limit = 25) =>
  http.get<AuditPage>(`/api/studies/${id}/audit?limit=${limit}${cursor ? `&cursor=${encodeURIComponent(cursor)}` : ''}`);

export const getSeal = (captureId: number) => http.get<SealAnswer>(`/api/captures/${captureId}/seal`);

// ---- attachments ----------------------------------------------------------------------------

const OWNER_PATH: Record<AttachmentOwner, string> = { study: 'studies', checkpoint: 'checkpoints', capture: 'captures' };

export const listAttachments = (owner: AttachmentOwner, id: number) =>
  http.get<{ attachments: AttachmentInfo[] }>(`/api/${OWNER_PATH[owner]}/${id}/attachments`).then((r) => r.attachments);

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
    xhr.onerror = () => reject(new ApiError(0, 'network', 'The upload was interrupted. Check the connection and try again.'));
    xhr.onabort = () => reject(new DOMException('Upload cancelled', 'AbortError'));
    signal?.addEventListener('abort', () => xhr.abort());
    const form = new FormData();
    form.append('file', file, file.name);
    xhr.send(form);
  });
}

/** Fetches an attachment's bytes with the session token (images for thumbnails, files to save). */
export async function fetchAttachment(id: number, token: string | null, inline = false): Promise<Blob> {
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
  http.get<{ messages: OutboxMessage[]; nextCursor: string | null }>(`/api/outbox?limit=200${status ? `&status=${status}` : ''}`);
export const getReceived = () => http.get<{ messages: ReceivedMessage[]; nextCursor: string | null }>('/api/outbox/received?limit=200');
export const retryMail = (id: number) => http.post<{ id: number; status: string }>(`/api/outbox/${id}/retry`);
export const verifyAudit = () => http.get<AuditVerification>('/api/audit/verify');

// ---- the report ------------------------------------------------------------------------------

export interface ReportCapture {
  id: number;
  dutId: number;
  checkpointId: number;
  startedAt: string;
  endedAt: string | null;
  readingCount: number;
  gateTime: number;
  ambientC: number | null;
  orientation: string | null;
  operator: string | null;
  instrumentId: number | null;
  referenceId: number | null;
  referenceOffset: number | null;
  referenceUncertainty: number | null;
  notes: string | null;
  seal: { sha256: string | null; recomputed: string; verified: boolean | null; readings: number };
  stats: { n: number; mean: number; std: number; sem: number; min?: number; max?: number } | null;
  offsetPpm: number | null;
  uncertainty: unknown;
  stability: unknown;
  summaryNotes: string[];
}

export interface StudyReport {
  kind: 'driftbench-study-report';
  version: number;
  generatedAt: string;
  study: {
    id: number;
    title: string;
    process: string | null;
    description: string | null;
    status: StudyStatus;
    revision: number;
    createdAt: string;
    createdBy: string | null;
    submittedAt: string | null;
    submittedBy: string | null;
    approvedAt: string | null;
    approvedBy: string | null;
  };
  checkpoints: Array<{ id: number; name: string; order: number; exposure: Record<string, unknown> | null }>;
  duts: Array<Record<string, unknown> & { id: number; label: string; kind: string; nominal: number; unit: string; limit: number | null; limitUnit: string }>;
  instruments: Array<{ id: number; name: string; kind: string; maker: string | null; model: string | null; serial: string | null; calibrationDue: string | null; calibrationState: string }>;
  references: Array<{ id: number; name: string; nominalHz: number; fractionalOffset: number; standardUncertainty: number; verifiedBy: string | null; verifiedAt: string | null }>;
  matrix: unknown;
  captures: ReportCapture[];
  comparisons: Array<{ dutId: number; checkpointId: number; result?: Record<string, unknown>; problem?: string }>;
  reviews: ReviewEntry[];
  decisionRule: string;
}

export const getReport = (id: number, revision?: number) =>
  http.get<StudyReport>(`/api/studies/${id}/report${revision ? `?revision=${revision}` : ''}`);
