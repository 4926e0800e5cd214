import { Router } from 'express';
import type { AnalysisPool } from '../analysis/pool.js';
import type pg from 'pg';
import { z } from 'zod';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import { importCapture, importProgress } from '../services/captureImport.js';
import type { LiveHub } from '../ws/live.js';

const KeyParam = z.object({ key: z.string().regex(/^[A-Za-z0-9_-]{8,64}$/) });

/**
 * `POST /api/captures/import` (multipart: the fields of CaptureImportFields, then `file`) →
 * `201 { id, readings }`; `GET /api/captures/import/progress/:key` → the server's progress.
 * Mounted before the captures router so `/import` is never read as a capture id. `analysis`: the
 * pool whose worker computes the summary when the import finishes its capture.
 */
export function captureImportRouter(pool: pg.Pool, hub: LiveHub, analysis?: AnalysisPool): Router {
  const r = Router();
  r.post('/import', authorize('captures:run'), async (req, res) => {
    reply(
      res,
      'POST /api/captures/import',
      await importCapture(pool, hub, currentUser(req), req, res, analysis),
      201,
    );
  });
  r.get('/import/progress/:key', authorize('captures:run'), (req, res) => {
    const { key } = parse(KeyParam, req.params, 'key');
    reply(res, 'GET /api/captures/import/progress/:key', importProgress(key, currentUser(req)));
  });
  return r;
}
