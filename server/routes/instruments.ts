import { Router } from 'express';
import { z } from 'zod';
import { parse } from '../middleware/validate.js';
import { authorize, currentUser } from '../middleware/auth.js';
import {
  clearLinkProfile,
  createInstrument,
  getInstrument,
  saveLinkProfile,
  updateInstrument,
} from '../services/instruments.js';
import { IdParam, INSTRUMENT_KINDS } from '../../shared/protocol/api.js';
import { LinkProfile } from '../../shared/protocol/linkProfile.js';
import { CounterFields } from '../../shared/protocol/uncertainty.js';
import { CalendarDate, Text } from '../../shared/protocol/text.js';

/** Optional free text: trimmed; empty means "none" (stored as null). */
const optionalText = (max: number) =>
  Text({ max })
    .transform((s) => (s === '' ? null : s))
    .nullable()
    .optional();

/** A real calendar date in a sane range (0000-01-01 or 9999-12-31 are refused with 400). */
const IsoDate = CalendarDate;

const fields = {
  name: Text({ min: 1, max: 120 }),
  kind: z.enum(INSTRUMENT_KINDS, { message: `must be one of ${INSTRUMENT_KINDS.join(', ')}` }),
  maker: optionalText(120),
  model: optionalText(120),
  serial: optionalText(120),
  calibrationDue: IsoDate.nullable().optional(),
  notes: optionalText(2000),
  ...CounterFields,
};

export const InstrumentCreate = z.strictObject(fields);
export const InstrumentPatch = z
  .strictObject({ ...fields, name: fields.name.optional(), kind: fields.kind.optional() })
  .refine((v) => Object.keys(v).length > 0, { message: 'nothing to change' });

/** One instrument, its registration and its stored link profile. GET /api/instruments stays in lab.ts. */
export function instrumentsRouter(): Router {
  const r = Router();
  r.post('/', authorize('lab:manage'), async (req, res) => {
    const input = parse(InstrumentCreate, req.body);
    res.status(201).json({ instrument: await createInstrument(input, currentUser(req).id) });
  });
  r.get('/:id', authorize('read'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json({ instrument: await getInstrument(id) });
  });
  r.patch('/:id', authorize('lab:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    res.json({ instrument: await updateInstrument(id, parse(InstrumentPatch, req.body), currentUser(req).id) });
  });
  r.put('/:id/link-profile', authorize('lab:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    const profile = parse(LinkProfile, req.body);
    res.json({ linkProfile: await saveLinkProfile(id, profile, currentUser(req).id) });
  });
  r.delete('/:id/link-profile', authorize('lab:manage'), async (req, res) => {
    const { id } = parse(IdParam, req.params, 'id');
    await clearLinkProfile(id, currentUser(req).id);
    res.status(204).end();
  });
  return r;
}
