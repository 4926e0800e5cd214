/**
 * Readings in: the one call the bench's uploader makes (`POST /api/captures/:id/readings`), in the
 * compact binary body or in JSON, and how the uploader reads the server's refusals. Kept apart
 * from ./captures so that it needs nothing of the DOM (the Node tests drive it with their fetch).
 */
import { ApiError, http, type RequestOptions } from './http';
import type { BatchEncoding } from './uploader';
import type { ReadingIn } from '../../shared/protocol/captures';
import type { IngestResponse } from '../../shared/protocol/responses';
import { encodeReadingsF64, READINGS_F64_TYPE } from '../../shared/protocol/readingsBinary';

/** How long one readings batch may wait for the server's answer before it counts as failed (ms). */
export const READINGS_TIMEOUT_MS = 30_000;

/**
 * Sends one batch (≤ 20 000 readings); the server ignores seqs it already holds. Without a
 * caller's signal it gives up after {@link READINGS_TIMEOUT_MS}, so a half-open connection
 * becomes a failure the uploader retries instead of a request that hangs forever. `encoding`
 * `f64` sends the compact binary body (shared/protocol/readingsBinary.ts, 32 bytes a reading, no
 * JSON on either side); a server that does not take it answers 415 and the uploader goes back to
 * `json`.
 */
export function postReadings(
  id: number,
  readings: ReadingIn[],
  options: RequestOptions & { encoding?: BatchEncoding } = {},
): Promise<IngestResponse> {
  const { encoding = 'json', ...rest } = options;
  const signal = rest.signal ?? AbortSignal.timeout(READINGS_TIMEOUT_MS);
  const path = `/api/captures/${id}/readings`;
  if (encoding === 'f64') {
    return http.post<IngestResponse>(path, encodeReadingsF64(readings), {
      ...rest,
      signal,
      contentType: READINGS_F64_TYPE,
    });
  }
  return http.post<IngestResponse>(path, { readings }, { ...rest, signal });
}

/** The index of the one bad reading a 400 refusal of a batch names (`details.index`), else null. */
export function refusedReadingIndex(err: unknown): number | null {
  if (!(err instanceof ApiError) || err.status !== 400) return null;
  const index = err.context?.index;
  return typeof index === 'number' && Number.isInteger(index) && index >= 0 ? index : null;
}

/** 400, 403, 404, 409: the server will never take these readings, so retrying is pointless. */
export function isPermanentRefusal(err: unknown): boolean {
  return err instanceof ApiError && [400, 403, 404, 409].includes(err.status);
}
