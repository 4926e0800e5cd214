/**
 * Readings uploaded over the live socket `/ws` (issue 15, the live path): instead of one HTTP
 * request per batch, the bench sends each batch as one binary WebSocket frame on the socket it
 * already holds, and the server answers with a JSON `readings-ack` or `readings-refused`
 * (shared/protocol/live.ts). The frame is a 16-byte header followed by the compact body of
 * `POST /api/captures/:id/readings` (shared/protocol/readingsBinary.ts, 32 bytes a reading):
 *
 * | offset | size | field |
 * | --- | --- | --- |
 * | 0 | u8 | kind: 1 = readings batch |
 * | 1 | u8 | version: 1 |
 * | 2 | u16 | header length in bytes (16) |
 * | 4 | u32 | request id, chosen by the client, echoed in the answer |
 * | 8 | u32 | capture id |
 * | 12 | u32 | number of readings in the body (checked against the frame's length) |
 *
 * All integers little-endian, like the body's doubles. The header starts the body on an 8-byte
 * boundary. A server that takes uploads says so in its `hello` (`uploads.maxReadings`), so a
 * client never sends a frame a server cannot read.
 */
import { MAX_BATCH, type ReadingIn } from './captures.js';
import { BYTES_PER_READING, encodeReadingsF64 } from './readingsBinary.js';

export const UPLOAD_FRAME_KIND = 1;
export const UPLOAD_FRAME_VERSION = 1;
export const UPLOAD_HEADER_BYTES = 16;
/** Most readings one frame may carry: the HTTP route's batch limit, so every batch fits either way. */
export const UPLOAD_MAX_READINGS = MAX_BATCH;
/** The largest upload frame the server reads (header + {@link UPLOAD_MAX_READINGS} readings). */
export const UPLOAD_MAX_FRAME = UPLOAD_HEADER_BYTES + UPLOAD_MAX_READINGS * BYTES_PER_READING;
/** Largest request id (u32). */
export const UPLOAD_MAX_ID = 0xffff_ffff;

/** A readings batch as one binary frame. */
export function encodeUploadFrame(
  id: number,
  captureId: number,
  readings: readonly ReadingIn[],
): Uint8Array {
  const body = encodeReadingsF64(readings);
  const out = new Uint8Array(UPLOAD_HEADER_BYTES + body.byteLength);
  const view = new DataView(out.buffer);
  view.setUint8(0, UPLOAD_FRAME_KIND);
  view.setUint8(1, UPLOAD_FRAME_VERSION);
  view.setUint16(2, UPLOAD_HEADER_BYTES, true);
  view.setUint32(4, id, true);
  view.setUint32(8, captureId, true);
  view.setUint32(12, readings.length, true);
  out.set(body, UPLOAD_HEADER_BYTES);
  return out;
}

/** A decoded frame: the request id, the capture and the body as the HTTP route's binary body. */
export interface UploadFrame {
  id: number;
  captureId: number;
  body: Uint8Array;
}

/**
 * Why a frame cannot be read, with the HTTP status the same mistake earns on the route: 415 for
 * a kind or version this server does not know, 413 for more readings than a batch may hold, 400
 * for a frame whose length disagrees with its header. `id` is null when even the request id is
 * missing (a frame shorter than the header).
 */
export interface UploadFrameProblem {
  id: number | null;
  captureId: number;
  status: 400 | 413 | 415;
  code: string;
  message: string;
}

/** Reads a frame's header; the body is a view of the same bytes (no copy). */
export function decodeUploadFrame(bytes: Uint8Array): UploadFrame | UploadFrameProblem {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (bytes.byteLength < 8) {
    return {
      id: null,
      captureId: 0,
      status: 400,
      code: 'bad-frame',
      message: `A readings frame starts with a ${UPLOAD_HEADER_BYTES}-byte header; this one has ${bytes.byteLength} bytes.`,
    };
  }
  const id = view.getUint32(4, true);
  if (bytes.byteLength < UPLOAD_HEADER_BYTES) {
    return {
      id,
      captureId: 0,
      status: 400,
      code: 'bad-frame',
      message: `A readings frame starts with a ${UPLOAD_HEADER_BYTES}-byte header; this one has ${bytes.byteLength} bytes.`,
    };
  }
  const captureId = view.getUint32(8, true);
  const kind = view.getUint8(0);
  const version = view.getUint8(1);
  const headerBytes = view.getUint16(2, true);
  if (
    kind !== UPLOAD_FRAME_KIND ||
    version !== UPLOAD_FRAME_VERSION ||
    headerBytes !== UPLOAD_HEADER_BYTES
  ) {
    return {
      id,
      captureId,
      status: 415,
      code: 'unsupported-frame',
      message: `This server reads readings frames of kind ${UPLOAD_FRAME_KIND}, version ${UPLOAD_FRAME_VERSION} with a ${UPLOAD_HEADER_BYTES}-byte header (got kind ${kind}, version ${version}, ${headerBytes} bytes).`,
    };
  }
  const count = view.getUint32(12, true);
  const bodyBytes = bytes.byteLength - UPLOAD_HEADER_BYTES;
  if (count > UPLOAD_MAX_READINGS || bodyBytes > UPLOAD_MAX_READINGS * BYTES_PER_READING) {
    return {
      id,
      captureId,
      status: 413,
      code: 'too-large',
      message: `A readings frame holds at most ${UPLOAD_MAX_READINGS.toLocaleString('en-US')} readings (${UPLOAD_MAX_FRAME.toLocaleString('en-US')} bytes); send larger batches in parts.`,
    };
  }
  if (bodyBytes !== count * BYTES_PER_READING) {
    return {
      id,
      captureId,
      status: 400,
      code: 'bad-frame',
      message: `The header announces ${count} readings (${count * BYTES_PER_READING} bytes) but the frame carries ${bodyBytes} bytes after it.`,
    };
  }
  return {
    id,
    captureId,
    body: bytes.subarray(UPLOAD_HEADER_BYTES),
  };
}
