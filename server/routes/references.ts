import { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { IdParam } from '../../shared/protocol/api.js';
import { DutPatch, ReferenceCreate, ReferencePatch } from '../../shared/protocol/uncertainty.js';
import { createReference, updateDut, updateReference } from '../services/references.js';

/** POST /api/references, PATCH /api/references/:id (admin, lead; audited). GET stays in lab.ts. */
export function referencesRouter(): Router {
  const r = Router();
  r.post('/', authorize('lab:manage'), async (req, res) => {
    res.status(201).json({ reference: await createReference(parse(ReferenceCreate, req.body), currentUser(req).id) });
  });
  r.patch('/:id', authorize('lab:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json({ reference: await updateReference(id, parse(ReferencePatch, req.body), currentUser(req).id) });
  });
  return r;
}

/** PATCH /api/duts/:id: limit, tuning-fork parameters, label (study planners; audited). */
export function dutsRouter(): Router {
  const r = Router();
  r.patch('/:id', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json({ dut: await updateDut(id, parse(DutPatch, req.body), currentUser(req).id) });
  });
  return r;
}
