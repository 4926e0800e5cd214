/**
 * How the bench's uploader sends a batch (issue 15, the live path): over the live socket `/ws` when
 * it is open and its server takes uploads — one binary frame, no HTTP request, headers, token check
 * in middleware or JSON answer — and by `POST /api/captures/:id/readings` otherwise (socket
 * connecting or lost, an old server, a batch larger than a frame, or the JSON body after a 415).
 * Both answer the same IngestResult and refuse with the same ApiError, so `ReadingUploader`'s
 * retry, refusal and fallback rules are the same either way. A socket that closes with batches
 * awaiting their answer rejects them and the uploader resends (by HTTP until the socket is back).
 */
import type { IngestResult, ReadingIn } from '../../shared/protocol/captures';
import type { BatchEncoding, SendBatch } from './uploader';
import type { LiveSocket } from './socket';

/** The part of {@link LiveSocket} the transport uses (tests may pass their own). */
export type UploadSocket = Pick<LiveSocket, 'canUpload' | 'uploadReadings'> &
  Partial<Pick<LiveSocket, 'reconnect'>>;

export interface ReadingsTransportOptions {
  /** The socket to try first, or a getter (it may be opened and closed over a capture's life). */
  socket: UploadSocket | (() => UploadSocket | null);
  /** The HTTP send used when the socket cannot take the batch (normally `postReadings`). */
  http: SendBatch;
  /** Told which way each batch went (the bench counts them; tests check them). */
  onSend?: (via: 'socket' | 'http', captureId: number, readings: number) => void;
}

/** A `SendBatch` for `ReadingUploader` that prefers the live socket and falls back to HTTP. */
export function readingsTransport(opts: ReadingsTransportOptions): SendBatch {
  const socketOf =
    typeof opts.socket === 'function' ? opts.socket : () => opts.socket as UploadSocket;
  return (
    captureId: number,
    readings: ReadingIn[],
    signal?: AbortSignal,
    encoding?: BatchEncoding,
  ): Promise<IngestResult> => {
    const socket = socketOf();
    // Frames carry the binary body; after a 415 the uploader asks for JSON, which only HTTP takes.
    if (socket && encoding !== 'json' && socket.canUpload(readings.length)) {
      opts.onSend?.('socket', captureId, readings.length);
      return socket.uploadReadings(captureId, readings, signal).catch((err: unknown) => {
        // The uploader aborts a send only when no answer came in time: a socket that looks open
        // but answers nothing is given up, so the resend goes by HTTP or on a fresh connection.
        if (signal?.aborted) socket.reconnect?.();
        throw err;
      });
    }
    opts.onSend?.('http', captureId, readings.length);
    return opts.http(captureId, readings, signal, encoding);
  };
}
