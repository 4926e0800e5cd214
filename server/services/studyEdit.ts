import { QueryTypes, type Transaction } from 'sequelize';
import { Attachment, Capture, Checkpoint, Dut, Study } from '../models/index.js';
import { AppError, NotFoundError, ValidationError } from '../errors.js';
import { audit, changes } from './audit.js';
import { assertStudyWritable } from './studyLock.js';
import { cellKey, chosenCells, isValidEvidence, representatives } from './cells.js';
import type {
  CellCaptures,
  CellChoice,
  CellChoiceResult,
  CheckpointPatch,
  StudyPatch,
} from '../../shared/protocol/studyEdit.js';

/**
 * Editing a study's plan with history (issue 13). Every function here locks the study row
 * (assertStudyWritable inside the change's transaction), refuses a locked study with 409
 * `study-locked`, and writes one audit event saying what changed, in the same transaction.
 * Deleting is for mistakes: once a study, checkpoint or DUT holds captures it is refused with
 * 409 `has-captures` and the caller archives instead, which keeps every capture and its record.
 */

const tx = <T>(work: (t: Transaction) => Promise<T>): Promise<T> =>
  Study.sequelize!.transaction(work);

function hasCaptures(what: string, count: number): AppError {
  return new AppError(
    409,
    'has-captures',
    `${what} holds ${count} capture${count === 1 ? '' : 's'} and cannot be deleted: archive it instead (its captures and their record are kept).`,
    { captures: count },
  );
}

/** The public shape `GET /api/studies/:id` uses for the study's own fields. */
function studyFields(s: Study) {
  return {
    id: s.id,
    title: s.title,
    process: s.process,
    description: s.description,
    status: s.status,
    archived: s.archivedAt != null,
  };
}

/** Changes a study's title, process or description, or archives/restores it; audited with before → after. */
export async function updateStudy(id: number, patch: StudyPatch, actorId: number) {
  return tx(async (transaction) => {
    await assertStudyWritable('study', id, 'editing the study', transaction);
    const study = (await Study.findByPk(id, { transaction }))!;
    const before = studyFields(study);
    if (patch.title !== undefined) study.title = patch.title;
    if (patch.process !== undefined) study.process = patch.process;
    if (patch.description !== undefined) study.description = patch.description;
    if (patch.archived !== undefined)
      study.archivedAt = patch.archived ? (study.archivedAt ?? new Date()) : null;
    const after = studyFields(study);
    const diff = changes(before, after);
    if (Object.keys(diff).length > 0) {
      await study.save({ transaction });
      const action = diff.archived
        ? after.archived
          ? 'study.archive'
          : 'study.restore'
        : 'study.update';
      await audit(actorId, action, 'study', id, diff, transaction);
    }
    return after;
  });
}

/**
 * Deletes a study made by mistake: refused (409 `has-captures`) once any DUT of it was captured,
 * and (409 `has-record`) once it has review history or files — archive it instead.
 */
export async function deleteStudy(id: number, actorId: number): Promise<void> {
  await tx(async (transaction) => {
    await assertStudyWritable('study', id, 'deleting the study', transaction);
    const study = (await Study.findByPk(id, { transaction }))!;
    const dutIds = (
      await Dut.findAll({ where: { studyId: id }, attributes: ['id'], transaction })
    ).map((d) => d.id);
    const captures = dutIds.length
      ? await Capture.count({ where: { dutId: dutIds }, transaction })
      : 0;
    if (captures > 0) throw hasCaptures(`Study ${id} “${study.title}”`, captures);
    const [[{ reviews }], files] = await Promise.all([
      Study.sequelize!.query(
        'SELECT count(*)::int AS reviews FROM study_reviews WHERE study_id = $1',
        {
          bind: [id],
          type: QueryTypes.SELECT,
          transaction,
        },
      ) as Promise<Array<{ reviews: number }>>,
      Attachment.count({ where: { studyId: id }, transaction }),
    ]);
    if (reviews > 0 || files > 0) {
      throw new AppError(
        409,
        'has-record',
        `Study ${id} “${study.title}” has ${reviews > 0 ? 'a review history' : `${files} attached file${files === 1 ? '' : 's'}`} and cannot be deleted: archive it instead.`,
      );
    }
    const [checkpoints, duts] = await Promise.all([
      Checkpoint.findAll({ where: { studyId: id }, transaction }),
      Dut.findAll({ where: { studyId: id }, transaction }),
    ]);
    await study.destroy({ transaction });
    await audit(
      actorId,
      'study.delete',
      'study',
      id,
      {
        studyId: id,
        before: {
          ...studyFields(study),
          checkpoints: checkpoints.map((c) => c.toPublic()),
          duts: duts.map((d) => d.toPublic()),
        },
      },
      transaction,
    );
  });
}

/** Renames a checkpoint, changes its exposure (per process kind) or archives/restores it; audited. */
export async function updateCheckpoint(id: number, patch: CheckpointPatch, actorId: number) {
  return tx(async (transaction) => {
    await assertStudyWritable('checkpoint', id, 'editing a checkpoint', transaction);
    const cp = (await Checkpoint.findByPk(id, { transaction }))!;
    const before = cp.toPublic();
    if (patch.name !== undefined) cp.name = patch.name;
    if (patch.exposure !== undefined) cp.exposure = patch.exposure;
    if (patch.archived !== undefined)
      cp.archivedAt = patch.archived ? (cp.archivedAt ?? new Date()) : null;
    const after = cp.toPublic();
    const diff = changes(before, after);
    if (Object.keys(diff).length > 0) {
      await cp.save({ transaction });
      const action = diff.archived
        ? after.archived
          ? 'checkpoint.archive'
          : 'checkpoint.restore'
        : 'checkpoint.update';
      await audit(actorId, action, 'checkpoint', id, { studyId: cp.studyId, ...diff }, transaction);
    }
    return after;
  });
}

/** Deletes a checkpoint planned by mistake: refused once captured (409 `has-captures`) or holding files. */
export async function deleteCheckpoint(id: number, actorId: number): Promise<void> {
  await tx(async (transaction) => {
    await assertStudyWritable('checkpoint', id, 'deleting a checkpoint', transaction);
    const cp = (await Checkpoint.findByPk(id, { transaction }))!;
    const captures = await Capture.count({ where: { checkpointId: id }, transaction });
    if (captures > 0) throw hasCaptures(`Checkpoint “${cp.name}”`, captures);
    const files = await Attachment.count({
      where: { ownerType: 'checkpoint', ownerId: id },
      transaction,
    });
    if (files > 0) {
      throw new AppError(
        409,
        'has-record',
        `Checkpoint “${cp.name}” has ${files} attached file${files === 1 ? '' : 's'}: delete them first or archive the checkpoint.`,
      );
    }
    await cp.destroy({ transaction });
    await audit(
      actorId,
      'checkpoint.delete',
      'checkpoint',
      id,
      { studyId: cp.studyId, before: cp.toPublic() },
      transaction,
    );
  });
}

/**
 * Puts a study's checkpoints in a new order: `ids` must name every checkpoint of the study
 * (archived ones too) exactly once. The first one is the baseline every comparison uses.
 */
export async function reorderCheckpoints(studyId: number, ids: number[], actorId: number) {
  return tx(async (transaction) => {
    await assertStudyWritable('study', studyId, 'reordering checkpoints', transaction);
    const all = await Checkpoint.findAll({
      where: { studyId },
      order: [
        ['position', 'ASC'],
        ['id', 'ASC'],
      ],
      transaction,
    });
    const known = new Set(all.map((c) => c.id));
    const stranger = ids.find((i) => !known.has(i));
    if (stranger !== undefined)
      throw new ValidationError(`ids: checkpoint ${stranger} is not in this study`, [
        { path: 'ids', message: `checkpoint ${stranger} is not in this study` },
      ]);
    if (ids.length !== all.length) {
      throw new ValidationError('ids: list every checkpoint of the study once', [
        { path: 'ids', message: `list all ${all.length} checkpoints of the study once` },
      ]);
    }
    const from = all.map((c) => c.id);
    if (from.every((id, i) => id === ids[i])) return all.map((c) => c.toPublic());
    const byId = new Map(all.map((c) => [c.id, c]));
    for (const [i, id] of ids.entries()) {
      const cp = byId.get(id)!;
      if (cp.position !== i) await cp.update({ position: i }, { transaction });
    }
    await audit(
      actorId,
      'checkpoint.reorder',
      'study',
      studyId,
      { studyId, order: { from, to: ids } },
      transaction,
    );
    return ids.map((id) => byId.get(id)!.toPublic());
  });
}

/** Deletes a DUT added by mistake: refused once it was captured (409 `has-captures`: archive it). */
export async function deleteDut(id: number, actorId: number): Promise<void> {
  await tx(async (transaction) => {
    await assertStudyWritable('dut', id, 'deleting a DUT', transaction);
    const dut = (await Dut.findByPk(id, { transaction }))!;
    const captures = await Capture.count({ where: { dutId: id }, transaction });
    if (captures > 0) throw hasCaptures(`DUT “${dut.label}”`, captures);
    await dut.destroy({ transaction });
    await audit(
      actorId,
      'dut.delete',
      'dut',
      id,
      { studyId: dut.studyId, before: dut.toPublic() },
      transaction,
    );
  });
}

/** A capture's exclusion as the API shows it. */
export function exclusionOf(c: Pick<Capture, 'excludedAt' | 'excludedBy' | 'exclusionReason'>) {
  return c.excludedAt
    ? {
        at: new Date(c.excludedAt).toISOString(),
        by: c.excludedBy,
        reason: c.exclusionReason ?? '',
      }
    : null;
}

async function studyOfDut(dutId: number, transaction: Transaction): Promise<number> {
  return (await Dut.findByPk(dutId, { attributes: ['studyId'], transaction }))!.studyId;
}

/**
 * Leaves a capture out of the evidence (matrix, comparisons' defaults, report) with a reason. Its
 * readings and seal stay; a cell that had chosen it falls back to its default. An open capture is
 * refused (finish or abort it first), as is one already excluded.
 */
export async function excludeCapture(id: number, reason: string, actorId: number) {
  return tx(async (transaction) => {
    await assertStudyWritable('capture', id, 'excluding a capture', transaction);
    const c = (await Capture.findByPk(id, { transaction, lock: transaction.LOCK.UPDATE }))!;
    if (c.state === 'open')
      throw new AppError(
        409,
        'capture-open',
        `Capture ${id} is still open: finish or abort it before excluding it.`,
      );
    if (c.excludedAt)
      throw new AppError(
        409,
        'already-excluded',
        `Capture ${id} is already excluded (${c.exclusionReason}).`,
      );
    const studyId = await studyOfDut(c.dutId, transaction);
    await c.update(
      { excludedAt: new Date(), excludedBy: actorId, exclusionReason: reason },
      { transaction },
    );
    const [, cleared] = (await Study.sequelize!.query(
      'DELETE FROM study_cells WHERE capture_id = $1',
      { bind: [id], transaction },
    )) as [unknown, { rowCount?: number } | number];
    const wasChosen = (typeof cleared === 'number' ? cleared : (cleared?.rowCount ?? 0)) > 0;
    await audit(
      actorId,
      'capture.exclude',
      'capture',
      id,
      {
        studyId,
        reason,
        excluded: { from: false, to: true },
        ...(wasChosen ? { cellChoiceCleared: true } : {}),
      },
      transaction,
    );
    return { id, excluded: exclusionOf(c) };
  });
}

/** Takes an excluded capture back into the evidence; audited with the reason it had. */
export async function includeCapture(id: number, actorId: number) {
  return tx(async (transaction) => {
    await assertStudyWritable('capture', id, 'including a capture', transaction);
    const c = (await Capture.findByPk(id, { transaction, lock: transaction.LOCK.UPDATE }))!;
    if (!c.excludedAt) throw new AppError(409, 'not-excluded', `Capture ${id} is not excluded.`);
    const studyId = await studyOfDut(c.dutId, transaction);
    const reason = c.exclusionReason;
    await c.update({ excludedAt: null, excludedBy: null, exclusionReason: null }, { transaction });
    await audit(
      actorId,
      'capture.include',
      'capture',
      id,
      { studyId, excludedBecause: reason, excluded: { from: true, to: false } },
      transaction,
    );
    return { id, excluded: null };
  });
}

async function checkCell(
  studyId: number,
  dutId: number,
  checkpointId: number,
  transaction?: Transaction,
) {
  const [dut, cp] = await Promise.all([
    Dut.findByPk(dutId, { transaction }),
    Checkpoint.findByPk(checkpointId, { transaction }),
  ]);
  if (!dut || dut.studyId !== studyId)
    throw new ValidationError('dutId: is not a DUT of this study', [
      { path: 'dutId', message: 'is not a DUT of this study' },
    ]);
  if (!cp || cp.studyId !== studyId)
    throw new ValidationError('checkpointId: is not a checkpoint of this study', [
      { path: 'checkpointId', message: 'is not a checkpoint of this study' },
    ]);
}

/**
 * Chooses the capture that represents one DUT × checkpoint in the matrix (and so in every
 * comparison the matrix and report make), or (captureId null) returns the cell to its default,
 * the latest valid capture. The capture must be of that DUT and checkpoint, finished and not
 * excluded. Audited on the study with the cell and before → after.
 */
export async function chooseCell(
  studyId: number,
  choice: CellChoice,
  actorId: number,
): Promise<CellChoiceResult> {
  return tx(async (transaction) => {
    await assertStudyWritable(
      'study',
      studyId,
      'choosing the capture of a matrix cell',
      transaction,
    );
    const { dutId, checkpointId, captureId } = choice;
    await checkCell(studyId, dutId, checkpointId, transaction);
    if (captureId !== null) {
      const c = await Capture.findByPk(captureId, { transaction });
      if (!c) throw new NotFoundError('Capture');
      if (c.dutId !== dutId || c.checkpointId !== checkpointId) {
        throw new ValidationError('captureId: is not a capture of this DUT at this checkpoint', [
          { path: 'captureId', message: 'is not a capture of this DUT at this checkpoint' },
        ]);
      }
      if (c.excludedAt)
        throw new AppError(
          409,
          'capture-excluded',
          `Capture ${captureId} is excluded from the evidence (${c.exclusionReason}): include it first.`,
        );
      if (!isValidEvidence(c))
        throw new AppError(
          409,
          'capture-not-finished',
          `Capture ${captureId} is ${c.state}: only a finished capture can represent a cell.`,
        );
    }
    const before =
      (await chosenCells([dutId], transaction)).get(cellKey(dutId, checkpointId)) ?? null;
    if (before === captureId) return { dutId, checkpointId, captureId };
    if (captureId === null) {
      await Study.sequelize!.query(
        'DELETE FROM study_cells WHERE dut_id = $1 AND checkpoint_id = $2',
        { bind: [dutId, checkpointId], transaction },
      );
    } else {
      await Study.sequelize!.query(
        `INSERT INTO study_cells (dut_id, checkpoint_id, capture_id, chosen_by) VALUES ($1, $2, $3, $4)
         ON CONFLICT (dut_id, checkpoint_id) DO UPDATE SET capture_id = EXCLUDED.capture_id, chosen_by = EXCLUDED.chosen_by, chosen_at = now()`,
        { bind: [dutId, checkpointId, captureId, actorId], transaction },
      );
    }
    await audit(
      actorId,
      'cell.choose',
      'study',
      studyId,
      { studyId, dutId, checkpointId, captureId: { from: before, to: captureId } },
      transaction,
    );
    return { dutId, checkpointId, captureId };
  });
}

/** Every capture of one cell, newest first, with which one represents it and which are excluded. */
export async function cellCaptures(
  studyId: number,
  dutId: number,
  checkpointId: number,
): Promise<CellCaptures> {
  if (!(await Study.findByPk(studyId))) throw new NotFoundError('Study');
  await checkCell(studyId, dutId, checkpointId);
  const [captures, chosen] = await Promise.all([
    Capture.findAll({
      where: { dutId, checkpointId },
      order: [
        ['startedAt', 'DESC'],
        ['id', 'DESC'],
      ],
    }),
    chosenCells([dutId]),
  ]);
  const rep = representatives(captures, chosen).get(cellKey(dutId, checkpointId));
  return {
    dutId,
    checkpointId,
    captures: captures.map((c) => ({
      id: c.id,
      state: c.state,
      startedAt: new Date(c.startedAt).toISOString(),
      endedAt: c.endedAt ? new Date(c.endedAt).toISOString() : null,
      readingCount: c.readingCount,
      orientation: c.orientation,
      simulated: c.simulated ?? false,
      excluded: exclusionOf(c),
      represents: rep?.capture.id === c.id,
      chosen: rep?.capture.id === c.id && rep.chosen,
    })),
  };
}
