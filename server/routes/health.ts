import { Router } from 'express';
import { reply } from '../middleware/responses.js';
import type { Database } from '../db/connection.js';
import { OUTAGE_RETRY_AFTER_S } from '../db/outage.js';

export const VERSION = '0.1.0';

/** Reports whether the server reaches its database; no sign-in needed. */
export function healthRouter(db: Database): Router {
  const r = Router();
  r.get('/health', async (_req, res) => {
    const started = performance.now();
    try {
      await db.pool.query('SELECT 1');
      reply(res, 'GET /api/health', {
        status: 'ok',
        database: { ok: true, latencyMs: Math.round((performance.now() - started) * 10) / 10 },
        version: VERSION,
      });
    } catch {
      res.setHeader('Retry-After', String(OUTAGE_RETRY_AFTER_S));
      reply(
        res,
        'GET /api/health',
        { status: 'degraded', database: { ok: false }, version: VERSION },
        503,
      );
    }
  });
  return r;
}
