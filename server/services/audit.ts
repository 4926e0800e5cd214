import { QueryTypes, type Transaction } from 'sequelize';
import { AuditEvent } from '../models/index.js';

/**
 * The audit trail is a hash chain. Each event stores `prev_hash` (the hash of the event before it,
 * 64 zeros for the first) and `hash` = SHA-256 over prev_hash and its own content, computed by the
 * database function `driftbench_audit_hash` (migration 20261202-0020; the content and separator are
 * documented in docs/record.md). Editing or deleting any row breaks the chain at that row or the
 * next one, which `verifyAuditChain` names.
 *
 * Writers are serialised by a transaction-scoped advisory lock taken before reading the chain head,
 * so two concurrent events can never both link to the same predecessor (the chain cannot fork). The
 * lock is held until the caller's transaction ends, so the event commits or rolls back together with
 * the change it records.
 */
export const AUDIT_CHAIN_LOCK = 0x44424155; // 'DBAU': one lock key for the whole chain
export const GENESIS_HASH = '0'.repeat(64);

const INSERT_SQL = `
  WITH head AS (SELECT hash FROM audit_events ORDER BY id DESC LIMIT 1),
       n AS (SELECT nextval(pg_get_serial_sequence('audit_events', 'id')) AS id, now() AS ts,
                    coalesce((SELECT hash FROM head), '${GENESIS_HASH}') AS prev)
  INSERT INTO audit_events (id, actor_id, action, subject_type, subject_id, details, created_at, prev_hash, hash)
  SELECT n.id, $1::integer, $2::text, $3::text, $4::integer, $5::jsonb, n.ts, n.prev,
         driftbench_audit_hash(n.prev, n.id, $1::integer, $2::text, $3::text, $4::integer, $5::jsonb, n.ts)
  FROM n
  RETURNING id`;

/**
 * Writes one audit event, chained to the previous one. Pass the transaction of the change it
 * records so both commit together; without one, the event is written in a transaction of its own.
 * `details` should say what changed as `{ field: { from, to } }` (before → after) where that applies.
 */
export async function audit(
  actorId: number | null,
  action: string,
  subjectType: string,
  subjectId: number | null,
  details?: unknown,
  transaction?: Transaction,
): Promise<number> {
  const sequelize = AuditEvent.sequelize!;
  const write = async (t: Transaction) => {
    await sequelize.query('SELECT pg_advisory_xact_lock($1)', {
      bind: [AUDIT_CHAIN_LOCK],
      transaction: t,
      type: QueryTypes.SELECT,
    });
    const rows = (await sequelize.query(INSERT_SQL, {
      bind: [actorId, action, subjectType, subjectId, JSON.stringify(details ?? null)],
      transaction: t,
      type: QueryTypes.SELECT,
    })) as Array<{ id: number | string }>;
    return Number(rows[0].id);
  };
  if (transaction) return write(transaction);
  return sequelize.transaction((t) => write(t));
}

/** The same write for code on the raw pg pool (ingest, finish): `client` must be inside BEGIN … COMMIT. */
export async function auditWithClient(
  client: {
    query(text: string, values?: unknown[]): Promise<{ rows: Array<Record<string, unknown>> }>;
  },
  actorId: number | null,
  action: string,
  subjectType: string,
  subjectId: number | null,
  details?: unknown,
): Promise<number> {
  await client.query('SELECT pg_advisory_xact_lock($1)', [AUDIT_CHAIN_LOCK]);
  const { rows } = await client.query(INSERT_SQL, [
    actorId,
    action,
    subjectType,
    subjectId,
    JSON.stringify(details ?? null),
  ]);
  return Number(rows[0].id);
}

/** `{ field: { from, to } }` for every field of `after` that differs from `before`. */
export function changes(
  before: Record<string, unknown>,
  after: Record<string, unknown>,
): Record<string, { from: unknown; to: unknown }> {
  const out: Record<string, { from: unknown; to: unknown }> = {};
  for (const [key, to] of Object.entries(after)) {
    if (to === undefined) continue;
    const from = before[key] ?? null;
    if (JSON.stringify(from) !== JSON.stringify(to)) out[key] = { from, to };
  }
  return out;
}

export interface ChainBreak {
  /** The first event whose link or content does not check out. */
  id: number;
  reason: 'content-changed' | 'link-broken';
  message: string;
}

export interface ChainVerification {
  ok: boolean;
  checked: number;
  firstBroken: ChainBreak | null;
  headHash: string | null;
}

/**
 * Recomputes the whole chain in id order: each event's hash from its stored content and the hash
 * of the event before it. The first row whose stored `prev_hash` is not the previous row's hash
 * (a row deleted or inserted) or whose content no longer yields its stored hash (a row edited) is
 * the first broken link.
 */
export async function verifyAuditChain(): Promise<ChainVerification> {
  const sequelize = AuditEvent.sequelize!;
  const rows = (await sequelize.query(
    `SELECT id, prev_hash, hash,
            lag(hash) OVER (ORDER BY id) AS expected_prev,
            driftbench_audit_hash(prev_hash, id, actor_id, action, subject_type, subject_id, details, created_at) AS recomputed
     FROM audit_events ORDER BY id`,
    { type: QueryTypes.SELECT },
  )) as Array<{
    id: number | string;
    prev_hash: string;
    hash: string;
    expected_prev: string | null;
    recomputed: string;
  }>;
  let headHash: string | null = null;
  for (const r of rows) {
    const id = Number(r.id);
    const expectedPrev = r.expected_prev ?? GENESIS_HASH;
    if (r.prev_hash !== expectedPrev) {
      return {
        ok: false,
        checked: rows.length,
        headHash: null,
        firstBroken: {
          id,
          reason: 'link-broken',
          message: `Event ${id} does not link to the event before it: an event was deleted, inserted or re-linked just before ${id}.`,
        },
      };
    }
    if (r.recomputed !== r.hash) {
      return {
        ok: false,
        checked: rows.length,
        headHash: null,
        firstBroken: {
          id,
          reason: 'content-changed',
          message: `Event ${id} was changed after it was written: its content no longer matches its hash.`,
        },
      };
    }
    headHash = r.hash;
  }
  return { ok: true, checked: rows.length, firstBroken: null, headHash };
}
