import { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import { IdParam } from '../../shared/protocol/api.js';
import {
  CaptureExclude,
  CellChoice,
  CellQuery,
  CheckpointOrder,
  CheckpointPatch,
  StudyPatch,
} from '../../shared/protocol/studyEdit.js';
import {
  cellCaptures,
  chooseCell,
  deleteCheckpoint,
  deleteDut,
  deleteStudy,
  excludeCapture,
  includeCapture,
  reorderCheckpoints,
  updateCheckpoint,
  updateStudy,
} from '../services/studyEdit.js';

/** PATCH/DELETE /api/studies/:id, checkpoint order, and the matrix cells' chosen captures. */
export function studyEditRouter(): Router {
  const r = Router();
  r.patch('/:id', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const patch = parse(StudyPatch, req.body);
    reply(res, 'PATCH /api/studies/:id', await updateStudy(id, patch, currentUser(req).id));
  });
  r.delete('/:id', authorize('studies:plan'), async (req, res) => {
    await deleteStudy(parse(IdParam, req.params, 'id').id, currentUser(req).id);
    res.status(204).end();
  });
  r.post('/:id/checkpoints/order', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const { ids } = parse(CheckpointOrder, req.body);
    reply(res, 'POST /api/studies/:id/checkpoints/order', {
      checkpoints: await reorderCheckpoints(id, ids, currentUser(req).id),
    });
  });
  r.get('/:id/cells', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const q = parse(CellQuery, req.query, 'query');
    reply(res, 'GET /api/studies/:id/cells', await cellCaptures(id, q.dutId, q.checkpointId));
  });
  r.put('/:id/cells', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const choice = parse(CellChoice, req.body);
    reply(res, 'PUT /api/studies/:id/cells', await chooseCell(id, choice, currentUser(req).id));
  });
  return r;
}

/** PATCH/DELETE /api/checkpoints/:id. */
export function checkpointsRouter(): Router {
  const r = Router();
  r.patch('/:id', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const patch = parse(CheckpointPatch, req.body);
    reply(
      res,
      'PATCH /api/checkpoints/:id',
      await updateCheckpoint(id, patch, currentUser(req).id),
    );
  });
  r.delete('/:id', authorize('studies:plan'), async (req, res) => {
    await deleteCheckpoint(parse(IdParam, req.params, 'id').id, currentUser(req).id);
    res.status(204).end();
  });
  return r;
}

/** DELETE /api/duts/:id (PATCH, with `archived`, lives beside the limits in references.ts). */
export function dutDeleteRouter(): Router {
  const r = Router();
  r.delete('/:id', authorize('studies:plan'), async (req, res) => {
    await deleteDut(parse(IdParam, req.params, 'id').id, currentUser(req).id);
    res.status(204).end();
  });
  return r;
}

/** POST /api/captures/:id/exclude { reason } and /include: a lead's call on the evidence. */
export function captureEvidenceRouter(): Router {
  const r = Router();
  r.post('/:id/exclude', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const { reason } = parse(CaptureExclude, req.body);
    reply(
      res,
      'POST /api/captures/:id/exclude',
      await excludeCapture(id, reason, currentUser(req).id),
    );
  });
  r.post('/:id/include', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'POST /api/captures/:id/include', await includeCapture(id, currentUser(req).id));
  });
  return r;
}
