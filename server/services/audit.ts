import type { Transaction } from 'sequelize';
import { AuditEvent } from '../models/index.js';

/** Writes one audit event (role changes, account changes, approvals). */
export async function audit(
  actorId: number | null,
  action: string,
  subjectType: string,
  subjectId: number | null,
  details?: unknown,
  transaction?: Transaction,
): Promise<void> {
  await AuditEvent.create({ actorId, action, subjectType, subjectId, details: details ?? null }, { transaction });
}
