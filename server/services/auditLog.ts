import { QueryTypes } from 'sequelize';
import { AuditEvent } from '../models/index.js';
import type { AuditEntry, AuditQuery } from '../../shared/protocol/review.js';

const SELECT = `SELECT e.id, e.created_at AS "at", e.actor_id AS "actorId", u.name AS "actorName", e.action,
    e.subject_type AS "subjectType", e.subject_id AS "subjectId", e.details, e.prev_hash AS "prevHash", e.hash
  FROM audit_events e LEFT JOIN users u ON u.id = e.actor_id`;

async function page(where: string[], bind: unknown[], limit: number) {
  bind.push(limit + 1);
  const rows = (await AuditEvent.sequelize!.query(
    `${SELECT} ${where.length ? `WHERE ${where.join(' AND ')}` : ''} ORDER BY e.id DESC LIMIT $${bind.length}`,
    { bind, type: QueryTypes.SELECT },
  )) as Array<AuditEntry & { id: number | string }>;
  const events = rows.slice(0, limit).map((r) => ({ ...r, id: Number(r.id) }));
  return { events, nextCursor: rows.length > limit ? String(events[events.length - 1].id) : null };
}

/**
 * `GET /api/audit`: newest first; `userId` the actor, `kind` an action or its prefix (`study`
 * matches `study.submit`, `study.approve` …), `from`/`to` dates (inclusive), paged by `cursor`
 * (the last id of the previous page) and `limit`.
 */
export async function listAudit(q: AuditQuery) {
  const where: string[] = [];
  const bind: unknown[] = [];
  const add = (sql: (n: number) => string, value: unknown) => {
    bind.push(value);
    where.push(sql(bind.length));
  };
  if (q.userId) add((n) => `e.actor_id = $${n}`, q.userId);
  if (q.kind) {
    bind.push(q.kind);
    const n = bind.length;
    where.push(`(e.action = $${n} OR e.action LIKE $${n} || '.%' OR e.subject_type = $${n})`);
  }
  if (q.from) add((n) => `e.created_at >= $${n}`, q.from);
  if (q.to) {
    // A bare date means the whole of that day.
    const to = new Date(q.to);
    if (
      to.getUTCHours() === 0 &&
      to.getUTCMinutes() === 0 &&
      to.getUTCSeconds() === 0 &&
      to.getUTCMilliseconds() === 0
    )
      to.setUTCDate(to.getUTCDate() + 1);
    else to.setTime(to.getTime() + 1);
    add((n) => `e.created_at < $${n}`, to);
  }
  if (q.cursor) add((n) => `e.id < $${n}`, Number(q.cursor));
  return page(where, bind, q.limit);
}

/**
 * `GET /api/studies/:id/audit`: the events about the study itself, its checkpoints, DUTs, captures
 * and attachments, newest first.
 */
export async function studyAudit(studyId: number, q: { limit: number; cursor?: string }) {
  const bind: unknown[] = [studyId];
  const where = [
    `((e.subject_type = 'study' AND e.subject_id = $1)
      OR (e.subject_type = 'checkpoint' AND e.subject_id IN (SELECT id FROM checkpoints WHERE study_id = $1))
      OR (e.subject_type = 'dut' AND e.subject_id IN (SELECT id FROM duts WHERE study_id = $1))
      OR (e.subject_type IN ('checkpoint', 'dut') AND (e.details->>'studyId')::int = $1)
      OR (e.subject_type = 'capture' AND e.subject_id IN (SELECT c.id FROM captures c JOIN duts d ON d.id = c.dut_id WHERE d.study_id = $1))
      OR (e.subject_type = 'attachment' AND (e.details->>'studyId')::int = $1))`,
  ];
  if (q.cursor) {
    bind.push(Number(q.cursor));
    where.push(`e.id < $${bind.length}`);
  }
  return page(where, bind, q.limit);
}
