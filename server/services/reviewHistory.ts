import type { Transaction } from 'sequelize';
import { QueryTypes } from 'sequelize';
import { Study } from '../models/index.js';
import type { ReviewAction } from '../models/StudyReview.js';

/**
 * A study's review history, oldest first, with each actor's name and role. Its own module so the
 * report (which lists it) and the workflow (which builds the report when approving) do not
 * import each other.
 */
export async function reviewHistory(studyId: number, t?: Transaction) {
  return (await Study.sequelize!.query(
    `SELECT r.id, r.revision, r.action, r.from_status AS "fromStatus", r.to_status AS "toStatus",
            r.note, r.created_at AS "at", r.actor_id AS "actorId", u.name AS "actorName", u.role AS "actorRole"
     FROM study_reviews r LEFT JOIN users u ON u.id = r.actor_id
     WHERE r.study_id = $1 ORDER BY r.id`,
    { bind: [studyId], type: QueryTypes.SELECT, transaction: t },
  )) as Array<{
    id: number;
    revision: number;
    action: ReviewAction;
    fromStatus: string;
    toStatus: string;
    note: string | null;
    at: Date;
    actorId: number | null;
    actorName: string | null;
    actorRole: string | null;
  }>;
}
