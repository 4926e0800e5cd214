import type pg from 'pg';
import type { Logger } from 'pino';
import { AppError, ForbiddenError } from '../errors.js';
import { userFromTokenShared } from '../services/auth.js';
import { ingestReadings } from '../services/ingest.js';
import type { LiveHub } from '../services/liveHub.js';
import { parse } from '../middleware/validate.js';
import { isDatabaseUnavailable } from '../db/outage.js';
import { IdParam } from '../../shared/protocol/api.js';
import { roleCan } from '../../shared/protocol/roles.js';
import { decodeUploadFrame } from '../../shared/protocol/liveUpload.js';
import type { ReadingsRefused, ServerMessage } from '../../shared/protocol/live.js';

/** Most readings frames one socket may have awaiting their answer; more are refused with 429. */
export const MAX_UPLOADS_IN_FLIGHT = 8;

/** What the upload handler needs of a socket. */
export interface UploadPeer {
  /** The token the socket signed in with: re-checked for every frame, as every HTTP request is. */
  token: string;
  /** Frames of this socket awaiting their answer. */
  uploadsInFlight: number;
}

type Refusal = Pick<ReadingsRefused, 'status' | 'code' | 'message' | 'details'>;

/** The answer the HTTP error handler (server/middleware/errorHandler.ts) would give for `err`. */
function refusalOf(err: unknown, log?: Logger): Refusal {
  if (err instanceof AppError) {
    return {
      status: err.status,
      code: err.code,
      message: err.message,
      ...(err.details === undefined ? {} : { details: err.details }),
    };
  }
  if (isDatabaseUnavailable(err)) {
    return {
      status: 503,
      code: 'database-unavailable',
      message: 'The database is not reachable just now. Try again in a few seconds.',
    };
  }
  log?.error({ err }, 'readings frame on /ws failed');
  return {
    status: 500,
    code: 'internal',
    message: 'Something went wrong on the server. It has been logged.',
  };
}

/**
 * Readings batches sent as binary frames on `/ws` (shared/protocol/liveUpload.ts). Each frame goes
 * through the checks of `POST /api/captures/:id/readings` in the same order — the session (token
 * signature, expiry, account active, token version, forced password change, read from the
 * database after the frame arrived, never a role remembered from the upgrade or an earlier turn;
 * the frames of one session arriving together share one users query: userFromTokenShared), the
 * role, the capture id —
 * and then into the same `ingestReadings`, so every rule of the ingest stays in one place. The
 * answer is a `readings-ack` with the IngestResult or a `readings-refused` carrying the HTTP
 * route's status, code and message. A socket whose session ended is told so and then closed.
 */
export function createUploadHandler(deps: {
  jwtSecret: string;
  pool: pg.Pool;
  hub: LiveHub;
  log?: Logger;
}) {
  const { jwtSecret, pool, hub, log } = deps;
  return async function onFrame(
    peer: UploadPeer,
    bytes: Buffer,
    send: (msg: ServerMessage) => void,
    endSession: () => void,
  ): Promise<void> {
    const frame = decodeUploadFrame(bytes);
    if ('status' in frame) {
      if (frame.id === null) send({ type: 'error', code: frame.code, message: frame.message });
      else
        send({
          type: 'readings-refused',
          id: frame.id,
          captureId: frame.captureId,
          status: frame.status,
          code: frame.code,
          message: frame.message,
        });
      return;
    }
    const { id, captureId } = frame;
    if (peer.uploadsInFlight >= MAX_UPLOADS_IN_FLIGHT) {
      send({
        type: 'readings-refused',
        id,
        captureId,
        status: 429,
        code: 'too-many-in-flight',
        message: `A connection may have at most ${MAX_UPLOADS_IN_FLIGHT} readings frames awaiting their answer; send again once one is answered.`,
      });
      return;
    }
    peer.uploadsInFlight++;
    try {
      const user = await userFromTokenShared(peer.token, jwtSecret, pool);
      if (user.mustChangePassword)
        throw new AppError(
          403,
          'password-change-required',
          'Choose a new password before continuing.',
        );
      if (!roleCan(user.role, 'captures:run')) throw new ForbiddenError();
      parse(IdParam, { id: captureId }, 'id');
      const body = Buffer.from(frame.body.buffer, frame.body.byteOffset, frame.body.byteLength);
      const result = await ingestReadings(pool, hub, user, captureId, body);
      send({ type: 'readings-ack', id, captureId, ...result });
    } catch (err) {
      send({ type: 'readings-refused', id, captureId, ...refusalOf(err, log) });
      if (err instanceof AppError && err.status === 401) endSession();
    } finally {
      peer.uploadsInFlight--;
    }
  };
}
