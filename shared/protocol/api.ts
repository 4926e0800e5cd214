import { z } from 'zod';
import { LIMIT_UNITS } from '../analysis/compare.js';
import { checkLimit, DutLimitFields, TuningForkFields } from './uncertainty.js';
import { Role } from './roles.js';
import { Text } from './text.js';
import { NewPassword } from './password.js';
import { Exposure } from './process.js';

/** Error envelope every API error uses. */
export const ApiErrorBody = z.object({
  error: z.object({ code: z.string(), message: z.string(), details: z.unknown().optional() }),
});
export type ApiErrorBody = z.infer<typeof ApiErrorBody>;

export const Email = z.string().trim().toLowerCase().email('must be an e-mail address').max(254);

export const LoginRequest = z.object({
  email: Email,
  password: z.string().min(1, 'is required').max(200),
});
export type LoginRequest = z.infer<typeof LoginRequest>;

export const UserCreate = z.object({
  email: Email,
  name: Text({ min: 1, max: 120 }),
  role: Role,
  password: NewPassword,
});
export type UserCreate = z.infer<typeof UserCreate>;

export const UserPatch = z
  .object({
    name: Text({ min: 1, max: 120 }).optional(),
    role: Role.optional(),
    active: z.boolean().optional(),
  })
  .strict()
  .refine((v) => Object.keys(v).length > 0, { message: 'nothing to change' });
export type UserPatch = z.infer<typeof UserPatch>;

export const IdParam = z.object({ id: z.coerce.number().int().positive().max(2_147_483_647) });

export const STUDY_STATUSES = ['draft', 'running', 'in-review', 'approved', 'returned'] as const;
export const StudyStatus = z.enum(STUDY_STATUSES);
export type StudyStatus = z.infer<typeof StudyStatus>;

export const StudyCreate = z.object({
  title: Text({ min: 1, max: 200 }),
  /** Accept simulated captures (off unless asked for: a study's evidence is real by default). */
  allowSimulated: z.boolean().optional(),
  process: Text({ max: 200 }).optional(),
  description: Text({ max: 5000, trim: false }).optional(),
});
export type StudyCreate = z.infer<typeof StudyCreate>;

/** The body of `PATCH /api/studies/:id/settings`: a study's planner settings. */
export const StudySettings = z
  .object({
    /** Accept captures recorded from a simulator (demo and training studies). */
    allowSimulated: z.boolean().optional(),
  })
  .strict();
export type StudySettings = z.infer<typeof StudySettings>;

/** A checkpoint's exposure, validated per process kind (shared/protocol/process.ts). */
export { Exposure } from './process.js';

export const CheckpointCreate = z.object({
  name: Text({ min: 1, max: 200 }),
  order: z.number().int().min(0).max(1000).optional(),
  exposure: Exposure.optional(),
});
export type CheckpointCreate = z.infer<typeof CheckpointCreate>;

export { LIMIT_UNITS };
export const DUT_KINDS = [
  'crystal',
  'oscillator',
  'tuning-fork',
  'tcxo',
  'accelerometer',
  'capacitor',
  'relay',
  'other',
] as const;
export const DutCreate = z
  .object({
    label: Text({ min: 1, max: 120 }),
    kind: z.enum(DUT_KINDS),
    nominal: z.number().finite().positive(),
    unit: Text({ min: 1, max: 20 }),
    ...DutLimitFields,
    limitUnit: z.enum(LIMIT_UNITS),
    position: Text({ max: 60 }).optional(),
    serial: Text({ max: 120 }).optional(),
    ...TuningForkFields,
  })
  .superRefine(checkLimit);
export type DutCreate = z.infer<typeof DutCreate>;

/** Instrument kinds live with the rest of the lab's equipment. */
export { INSTRUMENT_KINDS } from './equipment.js';
