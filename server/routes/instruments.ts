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

/** Optional free text: trimmed; empty means "none" (stored as null). */
const optionalText = (max: number) =>
  z
    .string()
    .trim()
    .max(max, `must be at most ${max} characters`)
    .transform((s) => (s === '' ? null : s))
    .nullable()
    .optional();

const IsoDate = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date as YYYY-MM-DD')
  .refine((s) => {
    const d = new Date(`${s}T00:00:00Z`);
    return !Number.isNaN(d.getTime()) && d.toISOString().startsWith(s);
  }, 'is not a calendar date');

const fields = {
  name: z.string().trim().min(1, 'is required').max(120, 'must be at most 120 characters'),
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
