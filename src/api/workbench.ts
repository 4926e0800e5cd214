/**
 * Typed calls for the comparison workbench and the CSV import (issue 12): several captures'
 * stability curves in one request, the exports, and the import with upload and server progress.
 */
import { ApiError, callRoute, fetchBlob, toApiError, type RequestOptions } from './http';
import { fetchReadingsCsv, type StabilityKind } from './captures';
import type { OverlayResponse } from '../../shared/protocol/responses';
import type { CaptureImportResult, ImportProgress } from '../../shared/protocol/importCsv';

export type Overlay = OverlayResponse;
export type OverlayCurve = OverlayResponse['curves'][number];

/** Most captures one overlay may hold (the server's limit). */
export const MAX_OVERLAY = 12;

export function getOverlay(
  ids: number[],
  kind: StabilityKind,
  options?: RequestOptions,
): Promise<Overlay> {
  const query = { ids: ids.join(','), kind };
  return callRoute('GET /api/captures/stability', {}, { ...options, query });
}

export const captureCsvPath = (id: number) => `/api/captures/${id}/export.csv`;
export const studyCsvPath = (id: number) => `/api/studies/${id}/captures.csv`;

/** Saves a Blob under `filename` (browser only). */
export function saveBlob(blob: Blob, filename: string): void {
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = filename;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

/** Downloads a capture's CSV export as `driftbench-capture-<id>.csv` (browser only). */
export async function downloadReadingsCsv(id: number, token: string | null): Promise<void> {
  saveBlob(await fetchReadingsCsv(id, token), `driftbench-capture-${id}.csv`);
}

/** Fetches a file the API serves (with the session token) and saves it. */
export async function downloadFile(
  path: string,
  filename: string,
  token: string | null,
): Promise<void> {
  saveBlob(await fetchBlob(path, token), filename);
}

export function getImportProgress(key: string): Promise<ImportProgress> {
  return callRoute('GET /api/captures/import/progress/:key', { key });
}

/**
 * Posts an import (fields first, then the file) with XMLHttpRequest, which reports upload
 * progress (fetch does not). Resolves with `{ id, readings }`; rejects with an ApiError.
 */
export function postImport(
  fields: Record<string, string | number | undefined>,
  file: File,
  token: string | null,
  onUpload: (sent: number, total: number) => void,
): { done: Promise<CaptureImportResult>; abort: () => void } {
  const xhr = new XMLHttpRequest();
  const form = new FormData();
  for (const [k, v] of Object.entries(fields))
    if (v !== undefined && v !== '') form.append(k, String(v));
  form.append('file', file, file.name);
  const done = new Promise<CaptureImportResult>((resolve, reject) => {
    xhr.open('POST', '/api/captures/import');
    if (token) xhr.setRequestHeader('Authorization', `Bearer ${token}`);
    xhr.setRequestHeader('Accept', 'application/json');
    xhr.upload.onprogress = (e) => onUpload(e.loaded, e.lengthComputable ? e.total : file.size);
    xhr.onload = () => {
      let body: unknown;
      try {
        body = JSON.parse(xhr.responseText);
      } catch {
        body = undefined;
      }
      if (xhr.status === 201) resolve(body as CaptureImportResult);
      else reject(toApiError(xhr.status, body));
    };
    xhr.onerror = () =>
      reject(
        new ApiError(
          0,
          'network',
          'Driftbench cannot reach its server. Check the connection and try again.',
        ),
      );
    xhr.onabort = () => reject(new DOMException('aborted', 'AbortError'));
    xhr.send(form);
  });
  return { done, abort: () => xhr.abort() };
}
