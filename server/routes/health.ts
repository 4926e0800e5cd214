import { Router } from 'express';
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
      res.json({ status: 'ok', database: { ok: true, latencyMs: Math.round((performance.now() - started) * 10) / 10 }, version: VERSION });
    } catch {
      res.setHeader('Retry-After', String(OUTAGE_RETRY_AFTER_S));
      res.status(503).json({ status: 'degraded', database: { ok: false }, version: VERSION });
    }
  });
  return r;
}
