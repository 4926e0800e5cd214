import { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
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
    res.json(await updateStudy(id, parse(StudyPatch, req.body), currentUser(req).id));
  });
  r.delete('/:id', authorize('studies:plan'), async (req, res) => {
    await deleteStudy(parse(IdParam, req.params, 'id').id, currentUser(req).id);
    res.status(204).end();
  });
  r.post('/:id/checkpoints/order', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json({
      checkpoints: await reorderCheckpoints(
        id,
        parse(CheckpointOrder, req.body).ids,
        currentUser(req).id,
      ),
    });
  });
  r.get('/:id/cells', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const q = parse(CellQuery, req.query, 'query');
    res.json(await cellCaptures(id, q.dutId, q.checkpointId));
  });
  r.put('/:id/cells', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json(await chooseCell(id, parse(CellChoice, req.body), currentUser(req).id));
  });
  return r;
}

/** PATCH/DELETE /api/checkpoints/:id. */
export function checkpointsRouter(): Router {
  const r = Router();
  r.patch('/:id', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json(await updateCheckpoint(id, parse(CheckpointPatch, req.body), currentUser(req).id));
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
    res.json(await excludeCapture(id, parse(CaptureExclude, req.body).reason, currentUser(req).id));
  });
  r.post('/:id/include', authorize('studies:review'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json(await includeCapture(id, currentUser(req).id));
  });
  return r;
}
