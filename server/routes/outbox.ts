import { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { authorize } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import { IdParam } from '../../shared/protocol/api.js';
import { OutboxQuery } from '../../shared/protocol/review.js';
import { listOutbox, listReceived, retryNow } from '../services/mail.js';
import { NotFoundError } from '../errors.js';

/** `GET /api/outbox` (newest first), what the local mail service received, and "retry now": admins only. */
export function outboxRouter(): Router {
  const r = Router();
  r.get('/', authorize('outbox:read'), async (req, res) => {
    const q = parse(OutboxQuery, req.query, 'query');
    reply(
      res,
      'GET /api/outbox',
      await listOutbox({
        limit: q.limit,
        cursor: q.cursor ? Number(q.cursor) : undefined,
        status: q.status,
      }),
    );
  });
  r.get('/received', authorize('outbox:read'), async (req, res) => {
    const q = parse(OutboxQuery.pick({ limit: true, cursor: true }), req.query, 'query');
    reply(
      res,
      'GET /api/outbox/received',
      await listReceived({ limit: q.limit, cursor: q.cursor ? Number(q.cursor) : undefined }),
    );
  });
  r.post('/:id/retry', authorize('outbox:read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    if (!(await retryNow(id))) throw new NotFoundError('Queued or failed message');
    reply(res, 'POST /api/outbox/:id/retry', { id, status: 'retrying' }, 202);
  });
  return r;
}
