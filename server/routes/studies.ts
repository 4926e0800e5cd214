import { Router } from 'express';
import type pg from 'pg';
import { studyMatrix } from '../services/comparisons.js';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { addCheckpoint, addDut, createStudy, getStudy, listStudies, updateStudySettings } from '../services/studies.js';
import { CheckpointCreate, DutCreate, IdParam, StudyCreate, StudySettings } from '../../shared/protocol/api.js';
import { LIST_LIMITS, pageQuery } from '../../shared/protocol/paging.js';

export function studiesRouter(pool: pg.Pool): Router {
  const r = Router();
  r.get('/', authorize('read'), async (req, res) => {
    const q = parse(pageQuery(LIST_LIMITS.studies.max), req.query, 'query');
    res.json(await listStudies({ limit: q.limit ?? LIST_LIMITS.studies.default, cursor: q.cursor }));
  });
  r.get('/:id', authorize('read'), async (req, res) => {
    res.json(await getStudy(parse(IdParam, req.params, 'id').id));
  });
  r.get('/:id/matrix', authorize('read'), async (req, res) => {
    res.json(await studyMatrix(pool, parse(IdParam, req.params, 'id').id));
  });
  r.post('/', authorize('studies:plan'), async (req, res) => {
    res.status(201).json(await createStudy(parse(StudyCreate, req.body), currentUser(req).id));
  });
  r.patch('/:id/settings', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json(await updateStudySettings(id, parse(StudySettings, req.body), currentUser(req).id));
  });
  r.post('/:id/checkpoints', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.status(201).json(await addCheckpoint(id, parse(CheckpointCreate, req.body), currentUser(req).id));
  });
  r.post('/:id/duts', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.status(201).json(await addDut(id, parse(DutCreate, req.body), currentUser(req).id));
  });
  return r;
}
