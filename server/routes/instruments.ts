import { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import {
  clearLinkProfile,
  createInstrument,
  getInstrument,
  saveLinkProfile,
  updateInstrument,
} from '../services/instruments.js';
import { calibrationRoutes } from './equipmentRoutes.js';
import { IdParam } from '../../shared/protocol/api.js';
import { LinkProfile } from '../../shared/protocol/linkProfile.js';
import { InstrumentCreate, InstrumentPatch } from '../../shared/protocol/equipment.js';

/** One instrument: registration, calibrations, away/retired, link profile. GET /api/instruments stays in lab.ts. */
export function instrumentsRouter(): Router {
  const r = Router();
  r.post('/', authorize('instruments:manage'), async (req, res) => {
    const input = parse(InstrumentCreate, req.body);
    reply(
      res,
      'POST /api/instruments',
      { instrument: await createInstrument(input, currentUser(req).id) },
      201,
    );
  });
  r.get('/:id', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'GET /api/instruments/:id', { instrument: await getInstrument(id) });
  });
  r.patch('/:id', authorize('instruments:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'PATCH /api/instruments/:id', {
      instrument: await updateInstrument(id, parse(InstrumentPatch, req.body), currentUser(req).id),
    });
  });
  calibrationRoutes(r, 'instrument', 'instruments:manage');
  r.put('/:id/link-profile', authorize('lab:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const profile = parse(LinkProfile, req.body);
    reply(res, 'PUT /api/instruments/:id/link-profile', {
      linkProfile: await saveLinkProfile(id, profile, currentUser(req).id),
    });
  });
  r.delete('/:id/link-profile', authorize('lab:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    await clearLinkProfile(id, currentUser(req).id);
    res.status(204).end();
  });
  return r;
}
