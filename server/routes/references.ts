import { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import { IdParam } from '../../shared/protocol/api.js';
import { DutPatch, ReferenceCreate, ReferencePatch } from '../../shared/protocol/uncertainty.js';
import { createReference, updateDut, updateReference } from '../services/references.js';
import { getReference, makeLabReference } from '../services/equipment.js';
import { calibrationRoutes } from './equipmentRoutes.js';

/**
 * One frequency reference (admin, lead; every change audited): register, edit, its calibrations,
 * away at the calibration lab, retired, the lab's reference. The list stays in lab.ts.
 */
export function referencesRouter(): Router {
  const r = Router();
  r.post('/', authorize('lab:manage'), async (req, res) => {
    reply(
      res,
      'POST /api/references',
      { reference: await createReference(parse(ReferenceCreate, req.body), currentUser(req).id) },
      201,
    );
  });
  r.patch('/:id', authorize('lab:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'PATCH /api/references/:id', {
      reference: await updateReference(id, parse(ReferencePatch, req.body), currentUser(req).id),
    });
  });
  r.get('/:id', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'GET /api/references/:id', { reference: await getReference(id) });
  });
  calibrationRoutes(r, 'reference', 'lab:manage');
  r.post('/:id/lab-default', authorize('lab:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(
      res,
      'POST /api/references/:id/lab-default',
      await makeLabReference(id, currentUser(req).id),
    );
  });
  return r;
}

/** PATCH /api/duts/:id: limit, tuning-fork parameters, label (study planners; audited). */
export function dutsRouter(): Router {
  const r = Router();
  r.patch('/:id', authorize('studies:plan'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'PATCH /api/duts/:id', {
      dut: await updateDut(id, parse(DutPatch, req.body), currentUser(req).id),
    });
  });
  return r;
}
