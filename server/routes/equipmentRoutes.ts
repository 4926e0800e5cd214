import type { Router } from 'express';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import { reply } from '../middleware/responses.js';
import {
  calibrationHistory,
  recordCalibration,
  reinstate,
  retire,
  sendAway,
  type Subject,
} from '../services/equipment.js';
import { IdParam } from '../../shared/protocol/api.js';
import type { Permission } from '../../shared/protocol/roles.js';
import type { JsonRouteKey } from '../../shared/protocol/responses.js';
import {
  calibrationRecordSchema,
  EquipmentAway,
  EquipmentRetire,
} from '../../shared/protocol/equipment.js';

/** The contract's name for each calibration route of each kind of equipment. */
const KEYS = {
  instrument: {
    history: 'GET /api/instruments/:id/calibrations',
    record: 'POST /api/instruments/:id/calibrations',
    away: 'POST /api/instruments/:id/away',
    retire: 'POST /api/instruments/:id/retire',
    reinstate: 'POST /api/instruments/:id/reinstate',
  },
  reference: {
    history: 'GET /api/references/:id/calibrations',
    record: 'POST /api/references/:id/calibrations',
    away: 'POST /api/references/:id/away',
    retire: 'POST /api/references/:id/retire',
    reinstate: 'POST /api/references/:id/reinstate',
  },
} as const satisfies Record<Subject, Record<string, JsonRouteKey>>;

/**
 * The calibration routes an instrument and a reference share, added to the subject's router:
 * `GET/POST …/:id/calibrations` (the history, newest first; a new record), `POST …/:id/away`
 * (sent to a calibration lab), `…/retire { reason }` and `…/reinstate` (back in service). Reading
 * needs `read`; every change needs `permission` and is audited by the equipment service.
 */
export function calibrationRoutes(r: Router, subject: Subject, permission: Permission): void {
  const keys = KEYS[subject];
  r.get('/:id/calibrations', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, keys.history, await calibrationHistory(subject, id));
  });
  r.post('/:id/calibrations', authorize(permission), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const input = parse(calibrationRecordSchema(subject), req.body);
    reply(res, keys.record, await recordCalibration(subject, id, input, currentUser(req).id), 201);
  });
  r.post('/:id/away', authorize(permission), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const { sentOn } = parse(EquipmentAway, req.body ?? {});
    reply(res, keys.away, await sendAway(subject, id, sentOn, currentUser(req).id));
  });
  r.post('/:id/retire', authorize(permission), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const { reason } = parse(EquipmentRetire, req.body);
    reply(res, keys.retire, await retire(subject, id, reason, currentUser(req).id));
  });
  r.post('/:id/reinstate', authorize(permission), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    reply(res, keys.reinstate, await reinstate(subject, id, currentUser(req).id));
  });
}
