import { Router } from 'express';
import type pg from 'pg';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import { IdParam } from '../../shared/protocol/api.js';
import { TiltCheckCreate } from '../../shared/protocol/accelerometer.js';
import { listTiltChecks, recordTiltCheck } from '../services/tiltChecks.js';
import { captureBaseline } from '../services/baseline.js';
import { captureStabilityLimit } from '../services/stabilityLimits.js';

/** POST/GET /api/duts/:id/tilt-checks: an accelerometer's tilt-check results (mounted at /duts). */
export function tiltChecksRouter(pool: pg.Pool): Router {
  const r = Router();
  r.post('/:id/tilt-checks', authorize('captures:run'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const input = parse(TiltCheckCreate, req.body);
    reply(
      res,
      'POST /api/duts/:id/tilt-checks',
      { tiltCheck: await recordTiltCheck(pool, id, input, currentUser(req).id) },
      201,
    );
  });
  r.get('/:id/tilt-checks', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'GET /api/duts/:id/tilt-checks', { tiltChecks: await listTiltChecks(id) });
  });
  return r;
}

/**
 * GET /api/captures/:id/baseline: what a capture is compared with (same orientation for
 * acceleration); GET /api/captures/:id/stability-limit: a crystal's stability limit judged on it.
 */
export function captureBaselineRouter(pool: pg.Pool): Router {
  const r = Router();
  r.get('/:id/stability-limit', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'GET /api/captures/:id/stability-limit', await captureStabilityLimit(pool, id));
  });
  r.get('/:id/baseline', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'GET /api/captures/:id/baseline', await captureBaseline(id));
  });
  return r;
}
