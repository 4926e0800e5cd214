import { Instrument, Reference, Dut } from '../models/index.js';
import { NotFoundError, ValidationError } from '../errors.js';
import { audit } from './audit.js';
import { assertStudyWritable } from './studyLock.js';
import { publicReference } from './lab.js';
import { applyQuantityLimits } from './dutLimits.js';
import type {
  ReferenceCreate,
  ReferencePatch,
  DutPatch,
} from '../../shared/protocol/uncertainty.js';

const REFERENCE_FIELDS = [
  'name',
  'kind',
  'nominalHz',
  'fractionalOffset',
  'standardUncertainty',
  'verifiedBy',
  'verifiedAt',
  'ageingPerDay',
  'ageingUPerDay',
  'instrumentId',
] as const;

async function checkInstrument(id: number | null | undefined): Promise<void> {
  if (id && !(await Instrument.findByPk(id))) {
    throw new ValidationError('instrumentId: no such instrument', [
      { path: 'instrumentId', message: 'no such instrument' },
    ]);
  }
}

/**
 * Registers a frequency reference with its calibration record; audited. Captures copy the record
 * when they start, so a later re-verification never rewrites earlier evidence.
 */
export async function createReference(input: ReferenceCreate, actorId: number) {
  await checkInstrument(input.instrumentId);
  const ref = await Reference.sequelize!.transaction(async (transaction) => {
    const created = await Reference.create(
      {
        name: input.name,
        kind: input.kind ?? null,
        nominalHz: input.nominalHz,
        fractionalOffset: input.fractionalOffset,
        standardUncertainty: input.standardUncertainty,
        verifiedBy: input.verifiedBy ?? null,
        verifiedAt: input.verifiedAt ?? null,
        ageingPerDay: input.ageingPerDay ?? null,
        ageingUPerDay: input.ageingUPerDay ?? null,
        instrumentId: input.instrumentId ?? null,
      },
      { transaction },
    );
    await audit(
      actorId,
      'reference.create',
      'reference',
      created.id,
      { after: publicReference(created) },
      transaction,
    );
    return created;
  });
  return publicReference(ref);
}

/** Changes a reference's record (a new verification, a corrected ageing rate); the audit event lists each change. */
export async function updateReference(id: number, patch: ReferencePatch, actorId: number) {
  const ref = await Reference.findByPk(id);
  if (!ref) throw new NotFoundError('Reference');
  await checkInstrument(patch.instrumentId);
  const changed: Record<string, { from: unknown; to: unknown }> = {};
  for (const key of REFERENCE_FIELDS) {
    if (patch[key] === undefined) continue;
    const before = ref.get(key) as unknown;
    if (before !== patch[key]) changed[key] = { from: before ?? null, to: patch[key] };
    ref.set(key, patch[key]);
  }
  await Reference.sequelize!.transaction(async (transaction) => {
    await ref.save({ transaction });
    if (Object.keys(changed).length > 0)
      await audit(actorId, 'reference.update', 'reference', id, changed, transaction);
  });
  return publicReference(ref);
}

const DUT_FIELDS = [
  'label',
  'position',
  'serial',
  'turnoverC',
  'turnoverU',
  'parabolicB',
  'parabolicBU',
] as const;

/**
 * Changes a DUT's limit (symmetric ±limit, or lower/upper bounds with one side open), its
 * tuning-fork parameters or its descriptive fields; refused (409) once the study is in review or
 * approved; audited with every change.
 */
export async function updateDut(id: number, patch: DutPatch, actorId: number) {
  const dut = await Dut.findByPk(id);
  if (!dut) throw new NotFoundError('DUT');
  await assertStudyWritable('dut', id, 'changing a DUT or its limit');
  const before = dut.toPublic();
  for (const key of DUT_FIELDS) if (patch[key] !== undefined) dut.set(key, patch[key]);
  // Archiving keeps the DUT and its captures but takes it out of the matrix and the bench.
  if (patch.archived !== undefined)
    dut.archivedAt = patch.archived ? (dut.archivedAt ?? new Date()) : null;
  applyQuantityLimits(dut, patch.limits);
  const limitGiven =
    patch.limit !== undefined || patch.limitLow !== undefined || patch.limitHigh !== undefined;
  if (limitGiven) {
    if (patch.limit != null) {
      dut.limitValue = patch.limit;
      dut.limitLow = null;
      dut.limitHigh = null;
    } else {
      dut.limitValue = null;
      if (patch.limitLow !== undefined) dut.limitLow = patch.limitLow;
      if (patch.limitHigh !== undefined) dut.limitHigh = patch.limitHigh;
    }
    const bounds = dut.limitLow !== null || dut.limitHigh !== null;
    if (dut.limitValue === null && !bounds) {
      throw new ValidationError('limit: is required (or give a lower and/or upper bound)', [
        { path: 'limit', message: 'is required (or give a lower and/or upper bound)' },
      ]);
    }
    if (dut.limitLow !== null && dut.limitHigh !== null && !(dut.limitLow < dut.limitHigh)) {
      throw new ValidationError('limitHigh: must be above the lower bound', [
        { path: 'limitHigh', message: 'must be above the lower bound' },
      ]);
    }
  }
  const after = dut.toPublic();
  const changed: Record<string, { from: unknown; to: unknown }> = {};
  for (const [k, v] of Object.entries(after)) {
    const was = (before as Record<string, unknown>)[k];
    if (JSON.stringify(was) !== JSON.stringify(v)) changed[k] = { from: was ?? null, to: v };
  }
  await Dut.sequelize!.transaction(async (transaction) => {
    // Checked again under the study's row lock, so a concurrent submit cannot slip in between.
    await assertStudyWritable('dut', id, 'changing a DUT or its limit', transaction);
    await dut.save({ transaction });
    if (Object.keys(changed).length > 0)
      await audit(actorId, 'dut.update', 'dut', id, changed, transaction);
  });
  return after;
}
