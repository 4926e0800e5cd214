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
import {
  calibrationHistory,
  recordCalibration,
  reinstate,
  retire,
  sendAway,
} from '../services/equipment.js';
import { IdParam } from '../../shared/protocol/api.js';
import { LinkProfile } from '../../shared/protocol/linkProfile.js';
import {
  CalibrationRecordCreate,
  EquipmentAway,
  EquipmentRetire,
  InstrumentCreate,
  InstrumentPatch,
} from '../../shared/protocol/equipment.js';

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
  r.get('/:id/calibrations', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, 'GET /api/instruments/:id/calibrations', await calibrationHistory('instrument', id));
  });
  r.post('/:id/calibrations', authorize('instruments:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res
      .status(201)
      .json(
        await recordCalibration(
          'instrument',
          id,
          parse(CalibrationRecordCreate, req.body),
          currentUser(req).id,
        ),
      );
  });
  r.post('/:id/away', authorize('instruments:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json(
      await sendAway(
        'instrument',
        id,
        parse(EquipmentAway, req.body ?? {}).sentOn,
        currentUser(req).id,
      ),
    );
  });
  r.post('/:id/retire', authorize('instruments:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json(
      await retire('instrument', id, parse(EquipmentRetire, req.body).reason, currentUser(req).id),
    );
  });
  r.post('/:id/reinstate', authorize('instruments:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json(await reinstate('instrument', id, currentUser(req).id));
  });
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
