import { QueryTypes, type Transaction } from 'sequelize';
import { Study } from '../models/index.js';
import { AppError, NotFoundError } from '../errors.js';

/** What a write touches: the study itself or one of its parts. */
export type StudyPart = 'study' | 'checkpoint' | 'dut' | 'capture' | 'attachment';

/** Statuses in which a study's data may not change. */
export const LOCKED_STATUSES = ['in-review', 'approved'] as const;

const STUDY_OF: Record<StudyPart, string> = {
  study: 'SELECT s.id, s.title, s.status, s.revision FROM studies s WHERE s.id = $1',
  checkpoint:
    'SELECT s.id, s.title, s.status, s.revision FROM checkpoints c JOIN studies s ON s.id = c.study_id WHERE c.id = $1',
  dut: 'SELECT s.id, s.title, s.status, s.revision FROM duts d JOIN studies s ON s.id = d.study_id WHERE d.id = $1',
  capture:
    'SELECT s.id, s.title, s.status, s.revision FROM captures c JOIN duts d ON d.id = c.dut_id JOIN studies s ON s.id = d.study_id WHERE c.id = $1',
  attachment:
    'SELECT s.id, s.title, s.status, s.revision FROM attachments a JOIN studies s ON s.id = a.study_id WHERE a.id = $1',
};

const NOUN: Record<StudyPart, string> = {
  study: 'Study',
  checkpoint: 'Checkpoint',
  dut: 'DUT',
  capture: 'Capture',
  attachment: 'Attachment',
};

export interface StudyState {
  id: number;
  title: string;
  status: string;
  revision: number;
}

/** The 409 a locked study answers every write with, naming the study, its status and the way out. */
export function studyLockedError(study: StudyState, action: string): AppError {
  const name = `Study ${study.id} “${study.title}”`;
  const message =
    study.status === 'approved'
      ? `${name} is approved (revision ${study.revision}) and locked: ${action} is refused. A lead may reopen it as a new revision.`
      : `${name} is in review and locked: ${action} is refused until a lead returns or approves it.`;
  return new AppError(409, 'study-locked', message, {
    studyId: study.id,
    status: study.status,
    revision: study.revision,
  });
}

/**
 * The one lock check every write route that touches a study's data calls (captures opened, readings
 * added, captures finished or edited, checkpoints, DUTs, limits, attachments): finds the study that
 * `part` #`id` belongs to and throws 409 `study-locked` when it is in review or approved. Inside a
 * transaction the study row is share-locked, so a concurrent submit or approve waits for the write.
 * Returns the study's state; throws 404 when the part does not exist.
 */
export async function assertStudyWritable(
  part: StudyPart,
  id: number,
  action: string,
  transaction?: Transaction,
): Promise<StudyState> {
  const sequelize = Study.sequelize!;
  const sql = STUDY_OF[part] + (transaction ? ' FOR SHARE OF s' : '');
  const rows = (await sequelize.query(sql, {
    bind: [id],
    transaction,
    type: QueryTypes.SELECT,
  })) as StudyState[];
  if (rows.length === 0) throw new NotFoundError(NOUN[part]);
  const study = rows[0];
  if ((LOCKED_STATUSES as readonly string[]).includes(study.status))
    throw studyLockedError(study, action);
  return study;
}

/** The same check on the raw pg pool, for the ingest hot path (one indexed join per batch). */
export async function assertCaptureWritable(
  pool: { query(text: string, values?: unknown[]): Promise<{ rows: unknown[] }> },
  captureId: number,
  action: string,
): Promise<void> {
  const { rows } = await pool.query(STUDY_OF.capture, [captureId]);
  if (rows.length === 0) throw new NotFoundError('Capture');
  const study = rows[0] as StudyState;
  if ((LOCKED_STATUSES as readonly string[]).includes(study.status))
    throw studyLockedError(study, action);
}
