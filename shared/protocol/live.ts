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

/** What the server sends. */
export const ServerMessage = z.discriminatedUnion('type', [
  z.object({ type: z.literal('hello'), userId: z.number().int() }),
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
]);
export type ServerMessage = z.infer<typeof ServerMessage>;

/** The first problem of a message against a schema, as `path: message` (for the error a peer is sent). */
export function messageProblem(error: z.ZodError): string {
  const i = error.issues[0];
  return `${i.path.length ? `${i.path.join('.')}: ` : ''}${i.message}`;
}
