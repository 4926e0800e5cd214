import { Router } from 'express';
import type pg from 'pg';
import { studyMatrix } from '../services/comparisons.js';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import {
  addCheckpoint,
  addDut,
  createStudy,
  getStudy,
  listStudies,
  updateStudySettings,
} from '../services/studies.js';
import {
  CheckpointCreate,
  DutCreate,
  IdParam,
  StudyCreate,
  StudySettings,
} from '../../shared/protocol/api.js';
import { LIST_LIMITS, pageQuery } from '../../shared/protocol/paging.js';

export function studiesRouter(pool: pg.Pool): Router {
  const r = Router();
  r.get('/', authorize('read'), async (req, res) => {
    const q = parse(pageQuery(LIST_LIMITS.studies.max), req.query, 'query');
    reply(
      res,
      'GET /api/studies',
      await listStudies({ limit: q.limit ?? LIST_LIMITS.studies.default, cursor: q.cursor }),
    );
  });
  r.get('/:id', authorize('read'), async (req, res) => {
    reply(res, 'GET /api/studies/:id', await getStudy(parse(IdParam, req.params, 'id').id));
  });
  r.get('/:id/matrix', authorize('read'), async (req, res) => {
    reply(
      res,
      'GET /api/studies/:id/matrix',
      await studyMatrix(pool, parse(IdParam, req.params, 'id').id),
    );
  });
  r.post('/', authorize('studies:plan'), async (req, res) => {
    reply(
      res,
      'POST /api/studies',
      await createStudy(parse(StudyCreate, req.body), currentUser(req).id),
      201,
    );
  });
  r.patch('/:id/settings', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(
      res,
      'PATCH /api/studies/:id/settings',
      await updateStudySettings(id, parse(StudySettings, req.body), currentUser(req).id),
    );
  });
  r.post('/:id/checkpoints', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(
      res,
      'POST /api/studies/:id/checkpoints',
      await addCheckpoint(id, parse(CheckpointCreate, req.body), currentUser(req).id),
      201,
    );
  });
  r.post('/:id/duts', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(
      res,
      'POST /api/studies/:id/duts',
      await addDut(id, parse(DutCreate, req.body), currentUser(req).id),
      201,
    );
  });
  return r;
}
