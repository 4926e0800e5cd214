import { z } from 'zod';
import { Text } from './text.js';

/**
 * A capture's life (issue 13, no stranded captures): open → finished, open → aborted, and
 * open ⇄ stalled. A stalled capture is still open for readings: the first accepted batch returns
 * it to `open`; it can be finished or aborted like an open one.
 */
export const CAPTURE_STATES = ['open', 'stalled', 'finished', 'aborted'] as const;
export const CaptureState = z.enum(CAPTURE_STATES);
export type CaptureState = z.infer<typeof CaptureState>;

/** States in which a capture still takes readings and may be finished or aborted. */
export const RECORDING_STATES: readonly CaptureState[] = ['open', 'stalled'];

/** True while a capture still takes readings (open or stalled). */
export function isRecording(state: string): boolean {
  return state === 'open' || state === 'stalled';
}

/** The body of `POST /api/captures/:id/abort`: why the capture is abandoned (kept with it and audited). */
export const CaptureAbort = z
  .object({
    reason: Text({ min: 3, max: 500 }),
  })
  .strict();
export type CaptureAbort = z.infer<typeof CaptureAbort>;

/** Shortest quiet time before a capture counts as stalled, ms (issue 13: at least 10 minutes). */
export const STALL_MIN_MS = 10 * 60_000;
/** A capture is stalled after this many gate times without readings (issue 13). */
export const STALL_GATES = 100;

/** How long a capture may go without readings before the sweep marks it stalled, ms. */
export function stallAfterMs(gateTimeS: number): number {
  const g = Number.isFinite(gateTimeS) && gateTimeS > 0 ? gateTimeS : 0;
  return Math.max(g * STALL_GATES * 1000, STALL_MIN_MS);
}

/** What one pass of the stall sweep did (`POST /api/captures/stall-sweep`, admins; the server runs it on a timer). */
export const StallSweepResult = z.object({
  stalled: z.array(z.number().int().positive()),
  notified: z.number().int().min(0),
});
export type StallSweepResult = z.infer<typeof StallSweepResult>;
