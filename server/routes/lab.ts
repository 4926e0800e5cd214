import { Router } from 'express';
import { authorize } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import { parse } from '../middleware/validate.js';
import { LIST_LIMITS, pageQuery } from '../../shared/protocol/paging.js';
import { listReferences } from '../services/lab.js';
import { listInstruments } from '../services/instruments.js';
import { dashboard } from '../services/dashboard.js';

export function labRouter(): Router {
  const r = Router();
  r.get('/instruments', authorize('read'), async (req, res) => {
    const q = parse(pageQuery(LIST_LIMITS.instruments.max), req.query, 'query');
    reply(
      res,
      'GET /api/instruments',
      await listInstruments({
        limit: q.limit ?? LIST_LIMITS.instruments.default,
        cursor: q.cursor,
      }),
    );
  });
  r.get('/references', authorize('read'), async (req, res) => {
    const q = parse(pageQuery(LIST_LIMITS.references.max), req.query, 'query');
    reply(
      res,
      'GET /api/references',
      await listReferences({ limit: q.limit ?? LIST_LIMITS.references.default, cursor: q.cursor }),
    );
  });
  r.get('/dashboard', authorize('read'), async (_req, res) => {
    reply(res, 'GET /api/dashboard', await dashboard());
  });
  return r;
}
