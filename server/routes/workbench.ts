import { Router } from 'express';
import type pg from 'pg';
import { z } from 'zod';
import { parse } from '../middleware/validate.js';
import { authorize } from '../middleware/auth.js';
import { reply, replyCsv } from '../middleware/responses.js';
import { IdParam } from '../../shared/protocol/api.js';
import { STABILITY_KINDS } from '../../shared/protocol/captures.js';
import { captureCsv, overlayCurves, studyCapturesCsv } from '../services/workbench.js';

const OverlayQuery = z.object({
  ids: z
    .string()
    .regex(/^\d+(,\d+)*$/, 'a comma-separated list of capture ids')
    .transform((s) => s.split(',').map(Number)),
  kind: z.enum(STABILITY_KINDS).default('oadev'),
});

/**
 * The comparison workbench (issue 12), mounted under `/captures` before the captures router:
 * `GET /stability?ids=1,2,3&kind=oadev` (several captures' curves in one request) and
 * `GET /:id/export.csv` (the capture's metadata as `# key: value` lines, then raw and corrected readings).
 */
export function workbenchCapturesRouter(pool: pg.Pool): Router {
  const r = Router();
  r.get('/stability', authorize('read'), async (req, res) => {
    const q = parse(OverlayQuery, req.query, 'query');
    reply(res, 'GET /api/captures/stability', await overlayCurves(pool, q.ids, q.kind));
  });
  r.get('/:id/export.csv', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    replyCsv(
      res,
      'GET /api/captures/:id/export.csv',
      `driftbench-capture-${id}.csv`,
      await captureCsv(pool, id),
    );
  });
  return r;
}

/** `GET /api/studies/:id/captures.csv`: every finished capture of the study, summary and metadata. */
export function workbenchStudiesRouter(): Router {
  const r = Router();
  r.get('/:id/captures.csv', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    replyCsv(
      res,
      'GET /api/studies/:id/captures.csv',
      `driftbench-study-${id}-captures.csv`,
      await studyCapturesCsv(id),
    );
  });
  return r;
}
