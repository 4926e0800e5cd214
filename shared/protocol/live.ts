/** WebSocket messages on `/ws` (live watching). Types are kebab-case strings. */
export interface LiveReading {
  seq: number;
  t: number;
  value: number;
  flags?: number;
}

export type ClientMessage =
  | { type: 'watch'; captureId: number }
  | { type: 'unwatch'; captureId: number }
  | { type: 'ping'; id?: number };

export type ServerMessage =
  | { type: 'hello'; userId: number }
  | { type: 'readings-batch'; captureId: number; readings: LiveReading[]; sentAt: number }
  | { type: 'capture-state'; captureId: number; state: 'open' | 'finished' | 'aborted' }
  | { type: 'on-air-changed' }
  | { type: 'pong'; id?: number }
  | { type: 'error'; code: string; message: string };
