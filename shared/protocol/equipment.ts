/**
 * The lab's equipment: instruments and frequency references, their calibration records and the
 * words for their calibration state. The state itself is decided on the server
 * (`server/services/calibration.ts`), once, and sent with every instrument and reference; the
 * client only shows it.
 */
import { z } from 'zod';
import { CalendarDate, Text } from './text.js';
import { COUNTER_TYPES, CounterFields } from './uncertainty.js';
import { LinkProfile } from './linkProfile.js';

export const INSTRUMENT_KINDS = [
  'counter',
  'spi-bridge',
  'reference',
  'thermometer',
  'other',
] as const;
export const InstrumentKind = z.enum(INSTRUMENT_KINDS, {
  message: `must be one of ${INSTRUMENT_KINDS.join(', ')}`,
});
export type InstrumentKind = z.infer<typeof InstrumentKind>;

/** Days before the due date from which a calibration is "due soon" (the 30th day included). */
export const CALIBRATION_SOON_DAYS = 30;

/**
 * - `valid`: due more than 30 days from today;
 * - `due-soon`: due today or within 30 days;
 * - `overdue`: the due date has passed;
 * - `no-due-date`: none recorded (equipment that is not calibrated, or not yet);
 * - `away`: sent to a calibration lab and not back yet (whatever its due date).
 */
export const CALIBRATION_STATES = ['valid', 'due-soon', 'overdue', 'no-due-date', 'away'] as const;
export const CalibrationState = z.enum(CALIBRATION_STATES);
export type CalibrationState = z.infer<typeof CalibrationState>;

/** The calibration state as the server decided it, sent with each instrument and reference. */
export const CalibrationStatus = z.object({
  state: CalibrationState,
  /** Whole days from today (UTC) to the due date; negative when overdue; null without one. */
  daysLeft: z.number().int().nullable(),
  dueOn: z.string().nullable(),
  awaySince: z.string().nullable(),
  /** Counted by the Lab page and listed by the dashboard: overdue, due soon or away. */
  needsAttention: z.boolean(),
});
export type CalibrationStatus = z.infer<typeof CalibrationStatus>;

function days(n: number): string {
  return `${n} ${n === 1 ? 'day' : 'days'}`;
}

/**
 * The state in words a metrologist reads one way only ("Calibration valid", "Away for calibration";
 * never "In calibration", which could mean either). Shown in a column or tag about calibration.
 */
export function calibrationWords(s: Pick<CalibrationStatus, 'state' | 'daysLeft'>): string {
  switch (s.state) {
    case 'valid':
      return 'Calibration valid';
    case 'due-soon':
      return s.daysLeft === 0 ? 'Due today' : `Due in ${days(s.daysLeft ?? 0)}`;
    case 'overdue':
      return `Overdue by ${days(-(s.daysLeft ?? 0))}`;
    case 'no-due-date':
      return 'No due date';
    case 'away':
      return 'Away for calibration';
  }
}

/** Optional free text: trimmed; empty means "none" (stored as null). */
const optionalText = (max: number) =>
  Text({ max })
    .transform((s) => (s === '' ? null : s))
    .nullable()
    .optional();

const instrumentFields = {
  name: Text({ min: 1, max: 120 }),
  kind: InstrumentKind,
  maker: optionalText(120),
  model: optionalText(120),
  serial: optionalText(120),
  calibrationDue: CalendarDate.nullable().optional(),
  notes: optionalText(2000),
  ...CounterFields,
};

/** POST /api/instruments. */
export const InstrumentCreate = z.strictObject(instrumentFields);
export type InstrumentCreate = z.infer<typeof InstrumentCreate>;

/** PATCH /api/instruments/:id: registration fields (a calibration is recorded, not patched). */
export const InstrumentPatch = z
  .strictObject({
    ...instrumentFields,
    name: instrumentFields.name.optional(),
    kind: instrumentFields.kind.optional(),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'nothing to change' });
export type InstrumentPatch = z.infer<typeof InstrumentPatch>;

/** Today's date in UTC as YYYY-MM-DD, on the machine that checks the record. */
const utcDay = (): string => new Date().toISOString().slice(0, 10);

const calibrationRecordFields = {
  calibratedOn: CalendarDate,
  dueOn: CalendarDate.nullable().optional(),
  certificate: Text({ min: 1, max: 120 }),
  issuedBy: Text({ min: 1, max: 200 }),
  /** As stated on the certificate, e.g. "±0.05 °C (k = 2)". */
  uncertainty: optionalText(200),
  fractionalOffset: z.number().finite().min(-1e-3).max(1e-3).optional(),
  standardUncertainty: z
    .number()
    .finite()
    .positive('must be greater than zero')
    .max(1e-3)
    .optional(),
  notes: optionalText(2000),
};

/** A certificate is issued after the calibration: not dated in the future, due after it. */
function checkCalibrationDates(
  v: { calibratedOn: string; dueOn?: string | null },
  ctx: z.RefinementCtx,
): void {
  if (v.calibratedOn > utcDay()) {
    ctx.addIssue({ code: 'custom', path: ['calibratedOn'], message: 'must not be in the future' });
  }
  if (v.dueOn && v.dueOn <= v.calibratedOn) {
    ctx.addIssue({
      code: 'custom',
      path: ['dueOn'],
      message: 'must be after the calibration date',
    });
  }
}

/**
 * POST /api/instruments/:id/calibrations and /api/references/:id/calibrations: one calibration as
 * its certificate states it. A reference's record also gives the offset and standard uncertainty
 * it was found with (fractional); they become the reference's current record.
 */
export const CalibrationRecordCreate = z
  .strictObject(calibrationRecordFields)
  .superRefine(checkCalibrationDates);
export type CalibrationRecordCreate = z.infer<typeof CalibrationRecordCreate>;

const requiredForReference = { error: 'is required for a reference (as found by the calibration)' };

/** POST /api/references/:id/calibrations: the offset and its uncertainty are required. */
export const ReferenceCalibrationRecordCreate = z
  .strictObject({
    ...calibrationRecordFields,
    fractionalOffset: z.number(requiredForReference).finite().min(-1e-3).max(1e-3),
    standardUncertainty: z
      .number(requiredForReference)
      .finite()
      .positive('must be greater than zero')
      .max(1e-3),
  })
  .superRefine(checkCalibrationDates);

/** The calibration record schema of an instrument or a reference. */
export function calibrationRecordSchema(
  subject: 'instrument' | 'reference',
): z.ZodType<CalibrationRecordCreate> {
  return subject === 'reference' ? ReferenceCalibrationRecordCreate : CalibrationRecordCreate;
}

/** POST …/:id/away: sent to a calibration lab on `sentOn` (today when left out). */
export const EquipmentAway = z.strictObject({ sentOn: CalendarDate.optional() });
export type EquipmentAway = z.infer<typeof EquipmentAway>;

/** POST …/:id/retire: why it leaves service (kept in the audit trail and on its page). */
export const EquipmentRetire = z.strictObject({ reason: Text({ min: 1, max: 500 }) });
export type EquipmentRetire = z.infer<typeof EquipmentRetire>;

/** One calibration record (history: never changed once stored). */
export const CalibrationRecord = z.object({
  id: z.number().int(),
  subject: z.enum(['instrument', 'reference']),
  subjectId: z.number().int(),
  calibratedOn: z.string(),
  dueOn: z.string().nullable(),
  certificate: z.string(),
  issuedBy: z.string(),
  uncertainty: z.string().nullable(),
  fractionalOffset: z.number().nullable(),
  standardUncertainty: z.number().nullable(),
  notes: z.string().nullable(),
  recordedBy: z.string().nullable(),
  createdAt: z.string(),
});
export type CalibrationRecord = z.infer<typeof CalibrationRecord>;

/** An instrument as the API answers it (lists and GET /api/instruments/:id). */
export const InstrumentOut = z.object({
  id: z.number().int(),
  name: z.string(),
  kind: InstrumentKind,
  maker: z.string().nullable(),
  model: z.string().nullable(),
  serial: z.string().nullable(),
  calibrationDue: z.string().nullable(),
  /** Kept for older clients; the same as `calibration.state`. */
  calibrationState: CalibrationState,
  calibration: CalibrationStatus,
  awaySince: z.string().nullable(),
  retiredAt: z.string().nullable(),
  retiredReason: z.string().nullable(),
  notes: z.string().nullable(),
  linkProfile: LinkProfile.nullable(),
  counterType: z.enum(COUNTER_TYPES).nullable(),
  counterResolution: z.number().nullable(),
});
export type InstrumentOut = z.infer<typeof InstrumentOut>;

/** The answer of GET …/:id/calibrations, newest calibration first. */
export const CalibrationHistory = z.object({ calibrations: z.array(CalibrationRecord) });
export type CalibrationHistory = z.infer<typeof CalibrationHistory>;

/** The answer of POST …/:id/calibrations: the record and the equipment as it now stands. */
export const InstrumentCalibrated = z.object({
  calibration: CalibrationRecord,
  instrument: InstrumentOut,
});
export type InstrumentCalibrated = z.infer<typeof InstrumentCalibrated>;

/** A frequency reference as the API answers it: registration, current record and calibration state. */
export const ReferenceOut = z.object({
  id: z.number().int(),
  name: z.string(),
  kind: z.string().nullable(),
  nominalHz: z.number(),
  fractionalOffset: z.number(),
  standardUncertainty: z.number(),
  verifiedBy: z.string().nullable(),
  verifiedAt: z.string().nullable(),
  ageingPerDay: z.number().nullable(),
  ageingUPerDay: z.number().nullable(),
  instrumentId: z.number().int().nullable(),
  calibrationDue: z.string().nullable(),
  calibration: CalibrationStatus,
  awaySince: z.string().nullable(),
  retiredAt: z.string().nullable(),
  retiredReason: z.string().nullable(),
  /** The lab's reference: the bench's default. At most one. */
  labDefault: z.boolean(),
});
export type ReferenceOut = z.infer<typeof ReferenceOut>;

export const ReferenceCalibrated = z.object({
  calibration: CalibrationRecord,
  reference: ReferenceOut,
});
export type ReferenceCalibrated = z.infer<typeof ReferenceCalibrated>;
