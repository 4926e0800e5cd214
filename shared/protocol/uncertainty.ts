import { z } from 'zod';
import { COUNTER_KINDS } from '../analysis/counter.js';
import { DRIFT_MODELS } from '../analysis/drift.js';
import { DutQuantityLimits } from './dutQuantities.js';

/** How a counter measures (shared/analysis/counter.ts). */
export const COUNTER_TYPES = COUNTER_KINDS;
export const CounterType = z.enum(COUNTER_TYPES, {
  message: `must be one of ${COUNTER_TYPES.join(', ')}`,
});

/** What kind of frequency reference a lab holds; a disciplined source hardly ages, an OCXO does. */
export const REFERENCE_KINDS = [
  'gnss-disciplined',
  'rubidium',
  'ocxo',
  'internal-timebase',
  'other',
] as const;
export const ReferenceKind = z.enum(REFERENCE_KINDS, {
  message: `must be one of ${REFERENCE_KINDS.join(', ')}`,
});

/** Drift removed before stability (shared/analysis/drift.ts); linear is the default for frequency. */
export const DRIFT_CHOICES = DRIFT_MODELS;

/** Counter fields of an instrument: resolution in counts (gated) or seconds (reciprocal, time-interval). */
export const CounterFields = {
  counterType: CounterType.nullable().optional(),
  counterResolution: z
    .number()
    .finite()
    .positive('must be greater than zero')
    .max(1e6)
    .nullable()
    .optional(),
};

/** A DUT's limit: a symmetric ±limit, or lower/upper bounds (one may be left open). */
export const DutLimitFields = {
  limit: z.number().finite().positive('must be greater than zero').nullable().optional(),
  limitLow: z.number().finite().nullable().optional(),
  limitHigh: z.number().finite().nullable().optional(),
};

/** A tuning fork's parabola, T0 °C and B ppm/°C², with standard uncertainties (null: the defaults). */
export const TuningForkFields = {
  turnoverC: z.number().finite().min(-60).max(150).nullable().optional(),
  turnoverU: z.number().finite().min(0).max(50).nullable().optional(),
  parabolicB: z.number().finite().min(-1).max(1).nullable().optional(),
  parabolicBU: z.number().finite().min(0).max(1).nullable().optional(),
};

type LimitShape = { limit?: number | null; limitLow?: number | null; limitHigh?: number | null };

/** Either ±limit or at least one bound, never both; a lower bound below the upper one. */
export function checkLimit(v: LimitShape, ctx: z.RefinementCtx): void {
  const bounds = v.limitLow != null || v.limitHigh != null;
  if (v.limit != null && bounds) {
    ctx.addIssue({
      code: 'custom',
      path: ['limit'],
      message: 'give either a symmetric limit or lower/upper bounds, not both',
    });
  } else if (v.limit == null && !bounds) {
    ctx.addIssue({
      code: 'custom',
      path: ['limit'],
      message: 'Give the limit (or a lower and/or upper bound)',
    });
  }
  if (v.limitLow != null && v.limitHigh != null && !(v.limitLow < v.limitHigh)) {
    ctx.addIssue({ code: 'custom', path: ['limitHigh'], message: 'must be above the lower bound' });
  }
}

/** PATCH /api/duts/:id: the limit, the tuning-fork parameters and the descriptive fields. */
export const DutPatch = z
  .strictObject({
    label: z.string().trim().min(1, 'is required').max(120).optional(),
    position: z.string().trim().max(60).nullable().optional(),
    serial: z.string().trim().max(120).nullable().optional(),
    ...DutLimitFields,
    ...TuningForkFields,
    /** Limits per quantity of the DUT's kind (shared/protocol/dutQuantities.ts); checked against the kind by the server. */
    limits: DutQuantityLimits.optional(),
    /** Archive (true) or restore (false): an archived DUT leaves the matrix, its captures stay. */
    archived: z.boolean().optional(),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'nothing to change' });
export type DutPatch = z.infer<typeof DutPatch>;

const IsoDay = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date as YYYY-MM-DD')
  .refine((s) => {
    const d = new Date(`${s}T00:00:00Z`);
    return (
      !Number.isNaN(d.getTime()) &&
      d.toISOString().startsWith(s) &&
      s >= '1990-01-01' &&
      s <= '2100-12-31'
    );
  }, 'is not a plausible calendar date');

/** A frequency reference's registration and calibration record (fractional values, per day). */
const referenceFields = {
  name: z.string().trim().min(1, 'is required').max(120),
  kind: ReferenceKind.nullable().optional(),
  nominalHz: z.number().finite().positive('must be greater than zero'),
  fractionalOffset: z.number().finite().min(-1e-3).max(1e-3),
  standardUncertainty: z.number().finite().min(0).max(1e-3),
  verifiedBy: z.string().trim().max(2000).nullable().optional(),
  verifiedAt: IsoDay.nullable().optional(),
  ageingPerDay: z.number().finite().min(-1e-6).max(1e-6).nullable().optional(),
  ageingUPerDay: z.number().finite().min(0).max(1e-6).nullable().optional(),
  instrumentId: z.number().int().positive().nullable().optional(),
};
export const ReferenceCreate = z.strictObject(referenceFields);
export type ReferenceCreate = z.infer<typeof ReferenceCreate>;
export const ReferencePatch = z
  .strictObject({
    ...referenceFields,
    name: referenceFields.name.optional(),
    nominalHz: referenceFields.nominalHz.optional(),
    fractionalOffset: referenceFields.fractionalOffset.optional(),
    standardUncertainty: referenceFields.standardUncertainty.optional(),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'nothing to change' });
export type ReferencePatch = z.infer<typeof ReferencePatch>;
