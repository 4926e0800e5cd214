import type { AuthUser } from './auth.js';
import { Op, type Includeable } from 'sequelize';
import { Capture, Checkpoint, Dut, Instrument, Reference, Study, User } from '../models/index.js';
import { AppError, ForbiddenError, NotFoundError, ValidationError } from '../errors.js';
import type { CaptureCreate, CapturePatch } from '../../shared/protocol/captures.js';
import { canWriteCapture } from './ingest.js';
import { roleCan } from '../../shared/protocol/roles.js';
import { pageOf } from './paging.js';
import { assertStudyWritable } from './studyLock.js';
import { startOnFirstCapture } from './workflow.js';
import { audit, changes } from './audit.js';
import { ensureReadingsPartitions } from './partitions.js';
import type { CaptureSummary as CaptureSummaryWire } from '../../shared/protocol/models.js';

/** The capture as the API shows it. */
export function capturePublic(c: Capture) {
  return {
    id: c.id,
    dutId: c.dutId,
    checkpointId: c.checkpointId,
    instrumentId: c.instrumentId,
    referenceId: c.referenceId,
    operatorId: c.operatorId,
    quantity: c.quantity,
    unit: c.unit,
    nominal: c.nominal,
    gateTime: c.gateTime,
    deadTime: c.deadTime,
    ambientC: c.ambientC,
    orientation: c.orientation,
    notes: c.notes,
    tags: c.tags,
    referenceOffset: c.referenceOffset,
    referenceUncertainty: c.referenceUncertainty,
    referenceVerifiedAt: c.referenceVerifiedAt ?? null,
    referenceAgeingPerDay: c.referenceAgeingPerDay ?? null,
    referenceAgeingUPerDay: c.referenceAgeingUPerDay ?? null,
    counterType: c.counterType ?? null,
    counterResolution: c.counterResolution ?? null,
    linkProfile: c.linkProfile ?? null,
    state: c.state,
    startedAt: c.startedAt,
    endedAt: c.endedAt,
    readingCount: c.readingCount,
    highestSeq: c.highestSeq,
    // The stored reduction (finish.ts writes it; the response check validates it under test).
    summary: (c.summary ?? null) as CaptureSummaryWire | null,
    plannedMinutes: c.plannedMinutes ?? null,
    simulated: c.simulated ?? false,
    target: c.target ?? null,
    sealSha256: c.sealSha256 ?? null,
    sealedAt: c.sealedAt ?? null,
    /** Set when a sealed reading was updated or deleted (a trigger); the seal route recomputes. */
    sealBroken: c.sealBrokenAt != null,
    /** When readings last arrived, when the sweep marked it stalled, and why it was aborted (issue 13). */
    lastReadingAt: c.lastReadingAt ?? null,
    stalledAt: c.stalledAt ?? null,
    abortReason: c.abortReason ?? null,
    abortedBy: c.abortedBy ?? null,
    /** Left out of the evidence by a lead, with the reason (issue 13; null while it counts). */
    excluded: c.excludedAt
      ? { at: c.excludedAt, by: c.excludedBy ?? null, reason: c.exclusionReason ?? '' }
      : null,
  };
}

/**
 * Opens a capture bound to a DUT and a checkpoint of the same study, with the reference's offset
 * and uncertainty copied as they are now (a later re-verification does not rewrite history).
 */
export async function createCapture(input: CaptureCreate, operator: AuthUser) {
  const [dut, checkpoint] = await Promise.all([
    Dut.findByPk(input.dutId),
    Checkpoint.findByPk(input.checkpointId),
  ]);
  if (!dut)
    throw new ValidationError('dutId: no such DUT', [{ path: 'dutId', message: 'no such DUT' }]);
  if (!checkpoint)
    throw new ValidationError('checkpointId: no such checkpoint', [
      { path: 'checkpointId', message: 'no such checkpoint' },
    ]);
  if (dut.studyId !== checkpoint.studyId) {
    throw new ValidationError(
      'checkpointId: the checkpoint belongs to another study than the DUT',
      [{ path: 'checkpointId', message: 'belongs to another study than the DUT' }],
    );
  }
  if (dut.archivedAt || checkpoint.archivedAt) {
    const what = dut.archivedAt ? `DUT “${dut.label}”` : `checkpoint “${checkpoint.name}”`;
    throw new AppError(
      409,
      'archived',
      `The ${what} is archived: restore it on the study page before capturing it.`,
    );
  }
  if (input.unit !== dut.unit) {
    throw new ValidationError(`unit: the DUT is measured in ${dut.unit}`, [
      { path: 'unit', message: `must be the DUT's unit, ${dut.unit}` },
    ]);
  }
  // A quick refusal before the other checks; repeated under the study's row lock below.
  await assertStudyWritable('study', dut.studyId, 'opening a capture');
  const simulated = isSimulatedCapture(input);
  if (simulated) await assertStudyAcceptsSimulated(dut.studyId);
  const instrument = input.instrumentId ? await Instrument.findByPk(input.instrumentId) : null;
  if (input.instrumentId && !instrument) {
    throw new ValidationError('instrumentId: no such instrument', [
      { path: 'instrumentId', message: 'no such instrument' },
    ]);
  }
  let reference: Reference | null = null;
  if (input.referenceId) {
    reference = await Reference.findByPk(input.referenceId);
    if (!reference)
      throw new ValidationError('referenceId: no such reference', [
        { path: 'referenceId', message: 'no such reference' },
      ]);
  }
  // Retired equipment stays on record for old captures but records no new one.
  for (const [what, e] of [
    ['Instrument', instrument],
    ['Reference', reference],
  ] as const) {
    if (e?.retiredAt)
      throw new AppError(
        409,
        'equipment-retired',
        `${what} “${e.name}” is retired: choose one in service.`,
      );
  }
  const capture = await Capture.sequelize!.transaction(async (transaction) => {
    // The study row is locked for update first (a draft becomes running), then checked.
    await startOnFirstCapture(dut.studyId, operator.id, transaction);
    await assertStudyWritable('study', dut.studyId, 'opening a capture', transaction);
    const created = await Capture.create(
      {
        dutId: dut.id,
        checkpointId: checkpoint.id,
        instrumentId: input.instrumentId ?? null,
        referenceId: reference?.id ?? null,
        operatorId: operator.id,
        quantity: input.quantity,
        unit: input.unit,
        nominal: input.nominal ?? (input.quantity === 'frequency' ? dut.nominal : null),
        gateTime: input.gateTime,
        deadTime: input.deadTime ?? null,
        ambientC: input.ambientC ?? null,
        orientation: input.orientation ?? null,
        notes: input.notes ?? null,
        tags: input.tags ?? [],
        referenceOffset: reference?.fractionalOffset ?? null,
        referenceUncertainty: reference?.standardUncertainty ?? null,
        referenceVerifiedAt: reference?.verifiedAt ?? null,
        referenceAgeingPerDay: reference?.ageingPerDay ?? null,
        referenceAgeingUPerDay: reference?.ageingUPerDay ?? null,
        // The counter's type and resolution as they are now: they enter this capture's budget.
        counterType: instrument?.counterType ?? null,
        counterResolution: instrument?.counterResolution ?? null,
        linkProfile: input.linkProfile ?? null,
        plannedMinutes: input.plannedMinutes ?? null,
        simulated,
        target: input.target ?? null,
      },
      { transaction },
    );
    await audit(
      operator.id,
      'capture.open',
      'capture',
      created.id,
      { studyId: dut.studyId, dutId: dut.id, checkpointId: checkpoint.id },
      transaction,
    );
    return created;
  });
  // Its readings' partition (normally made ahead) and the next block's, before any reading arrives.
  await ensureReadingsPartitions(Capture.sequelize!, capture.id);
  return capturePublic(capture);
}

/** A capture is simulated when its link was a simulator or its client says so; a client cannot unsay a simulator link. */
export function isSimulatedCapture(
  input: Pick<CaptureCreate, 'linkProfile' | 'simulated'>,
): boolean {
  return input.simulated === true || input.linkProfile?.kind === 'simulator';
}

/** 409 `simulated-not-allowed` unless the study accepts simulated captures (its planner's setting). */
async function assertStudyAcceptsSimulated(studyId: number): Promise<void> {
  const study = await Study.findByPk(studyId, { attributes: ['id', 'title', 'allowSimulated'] });
  if (study && !study.allowSimulated) {
    throw new AppError(
      409,
      'simulated-not-allowed',
      `“${study.title}” does not accept simulated captures. Capture with a real instrument, or ask a lead or engineer to allow simulated captures in the study's settings.`,
      { studyId: study.id },
    );
  }
}

export async function requireCapture(id: number): Promise<Capture> {
  const c = await Capture.findByPk(id);
  if (!c) throw new NotFoundError('Capture');
  return c;
}

/** Captures, newest first, optionally of one study, DUT, checkpoint or state. */
export async function listCaptures(filter: {
  studyId?: number;
  dutId?: number;
  checkpointId?: number;
  state?: string;
  limit: number;
  cursor?: string;
}) {
  const where: Record<string, unknown> = {};
  if (filter.dutId) where.dutId = filter.dutId;
  if (filter.checkpointId) where.checkpointId = filter.checkpointId;
  if (filter.state) where.state = filter.state;
  if (filter.studyId) {
    const duts = await Dut.findAll({ where: { studyId: filter.studyId }, attributes: ['id'] });
    where.dutId = { [Op.in]: duts.map((d) => d.id) };
  }
  // The names a list shows come in the same query (joins), never one request per row.
  const names: Includeable[] = [
    {
      model: Dut,
      as: 'dut',
      attributes: ['id', 'label', 'studyId'],
      include: [{ model: Study, as: 'study', attributes: ['id', 'title'] }],
    },
    { model: Checkpoint, as: 'checkpoint', attributes: ['id', 'name'] },
    { model: User, as: 'operator', attributes: ['id', 'name'] },
  ];
  const { rows, nextCursor } = await pageOf(
    Capture,
    { limit: filter.limit, cursor: filter.cursor },
    'id-desc',
    where,
    'name',
    names,
  );
  const captures = rows.map((c) => {
    const p = capturePublic(c);
    const study = c.dut?.study;
    // Lists stay light: no stored summary and no link profile (GET /api/captures/:id has both).
    return {
      ...p,
      summary: undefined,
      linkProfile: undefined,
      study: study ? { id: study.id, title: study.title } : null,
      dut: c.dut ? { id: c.dut.id, label: c.dut.label } : null,
      checkpoint: c.checkpoint ? { id: c.checkpoint.id, name: c.checkpoint.name } : null,
      operator: c.operator ? { id: c.operator.id, name: c.operator.name } : null,
    };
  });
  return { captures, nextCursor };
}

/** A capture with the names a page needs to show its identity (study › checkpoint › DUT). */
export async function getCapture(id: number) {
  // One query: the capture joined with its DUT (and study), checkpoint, operator, instrument, reference.
  const c = await Capture.findByPk(id, {
    include: [
      {
        model: Dut,
        as: 'dut',
        include: [{ model: Study, as: 'study', attributes: ['id', 'title', 'status'] }],
      },
      { model: Checkpoint, as: 'checkpoint' },
      { model: User, as: 'operator', attributes: ['id', 'name'] },
      { model: Instrument, as: 'instrument', attributes: ['id', 'name'] },
      { model: Reference, as: 'reference', attributes: ['id', 'name'] },
    ],
  });
  if (!c) throw new NotFoundError('Capture');
  const { dut, checkpoint, operator, instrument, reference } = c;
  const study = dut?.study;
  return {
    ...capturePublic(c),
    study: study ? { id: study.id, title: study.title, status: study.status } : null,
    dut: dut?.toPublic() ?? null,
    checkpoint: checkpoint?.toPublic() ?? null,
    operator: operator ? { id: operator.id, name: operator.name } : null,
    instrument: instrument ? { id: instrument.id, name: instrument.name } : null,
    reference: reference ? { id: reference.id, name: reference.name } : null,
  };
}

/** Notes, tags and ambient temperature may change after the fact; readings never do. */
export async function patchCapture(id: number, patch: CapturePatch, user: AuthUser) {
  const c = await requireCapture(id);
  if (!roleCan(user.role, 'captures:tag') && !canWriteCapture(user, c.operatorId))
    throw new ForbiddenError();
  // The ambient temperature enters the stored reduction (budget, tuning-fork normalisation):
  // once a capture is finished it is part of the evidence and stays as recorded.
  if (patch.ambientC !== undefined && c.state !== 'open' && patch.ambientC !== c.ambientC) {
    throw new AppError(
      409,
      'capture-finished',
      'The ambient temperature of a finished capture is part of its evidence and cannot change.',
    );
  }
  const before = { notes: c.notes, tags: c.tags, ambientC: c.ambientC };
  await Capture.sequelize!.transaction(async (transaction) => {
    await assertStudyWritable('capture', id, 'editing a capture', transaction);
    if (patch.notes !== undefined) c.notes = patch.notes;
    if (patch.tags !== undefined) c.tags = patch.tags;
    if (patch.ambientC !== undefined) c.ambientC = patch.ambientC;
    await c.save({ transaction });
    const changed = changes(before, {
      notes: patch.notes,
      tags: patch.tags,
      ambientC: patch.ambientC,
    });
    if (Object.keys(changed).length)
      await audit(user.id, 'capture.edit', 'capture', id, changed, transaction);
  });
  return capturePublic(c);
}
