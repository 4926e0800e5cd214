import { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import { createUser, listUsers, resetPassword, updateUser } from '../services/users.js';
import { PasswordReset } from '../../shared/protocol/password.js';
import { LIST_LIMITS, pageQuery } from '../../shared/protocol/paging.js';
import { IdParam, UserCreate, UserPatch } from '../../shared/protocol/api.js';

export function usersRouter(): Router {
  const r = Router();
  r.use(authorize('users:manage'));
  r.get('/', async (req, res) => {
    const q = parse(pageQuery(LIST_LIMITS.users.max), req.query, 'query');
    reply(
      res,
      'GET /api/users',
      await listUsers({ limit: q.limit ?? LIST_LIMITS.users.default, cursor: q.cursor }),
    );
  });
  r.post('/', async (req, res) => {
    reply(
      res,
      'POST /api/users',
      { user: await createUser(parse(UserCreate, req.body), currentUser(req).id) },
      201,
    );
  });
  r.patch('/:id', async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'PATCH /api/users/:id', {
      user: await updateUser(id, parse(UserPatch, req.body), currentUser(req).id),
    });
  });
  r.post('/:id/password-reset', async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const { temporaryPassword } = parse(PasswordReset, req.body);
    reply(res, 'POST /api/users/:id/password-reset', {
      user: await resetPassword(id, temporaryPassword, currentUser(req).id),
    });
  });
  return r;
}
