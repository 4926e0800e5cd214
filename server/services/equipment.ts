import { QueryTypes, type Transaction } from 'sequelize';
import { CalibrationRecord, Instrument, Reference } from '../models/index.js';
import { AppError, NotFoundError, ValidationError } from '../errors.js';
import { audit } from './audit.js';
import { utcToday } from './calibration.js';
import { publicInstrument } from './instruments.js';
import { publicReference } from './lab.js';
import type {
  CalibrationRecord as CalibrationRecordOut,
  CalibrationRecordCreate,
} from '../../shared/protocol/equipment.js';

/**
 * The lab's equipment over time: calibrations recorded (never overwritten), a trip to the
 * calibration lab, retirement and return to service, and the lab's reference. Every change locks
 * the equipment's row and commits with its audit event.
 */
export type Subject = 'instrument' | 'reference';

/** 409 with a code the client can tell apart from other conflicts. */
class EquipmentConflict extends AppError {
  constructor(code: string, message: string) {
    super(409, code, message);
  }
}

const LABEL: Record<Subject, string> = { instrument: 'Instrument', reference: 'Reference' };

async function lockRow(
  subject: Subject,
  id: number,
  transaction: Transaction,
): Promise<Instrument | Reference> {
  const row =
    subject === 'instrument'
      ? await Instrument.findByPk(id, { transaction, lock: transaction.LOCK.UPDATE })
      : await Reference.findByPk(id, { transaction, lock: transaction.LOCK.UPDATE });
  if (!row) throw new NotFoundError(LABEL[subject]);
  return row;
}

async function exists(subject: Subject, id: number): Promise<void> {
  const row =
    subject === 'instrument' ? await Instrument.findByPk(id) : await Reference.findByPk(id);
  if (!row) throw new NotFoundError(LABEL[subject]);
}

/** The equipment as it now stands, under its subject's key — what the routes answer. */
export type Standing =
  | { instrument: ReturnType<typeof publicInstrument> }
  | { reference: ReturnType<typeof publicReference> };

function standingOf(subject: Subject, row: Instrument | Reference): Standing {
  return subject === 'instrument'
    ? { instrument: publicInstrument(row as Instrument) }
    : { reference: publicReference(row as Reference) };
}

function refuseRetired(subject: Subject, row: Instrument | Reference, what: string): void {
  if (row.retiredAt) {
    throw new EquipmentConflict(
      'equipment-retired',
      `${LABEL[subject]} “${row.name}” is retired: return it to service before ${what}.`,
    );
  }
}

const RECORD_SQL = `
  SELECT r.id, r.instrument_id AS "instrumentId", r.reference_id AS "referenceId",
         to_char(r.calibrated_on, 'YYYY-MM-DD') AS "calibratedOn", to_char(r.due_on, 'YYYY-MM-DD') AS "dueOn",
         r.certificate, r.issued_by AS "issuedBy", r.uncertainty, r.fractional_offset AS "fractionalOffset",
         r.standard_uncertainty AS "standardUncertainty", r.notes, u.name AS "recordedBy", r.created_at AS "createdAt"
  FROM calibration_records r LEFT JOIN users u ON u.id = r.recorded_by`;

type RecordRow = Omit<CalibrationRecordOut, 'subject' | 'subjectId' | 'createdAt'> & {
  instrumentId: number | null;
  referenceId: number | null;
  createdAt: Date;
};

function publicRecord(r: RecordRow): CalibrationRecordOut {
  return {
    id: r.id,
    subject: r.instrumentId !== null ? 'instrument' : 'reference',
    subjectId: (r.instrumentId ?? r.referenceId) as number,
    calibratedOn: r.calibratedOn,
    dueOn: r.dueOn,
    certificate: r.certificate,
    issuedBy: r.issuedBy,
    uncertainty: r.uncertainty,
    fractionalOffset: r.fractionalOffset,
    standardUncertainty: r.standardUncertainty,
    notes: r.notes,
    recordedBy: r.recordedBy,
    createdAt: new Date(r.createdAt).toISOString(),
  };
}

/** GET …/:id/calibrations: every calibration of one instrument or reference, newest first. */
export async function calibrationHistory(
  subject: Subject,
  id: number,
): Promise<{ calibrations: CalibrationRecordOut[] }> {
  await exists(subject, id);
  const column = subject === 'instrument' ? 'instrument_id' : 'reference_id';
  const rows = await CalibrationRecord.sequelize!.query<RecordRow>(
    `${RECORD_SQL} WHERE r.${column} = $1 ORDER BY r.calibrated_on DESC, r.id DESC`,
    { bind: [id], type: QueryTypes.SELECT },
  );
  return { calibrations: rows.map(publicRecord) };
}

/**
 * Records one calibration. The record is always kept; it becomes the equipment's current
 * calibration (due date, and for a reference its offset, uncertainty and verification) unless an
 * earlier-dated one is being entered after a later one — history filled in afterwards never
 * replaces the newer calibration. A current record also brings the equipment back from the
 * calibration lab, which clears "overdue" and "away".
 */
export async function recordCalibration(
  subject: Subject,
  id: number,
  input: CalibrationRecordCreate,
  actorId: number,
  now = new Date(),
) {
  if (input.calibratedOn > utcToday(now)) {
    throw new ValidationError('calibratedOn: must not be in the future', [
      { path: 'calibratedOn', message: 'must not be in the future' },
    ]);
  }
  if (subject === 'reference') {
    const missing = (['fractionalOffset', 'standardUncertainty'] as const).filter(
      (k) => input[k] === undefined,
    );
    if (missing.length > 0) {
      throw new ValidationError(
        `${missing[0]}: is required for a reference (as found by the calibration)`,
        missing.map((path) => ({ path, message: 'is required for a reference' })),
      );
    }
  }
  return CalibrationRecord.sequelize!.transaction(async (transaction) => {
    const row = await lockRow(subject, id, transaction);
    refuseRetired(subject, row, 'recording a calibration');
    const latest = await CalibrationRecord.findOne({
      where: subject === 'instrument' ? { instrumentId: id } : { referenceId: id },
      order: [['calibratedOn', 'DESC']],
      transaction,
    });
    const record = await CalibrationRecord.create(
      {
        instrumentId: subject === 'instrument' ? id : null,
        referenceId: subject === 'reference' ? id : null,
        calibratedOn: input.calibratedOn,
        dueOn: input.dueOn ?? null,
        certificate: input.certificate,
        issuedBy: input.issuedBy,
        uncertainty: input.uncertainty ?? null,
        fractionalOffset: input.fractionalOffset ?? null,
        standardUncertainty: input.standardUncertainty ?? null,
        notes: input.notes ?? null,
        recordedBy: actorId,
      },
      { transaction },
    );
    const current = !latest || input.calibratedOn >= latest.calibratedOn;
    const changed: Record<string, { from: unknown; to: unknown }> = {};
    const set = (key: string, value: unknown) => {
      // An instrument or a reference: both typed models, read and written here by field name.
      const target = row as unknown as {
        getDataValue(k: string): unknown;
        setDataValue(k: string, v: unknown): void;
      };
      const before = target.getDataValue(key);
      if (before !== value) changed[key] = { from: before ?? null, to: value };
      target.setDataValue(key, value);
    };
    if (current) {
      set('calibrationDue', input.dueOn ?? null);
      set('awaySince', null);
      if (subject === 'reference') {
        set('verifiedAt', input.calibratedOn);
        set('verifiedBy', `${input.issuedBy}, certificate ${input.certificate}`);
        set('fractionalOffset', input.fractionalOffset);
        set('standardUncertainty', input.standardUncertainty);
      }
      await row.save({ transaction });
    }
    await audit(
      actorId,
      `${subject}.calibration.record`,
      subject,
      id,
      {
        calibrationId: record.id,
        calibratedOn: input.calibratedOn,
        dueOn: input.dueOn ?? null,
        certificate: input.certificate,
        issuedBy: input.issuedBy,
        current,
        changes: changed,
      },
      transaction,
    );
    const [stored] = await CalibrationRecord.sequelize!.query<RecordRow>(
      `${RECORD_SQL} WHERE r.id = $1`,
      {
        bind: [record.id],
        type: QueryTypes.SELECT,
        transaction,
      },
    );
    return { calibration: publicRecord(stored), ...standingOf(subject, row) };
  });
}

/** POST …/:id/away: sent to a calibration lab. Its state reads "Away for calibration" until a calibration is recorded. */
export async function sendAway(
  subject: Subject,
  id: number,
  sentOn: string | undefined,
  actorId: number,
  now = new Date(),
) {
  const day = sentOn ?? utcToday(now);
  if (day > utcToday(now)) {
    throw new ValidationError('sentOn: must not be in the future', [
      { path: 'sentOn', message: 'must not be in the future' },
    ]);
  }
  return Instrument.sequelize!.transaction(async (transaction) => {
    const row = await lockRow(subject, id, transaction);
    refuseRetired(subject, row, 'sending it for calibration');
    if (row.awaySince)
      throw new EquipmentConflict(
        'equipment-away',
        `${LABEL[subject]} “${row.name}” has been away for calibration since ${row.awaySince}.`,
      );
    row.awaySince = day;
    await row.save({ transaction });
    await audit(
      actorId,
      `${subject}.away`,
      subject,
      id,
      { awaySince: { from: null, to: day } },
      transaction,
    );
    return standingOf(subject, row);
  });
}

/** POST …/:id/retire: out of service for good (kept for the captures that name it). */
export async function retire(subject: Subject, id: number, reason: string, actorId: number) {
  return Instrument.sequelize!.transaction(async (transaction) => {
    const row = await lockRow(subject, id, transaction);
    if (row.retiredAt)
      throw new EquipmentConflict(
        'equipment-retired',
        `${LABEL[subject]} “${row.name}” is already retired.`,
      );
    row.retiredAt = new Date();
    row.retiredReason = reason;
    if (row instanceof Reference) row.labDefault = false;
    await row.save({ transaction });
    await audit(actorId, `${subject}.retire`, subject, id, { reason }, transaction);
    return standingOf(subject, row);
  });
}

/** POST …/:id/reinstate: back in service (from retirement, or back from the calibration lab without a new calibration). */
export async function reinstate(subject: Subject, id: number, actorId: number) {
  return Instrument.sequelize!.transaction(async (transaction) => {
    const row = await lockRow(subject, id, transaction);
    if (!row.retiredAt && !row.awaySince) {
      throw new EquipmentConflict(
        'equipment-in-service',
        `${LABEL[subject]} “${row.name}” is already in service.`,
      );
    }
    const details = {
      retiredAt: { from: row.retiredAt, to: null },
      awaySince: { from: row.awaySince, to: null },
    };
    row.retiredAt = null;
    row.retiredReason = null;
    row.awaySince = null;
    await row.save({ transaction });
    await audit(actorId, `${subject}.reinstate`, subject, id, details, transaction);
    return standingOf(subject, row);
  });
}

/** POST /api/references/:id/lab-default: the lab's reference, the bench's default (one at a time). */
export async function makeLabReference(id: number, actorId: number) {
  return Reference.sequelize!.transaction(async (transaction) => {
    const row = (await lockRow('reference', id, transaction)) as Reference;
    refuseRetired('reference', row, 'making it the lab’s reference');
    const before = await Reference.findOne({ where: { labDefault: true }, transaction });
    if (before && before.id !== id) {
      before.labDefault = false;
      await before.save({ transaction });
    }
    row.labDefault = true;
    await row.save({ transaction });
    await audit(
      actorId,
      'reference.lab-default',
      'reference',
      id,
      { labDefault: { from: before?.id ?? null, to: id } },
      transaction,
    );
    return { reference: publicReference(row) };
  });
}

/** GET /api/references/:id. */
export async function getReference(id: number) {
  const row = await Reference.findByPk(id);
  if (!row) throw new NotFoundError('Reference');
  return publicReference(row);
}
