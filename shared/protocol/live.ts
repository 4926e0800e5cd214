/**
 * WebSocket messages on `/ws` (live watching), both directions, as zod schemas: the server parses
 * what a client sends with `ClientMessage` (server/ws/live.ts) and the client parses what it
 * receives with `ServerMessage` (src/api/socket.ts). Types are kebab-case strings.
 */
import { z } from 'zod';
import { CaptureState } from './captureLifecycle.js';

const CaptureId = z.number().int().positive().max(2_147_483_647);

export const LiveReading = z.object({
  seq: z.number().int().min(0),
  t: z.number(),
  value: z.number(),
  flags: z.number().int().optional(),
});
export type LiveReading = z.infer<typeof LiveReading>;

/** What a watcher sends. */
export const ClientMessage = z.discriminatedUnion('type', [
  z.strictObject({ type: z.literal('watch'), captureId: CaptureId }),
  z.strictObject({ type: z.literal('unwatch'), captureId: CaptureId }),
  z.strictObject({ type: z.literal('ping'), id: z.number().int().optional() }),
]);
export type ClientMessage = z.infer<typeof ClientMessage>;
export const CLIENT_MESSAGE_TYPES = [
  'watch',
  'unwatch',
  'ping',
] as const satisfies readonly ClientMessage['type'][];

/** Request ids of uploaded frames are u32 (shared/protocol/liveUpload.ts). */
const UploadId = z.number().int().min(0).max(0xffff_ffff);

/**
 * A readings frame was stored: what `POST /api/captures/:id/readings` would answer (IngestResult),
 * with the frame's request id.
 */
export const ReadingsAck = z.object({
  type: z.literal('readings-ack'),
  id: UploadId,
  captureId: z.number().int().min(0),
  accepted: z.number().int().min(0),
  duplicates: z.number().int().min(0),
  highestSeq: z.number().int(),
});
export type ReadingsAck = z.infer<typeof ReadingsAck>;

/**
 * A readings frame was refused, with the status, code and message the HTTP route gives for the
 * same batch (403 role or operator, 404, 409 finished or study locked, 400 with `details.index`
 * for a bad reading, 401 when the session ended, 415/413 for a frame this server cannot read).
 */
export const ReadingsRefused = z.object({
  type: z.literal('readings-refused'),
  id: UploadId,
  captureId: z.number().int().min(0),
  status: z.number().int().min(400).max(599),
  code: z.string(),
  message: z.string(),
  details: z.unknown().optional(),
});
export type ReadingsRefused = z.infer<typeof ReadingsRefused>;

/** What the server sends. */
export const ServerMessage = z.discriminatedUnion('type', [
  z.object({
    type: z.literal('hello'),
    userId: z.number().int(),
    /**
     * Present when the server takes readings batches as binary frames on this socket
     * (shared/protocol/liveUpload.ts): the most readings one frame may carry.
     */
    uploads: z.object({ maxReadings: z.number().int().positive() }).optional(),
  }),
  z.object({
    type: z.literal('readings-batch'),
    captureId: CaptureId,
    readings: z.array(LiveReading),
    sentAt: z.number(),
  }),
  z.object({ type: z.literal('capture-state'), captureId: CaptureId, state: CaptureState }),
  z.object({ type: z.literal('on-air-changed') }),
  z.object({ type: z.literal('pong'), id: z.number().int().optional() }),
  z.object({ type: z.literal('error'), code: z.string(), message: z.string() }),
  // The answer to an uploaded readings frame: the route's IngestResult, or its refusal.
  ReadingsAck,
  ReadingsRefused,
]);
export type ServerMessage = z.infer<typeof ServerMessage>;

/** The first problem of a message against a schema, as `path: message` (for the error a peer is sent). */
export function messageProblem(error: z.ZodError): string {
  const i = error.issues[0];
  return `${i.path.length ? `${i.path.join('.')}: ` : ''}${i.message}`;
}
