import bcrypt from 'bcryptjs';
import { Op, QueryTypes, type Transaction } from 'sequelize';
import type pg from 'pg';
import { Capture, Dut, Study, StudyReview, User } from '../models/index.js';
import { AppError, ForbiddenError, NotFoundError } from '../errors.js';
import type { AuthUser } from './auth.js';
import { audit } from './audit.js';
import { enqueueMail } from './mail.js';
import { buildStudyReport } from './report.js';
import type { ReviewAction } from '../models/StudyReview.js';
import { getStudy } from './studies.js';
import { PERMISSIONS } from '../../shared/protocol/roles.js';

/**
 * The study workflow, enforced here and nowhere else:
 *
 *   draft ──start / first capture──▶ running ──submit──▶ in-review ──approve──▶ approved
 *                                      ▲                    │                      │
 *                                      └──── returned ◀─return (comment)           │
 *   running ◀──────────────────────────────── reopen (reason) — a new revision ◀───┘
 *
 * A returned study is open for work like a running one and may be submitted again. In review and
 * approved, the study's data is locked (studyLock.ts). Each step locks the study row, checks the
 * status, writes the review history, the audit event and the e-mails in one transaction.
 */
export const TRANSITIONS: Record<ReviewAction, { from: readonly string[]; to: string }> = {
  start: { from: ['draft'], to: 'running' },
  submit: { from: ['running', 'returned'], to: 'in-review' },
  approve: { from: ['in-review'], to: 'approved' },
  return: { from: ['in-review'], to: 'returned' },
  reopen: { from: ['approved'], to: 'running' },
};

const VERB: Record<ReviewAction, string> = {
  start: 'started',
  submit: 'submitted for review',
  approve: 'approved',
  return: 'returned',
  reopen: 'reopened',
};

async function lockStudy(id: number, t: Transaction): Promise<Study> {
  const study = await Study.findByPk(id, { transaction: t, lock: t.LOCK.UPDATE });
  if (!study) throw new NotFoundError('Study');
  return study;
}

function refuse(study: Study, action: ReviewAction): never {
  const allowed = TRANSITIONS[action].from.join(' or ');
  throw new AppError(
    409,
    'transition-refused',
    `Study ${study.id} is ${study.status}: it cannot be ${VERB[action]} (only a study that is ${allowed} can).`,
    { status: study.status, action },
  );
}

async function move(
  study: Study,
  action: ReviewAction,
  actor: { id: number } | null,
  note: string | null,
  t: Transaction,
) {
  const from = study.status;
  const to = TRANSITIONS[action].to;
  if (!TRANSITIONS[action].from.includes(from)) refuse(study, action);
  study.status = to as Study['status'];
  await study.save({ transaction: t });
  await StudyReview.create(
    {
      studyId: study.id,
      revision: study.revision,
      action,
      fromStatus: from,
      toStatus: to,
      actorId: actor?.id ?? null,
      note,
    },
    { transaction: t },
  );
  await audit(
    actor?.id ?? null,
    `study.${action}`,
    'study',
    study.id,
    { status: { from, to }, revision: study.revision, note },
    t,
  );
}

function studyLink(study: Study): string {
  return `/studies/${study.id}`;
}

/** Draft → running, explicitly (a lead or engineer planning the study says work has begun). */
export async function startStudy(id: number, user: AuthUser) {
  await Study.sequelize!.transaction(async (t) => {
    const study = await lockStudy(id, t);
    await move(study, 'start', user, null, t);
  });
  return getStudy(id);
}

/** Called inside the transaction that opens a study's first capture: a draft becomes running. */
export async function startOnFirstCapture(
  studyId: number,
  actorId: number,
  t: Transaction,
): Promise<void> {
  const study = await lockStudy(studyId, t);
  if (study.status === 'draft')
    await move(study, 'start', { id: actorId }, 'first capture opened', t);
}

/** Running or returned → in review. Every capture must be finished and at least one must exist. */
export async function submitStudy(id: number, user: AuthUser, note: string | null) {
  await Study.sequelize!.transaction(async (t) => {
    const study = await lockStudy(id, t);
    if (!TRANSITIONS.submit.from.includes(study.status)) refuse(study, 'submit');
    const dutIds = (
      await Dut.findAll({ where: { studyId: id }, attributes: ['id'], transaction: t })
    ).map((d) => d.id);
    const captures = dutIds.length
      ? await Capture.findAll({
          where: { dutId: { [Op.in]: dutIds } },
          attributes: ['id', 'state'],
          transaction: t,
        })
      : [];
    const open = captures
      .filter((c) => c.state === 'open' || c.state === 'stalled')
      .map((c) => c.id);
    if (open.length) {
      throw new AppError(
        409,
        'captures-open',
        `Finish the open capture(s) ${open.map((c) => `#${c}`).join(', ')} before submitting the study for review.`,
        { open },
      );
    }
    if (!captures.some((c) => c.state === 'finished')) {
      throw new AppError(
        409,
        'nothing-to-review',
        'The study has no finished capture yet: there is nothing to review.',
      );
    }
    study.submittedBy = user.id;
    study.submittedAt = new Date();
    await move(study, 'submit', user, note, t);
    const reviewers = [...PERMISSIONS['studies:review']];
    const leads = await User.findAll({
      where: { role: reviewers, active: true, id: { [Op.ne]: user.id } },
      transaction: t,
    });
    for (const lead of leads) {
      await enqueueMail(
        {
          kind: 'study-submitted',
          to: lead.email,
          subject: `Driftbench: “${study.title}” is waiting for your review`,
          text:
            `${user.name} submitted study ${study.id} “${study.title}” (revision ${study.revision}) for review.\n` +
            (note ? `\nTheir note: ${note}\n` : '') +
            `\nOpen ${studyLink(study)} in Driftbench to approve it or return it with a comment.\n`,
        },
        t,
      );
    }
  });
  return getStudy(id);
}

/** Wrong passwords a lead may give when signing, per 15 minutes, before approvals are refused (429). */
export const SIGNATURE_ATTEMPTS = 5;
const SIGNATURE_WINDOW_MS = 15 * 60_000;
const failedSignatures = new Map<number, number[]>();

/**
 * In review → approved, by a lead who did not submit it, signing by re-entering their password.
 * The report of the approved revision is kept as it is now (study_revisions), so a later reopen
 * never changes what was approved.
 */
export async function approveStudy(
  pool: pg.Pool,
  id: number,
  user: AuthUser,
  password: string,
  note: string | null,
) {
  const now = Date.now();
  const recent = (failedSignatures.get(user.id) ?? []).filter((t) => now - t < SIGNATURE_WINDOW_MS);
  if (recent.length >= SIGNATURE_ATTEMPTS) {
    throw new AppError(
      429,
      'too-many-signatures',
      'Too many wrong passwords for a signature: wait 15 minutes before approving again.',
    );
  }
  const signer = await User.findByPk(user.id);
  if (!signer || !(await bcrypt.compare(password, signer.passwordHash))) {
    failedSignatures.set(user.id, [...recent, now]);
    throw new AppError(
      403,
      'signature-refused',
      'The password does not match: the approval was not signed.',
    );
  }
  failedSignatures.delete(user.id);
  await Study.sequelize!.transaction(async (t) => {
    const study = await lockStudy(id, t);
    if (!TRANSITIONS.approve.from.includes(study.status)) refuse(study, 'approve');
    if (study.submittedBy === user.id) {
      throw new ForbiddenError('You submitted this study: another lead must approve it.');
    }
    study.approvedBy = user.id;
    study.approvedAt = new Date();
    await move(study, 'approve', user, note, t);
    const report = await buildStudyReport(pool, id, t);
    await Study.sequelize!.query(
      'INSERT INTO study_revisions (study_id, revision, approved_by, approved_at, report) VALUES ($1, $2, $3, $4, $5::jsonb)',
      {
        bind: [id, study.revision, user.id, study.approvedAt, JSON.stringify(report)],
        transaction: t,
      },
    );
    await mailSubmitter(
      study,
      t,
      'study-approved',
      `Driftbench: “${study.title}” was approved`,
      `${user.name} approved study ${study.id} “${study.title}” (revision ${study.revision}).\n` +
        (note ? `\nTheir note: ${note}\n` : '') +
        `\nThe approved report: ${studyLink(study)}/report\n`,
    );
  });
  return getStudy(id);
}

/** In review → returned, with the lead's comment (required); the study is open for work again. */
export async function returnStudy(id: number, user: AuthUser, comment: string) {
  await Study.sequelize!.transaction(async (t) => {
    const study = await lockStudy(id, t);
    await move(study, 'return', user, comment, t);
    await mailSubmitter(
      study,
      t,
      'study-returned',
      `Driftbench: “${study.title}” was returned`,
      `${user.name} returned study ${study.id} “${study.title}” (revision ${study.revision}) with this comment:\n\n` +
        `${comment}\n\nOpen ${studyLink(study)} in Driftbench, address the comment and submit it again.\n`,
    );
  });
  return getStudy(id);
}

/** Approved → running as a new revision; the approved revision and its report stay as they were. */
export async function reopenStudy(id: number, user: AuthUser, reason: string) {
  await Study.sequelize!.transaction(async (t) => {
    const study = await lockStudy(id, t);
    if (!TRANSITIONS.reopen.from.includes(study.status)) refuse(study, 'reopen');
    const from = study.revision;
    study.revision = from + 1;
    study.submittedBy = null;
    study.submittedAt = null;
    study.approvedBy = null;
    study.approvedAt = null;
    await move(study, 'reopen', user, reason, t);
    await audit(
      user.id,
      'study.revision',
      'study',
      id,
      { revision: { from, to: study.revision } },
      t,
    );
  });
  return getStudy(id);
}

async function mailSubmitter(
  study: Study,
  t: Transaction,
  kind: string,
  subject: string,
  text: string,
) {
  if (!study.submittedBy) return;
  const submitter = await User.findByPk(study.submittedBy, { transaction: t });
  if (submitter?.active) await enqueueMail({ kind, to: submitter.email, subject, text }, t);
}

// Kept importable from here; the query lives in its own module (the report lists it too).
export { reviewHistory } from './reviewHistory.js';

/** The approved revisions of a study (without their reports). */
export async function listRevisions(studyId: number) {
  return (await Study.sequelize!.query(
    `SELECT v.revision, v.approved_at AS "approvedAt", v.approved_by AS "approvedBy", u.name AS "approvedByName"
     FROM study_revisions v LEFT JOIN users u ON u.id = v.approved_by WHERE v.study_id = $1 ORDER BY v.revision`,
    { bind: [studyId], type: QueryTypes.SELECT },
  )) as Array<{
    revision: number;
    approvedAt: Date;
    approvedBy: number | null;
    approvedByName: string | null;
  }>;
}

/** The report of an approved revision exactly as it was approved. */
export async function revisionReport(studyId: number, revision: number) {
  const rows = (await Study.sequelize!.query(
    'SELECT report FROM study_revisions WHERE study_id = $1 AND revision = $2',
    {
      bind: [studyId, revision],
      type: QueryTypes.SELECT,
    },
  )) as Array<{ report: unknown }>;
  if (!rows.length) throw new NotFoundError(`Approved revision ${revision} of study ${studyId}`);
  return rows[0].report;
}
