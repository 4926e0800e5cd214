import express, { type NextFunction, type Request, type Response } from 'express';
import { READINGS_F64_TYPE } from '../../shared/protocol/readingsBinary.js';

/** Largest body of an ordinary JSON route. */
export const SMALL_BODY = '100kb';
/** Largest body of a readings batch (20,000 readings of four numbers, with room to spare). */
export const INGEST_BODY = '8mb';

const INGEST_PATH = /^\/captures\/[^/]+\/readings\/?$/;

/**
 * JSON body parsing by route: 8 MB for `POST /api/captures/:id/readings` (JSON, or the binary
 * readings body as raw bytes), 100 kB everywhere else. Mounted after `authenticate`, so only a signed-in user's body is ever read.
 */
export function jsonBodies() {
  const small = express.json({ limit: SMALL_BODY });
  const large = express.json({ limit: INGEST_BODY });
  // The compact readings body (shared/protocol/readingsBinary.ts) arrives as a Buffer in req.body.
  const binary = express.raw({ type: READINGS_F64_TYPE, limit: INGEST_BODY });
  return (req: Request, res: Response, next: NextFunction) => {
    if (req.method === 'POST' && INGEST_PATH.test(req.path)) {
      if (req.is(READINGS_F64_TYPE)) binary(req, res, next);
      else large(req, res, next);
      return;
    }
    small(req, res, next);
  };
}
