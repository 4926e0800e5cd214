import { fn, col, type Transaction } from 'sequelize';
import { Study, Checkpoint, Dut } from '../models/index.js';
import { NotFoundError } from '../errors.js';
import { audit, changes } from './audit.js';
import { assertStudyWritable } from './studyLock.js';
import { pageOf } from './paging.js';
import type { Page } from '../../shared/protocol/paging.js';
import type {
  CheckpointCreate,
  DutCreate,
  StudyCreate,
  StudySettings,
} from '../../shared/protocol/api.js';

function studyPublic(s: Study) {
  return {
    id: s.id,
    title: s.title,
    process: s.process,
    description: s.description,
    status: s.status,
    createdBy: s.createdBy,
    revision: s.revision,
    allowSimulated: s.allowSimulated,
    archived: s.archivedAt != null,
    submittedBy: s.submittedBy,
    submittedAt: s.submittedAt,
    approvedBy: s.approvedBy,
    approvedAt: s.approvedAt,
    createdAt: s.createdAt,
    updatedAt: s.updatedAt,
  };
}

/** One page of studies, newest first, with their checkpoint and DUT counts. */
export async function listStudies(page: Page) {
  const { rows: studies, nextCursor } = await pageOf(Study, page, 'id-desc');
  const count = async (model: typeof Checkpoint | typeof Dut) => {
    const rows = (await (model as typeof Checkpoint).findAll({
      attributes: ['studyId', [fn('COUNT', col('id')), 'n']],
      group: ['studyId'],
      raw: true,
    })) as unknown as Array<{ studyId: number; n: string | number }>;
    return new Map(rows.map((r) => [r.studyId, Number(r.n)]));
  };
  const [checkpoints, duts] = await Promise.all([count(Checkpoint), count(Dut)]);
  const items = studies.map((s) => ({
    ...studyPublic(s),
    checkpointCount: checkpoints.get(s.id) ?? 0,
    dutCount: duts.get(s.id) ?? 0,
  }));
  return { studies: items, nextCursor };
}

export async function getStudy(id: number) {
  const study = await Study.findByPk(id);
  if (!study) throw new NotFoundError('Study');
  const [checkpoints, duts] = await Promise.all([
    Checkpoint.findAll({
      where: { studyId: id },
      order: [
        ['position', 'ASC'],
        ['id', 'ASC'],
      ],
    }),
    Dut.findAll({ where: { studyId: id }, order: [['id', 'ASC']] }),
  ]);
  return {
    ...studyPublic(study),
    checkpoints: checkpoints.map((c) => c.toPublic()),
    duts: duts.map((d) => d.toPublic()),
  };
}

export async function createStudy(input: StudyCreate, actorId: number) {
  const study = await Study.sequelize!.transaction(async (transaction) => {
    const created = await Study.create({ ...input, createdBy: actorId }, { transaction });
    await audit(
      actorId,
      'study.create',
      'study',
      created.id,
      { title: input.title, process: input.process ?? null, status: created.status },
      transaction,
    );
    return created;
  });
  return { ...studyPublic(study), checkpoints: [], duts: [] };
}

export async function requireStudy(id: number): Promise<Study> {
  const study = await Study.findByPk(id);
  if (!study) throw new NotFoundError('Study');
  return study;
}

/** Adds a checkpoint to the plan; refused (409) while the study is locked; audited with what was added. */
export async function addCheckpoint(
  studyId: number,
  input: CheckpointCreate,
  actorId: number | null = null,
) {
  const cp = await Study.sequelize!.transaction(async (transaction) => {
    await assertStudyWritable('study', studyId, 'adding a checkpoint', transaction);
    let position = input.order;
    if (position === undefined) {
      const last = (await Checkpoint.max('position', { where: { studyId }, transaction })) as
        number | null;
      position = last === null ? 0 : last + 1;
    }
    const created = await Checkpoint.create(
      { studyId, name: input.name, position, exposure: input.exposure ?? null },
      { transaction },
    );
    await audit(
      actorId,
      'checkpoint.create',
      'checkpoint',
      created.id,
      { studyId, after: created.toPublic() },
      transaction,
    );
    return created;
  });
  return cp.toPublic();
}

/** Adds a DUT (with its limit) to the plan; refused (409) while the study is locked; audited. */
export async function addDut(studyId: number, input: DutCreate, actorId: number | null = null) {
  const transaction = await Study.sequelize!.transaction();
  try {
    await assertStudyWritable('study', studyId, 'adding a DUT', transaction);
    const dut = await createDutRow(studyId, input, transaction);
    await audit(
      actorId,
      'dut.create',
      'dut',
      dut.id,
      { studyId, after: dut.toPublic() },
      transaction,
    );
    await transaction.commit();
    return dut.toPublic();
  } catch (err) {
    await transaction.rollback();
    throw err;
  }
}

async function createDutRow(studyId: number, input: DutCreate, transaction: Transaction) {
  return Dut.create(
    {
      studyId,
      label: input.label,
      kind: input.kind,
      nominal: input.nominal,
      unit: input.unit,
      limitValue: input.limit ?? null,
      limitLow: input.limit != null ? null : (input.limitLow ?? null),
      limitHigh: input.limit != null ? null : (input.limitHigh ?? null),
      limitUnit: input.limitUnit,
      position: input.position ?? null,
      serial: input.serial ?? null,
      turnoverC: input.turnoverC ?? null,
      turnoverU: input.turnoverU ?? null,
      parabolicB: input.parabolicB ?? null,
      parabolicBU: input.parabolicBU ?? null,
    },
    { transaction },
  );
}

/** Changes a study's planner settings; refused (409) while the study is locked; audited with what changed. */
export async function updateStudySettings(studyId: number, input: StudySettings, actorId: number) {
  await requireStudy(studyId);
  const study = await Study.sequelize!.transaction(async (transaction) => {
    await assertStudyWritable('study', studyId, 'changing its settings', transaction);
    const row = (await Study.findByPk(studyId, { transaction }))!;
    const diff = changes(
      { allowSimulated: row.allowSimulated },
      { allowSimulated: input.allowSimulated },
    );
    if (Object.keys(diff).length === 0) return row;
    await row.update(
      { ...(input.allowSimulated !== undefined ? { allowSimulated: input.allowSimulated } : {}) },
      { transaction },
    );
    await audit(actorId, 'study.settings', 'study', studyId, diff, transaction);
    return row;
  });
  return studyPublic(study);
}
