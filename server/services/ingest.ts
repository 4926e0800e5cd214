import type pg from 'pg';
import { AppError, ForbiddenError, NotFoundError } from '../errors.js';
import type { IngestResult } from '../../shared/protocol/captures.js';
import type { LiveHub } from './liveHub.js';
import type { AuthUser } from './auth.js';
import { PlausibilityWindow, PLAUSIBILITY } from '../../shared/protocol/plausibility.js';
import { roleCan } from '../../shared/protocol/roles.js';
import { assertCaptureWritable, LOCKED_STATUSES, studyLockedError } from './studyLock.js';
import { float8Array, int2Array, int4Array } from '../db/binaryArrays.js';
import { audit } from './audit.js';
import { isRecording } from '../../shared/protocol/captureLifecycle.js';
import { ingestSmallBatch, type IngestRow, type SmallBatch } from './ingestGroup.js';
import { ingestByCopy } from './ingestCopy.js';
import { batchColumns, flagImplausible } from './ingestColumns.js';

/**
 * The ingest statement. `conflictSafe` inserts with ON CONFLICT DO NOTHING; otherwise the insert
 * runs only when every seq of the batch ($9 = lowest) lies above the capture's highest stored seq.
 * It also reads the capture's study, so a locked study (server/services/studyLock.ts) stores
 * nothing and the check costs no round trip of its own.
 */
function ingestSql(conflictSafe: boolean, returnSeqs: boolean): string {
  return `WITH cap AS (
       SELECT c.id, c.state, ($6::boolean OR c.operator_id = $7) AS may_write, c.highest_seq, c.highest_seq < $9 AS fits,
         s.id AS study_id, s.title, s.status, s.revision, s.status IN (${LOCKED_STATUSES.map((x) => `'${x}'`).join(', ')}) AS locked
       FROM captures c JOIN duts d ON d.id = c.dut_id JOIN studies s ON s.id = d.study_id
       WHERE c.id = $1 FOR NO KEY UPDATE OF c),
     ins AS (
       INSERT INTO readings (capture_id, seq, t, value, flags)
       SELECT $1, u.s, u.t, u.v, u.f FROM unnest($2::int[], $3::float8[], $4::float8[], $5::int2[]) AS u(s, t, v, f)
       WHERE EXISTS (SELECT 1 FROM cap WHERE state IN ('open', 'stalled') AND may_write AND NOT locked${conflictSafe ? '' : ' AND fits'})
       ${conflictSafe ? 'ON CONFLICT DO NOTHING ' : ''}RETURNING seq),
     counted AS (SELECT count(*)::int AS accepted FROM ins),
     upd AS (
       UPDATE captures c SET reading_count = c.reading_count + counted.accepted,
         highest_seq = GREATEST(c.highest_seq, $8), updated_at = now(), last_reading_at = now(), state = 'open'
       FROM counted WHERE c.id = $1 AND counted.accepted > 0
       RETURNING c.highest_seq)
     SELECT cap.state, cap.may_write, cap.fits, cap.study_id, cap.title, cap.status, cap.revision, COALESCE((SELECT highest_seq FROM upd), cap.highest_seq) AS highest_seq,
       (SELECT accepted FROM counted) AS accepted,
       ${returnSeqs ? '(SELECT array_agg(seq) FROM ins)' : 'NULL::int[]'} AS seqs
     FROM cap`;
}

/** Running plausibility windows of the captures being recorded now (one server process). */
const windows = new Map<number, PlausibilityWindow>();
const MAX_WINDOWS = 256;

/**
 * The plausibility window of a capture, seeded from its nominal and its latest accepted readings
 * (`capture_id = $1`, not `c.id`, so the planner reads only the capture's readings partition).
 */
async function plausibilityFor(pool: pg.Pool, captureId: number): Promise<PlausibilityWindow> {
  const hit = windows.get(captureId);
  if (hit) {
    windows.delete(captureId);
    windows.set(captureId, hit);
    return hit;
  }
  const res = await pool.query<{ nominal: number | null; recent: number[] | null }>(
    `SELECT c.nominal, (SELECT array_agg(v ORDER BY s) FROM (SELECT seq AS s, value AS v FROM readings
        WHERE capture_id = $1 AND flags = 0 ORDER BY seq DESC LIMIT $2) r) AS recent
     FROM captures c WHERE c.id = $1`,
    [captureId, PLAUSIBILITY.window],
  );
  const row = res.rows[0];
  const w = new PlausibilityWindow(row?.nominal ?? null, row?.recent ?? []);
  if (row) {
    windows.set(captureId, w);
    if (windows.size > MAX_WINDOWS) windows.delete(windows.keys().next().value!);
  }
  return w;
}

/**
 * Who may add readings to a capture: a role that runs captures, when it is the capture's operator
 * or holds `captures:write-any` (shared/protocol/roles.ts). Viewers never.
 */
export function canWriteCapture(
  user: Pick<AuthUser, 'id' | 'role'>,
  operatorId: number | null,
): boolean {
  if (!roleCan(user.role, 'captures:run')) return false;
  return roleCan(user.role, 'captures:write-any') || operatorId === user.id;
}

/** A stalled capture took readings again (the ingest set it back to open): audit and tell watchers. */
async function resumed(hub: LiveHub, userId: number, captureId: number, readings: number) {
  await audit(userId, 'capture.resume', 'capture', captureId, {
    state: { from: 'stalled', to: 'open' },
    readings,
  });
  hub.publishState(captureId, 'open');
}

/**
 * Batches of at least this many readings go by COPY when they can (see {@link ingestByCopy},
 * server/services/ingestCopy.ts: batches of one capture that queue together share one transaction).
 */
export const COPY_MIN_BATCH = 256;

/**
 * One small batch alone, as one statement: lock the capture row, insert only if it is open and
 * the user may write it, count what was new, and move the capture's counters — one round trip
 * and one commit. Numbers go as binary arrays (server/db/binaryArrays.ts): none is printed here
 * or parsed by PostgreSQL, and every double arrives bit for bit. Null: the capture has no row.
 */
async function ingestAlone(pool: pg.Pool, b: SmallBatch): Promise<IngestRow | null> {
  const params = [
    b.captureId,
    int4Array(b.seqs),
    float8Array(b.ts),
    float8Array(b.values),
    int2Array(b.flags),
    b.mayWriteAny,
    b.userId,
    b.maxSeq,
    b.minSeq,
  ];
  // Fast path: a batch in strictly increasing order lying wholly above the highest stored seq
  // cannot conflict, so it skips the per-row conflict check (about 1.5× faster in PostgreSQL).
  // When the capture already holds higher readings, the statement inserts nothing and says so,
  // and the batch goes again through the conflict-safe path.
  let res =
    b.increasing && b.seqs.length > 0
      ? await pool.query<IngestRow>(ingestSql(false, b.watched), params)
      : null;
  const first = res?.rows[0];
  if (!res || (first && isRecording(first.state) && first.may_write && !first.fits)) {
    res = await pool.query<IngestRow>(ingestSql(true, b.watched), params);
  }
  return res.rows[0] ?? null;
}

/**
 * Stores one batch of readings atomically, idempotently by (capture, seq): a resent or reordered
 * batch never duplicates. Arrays travel as four parameters and are unnested by PostgreSQL, so a
 * batch of 20,000 readings is one statement.
 */
export async function ingestReadings(
  pool: pg.Pool,
  hub: LiveHub,
  user: Pick<AuthUser, 'id' | 'role'>,
  captureId: number,
  body: unknown,
): Promise<IngestResult> {
  // The batch as four columns (server/services/ingestColumns.ts): from the JSON body
  // ({ readings: [...] }) or the compact binary one, with its seq range and order.
  const { seqs, ts, values, flags, minSeq, maxSeq, increasing } = batchColumns(body);
  const n = seqs.length;
  // Implausible values (shared/protocol/plausibility.ts) are stored with their flag bit set, so
  // one absurd number never blocks the analysis or the finish.
  flagImplausible(await plausibilityFor(pool, captureId), values, flags);
  const watched = hub.hasWatchers(captureId);
  const mayWriteAny = roleCan(user.role, 'captures:write-any');
  if (!roleCan(user.role, 'captures:run'))
    throw new ForbiddenError('Your role cannot add readings.');

  // A long batch above everything stored goes by COPY (ingestByCopy): all of it is new.
  if (increasing && n >= COPY_MIN_BATCH) {
    const copied = await ingestByCopy(
      pool,
      captureId,
      mayWriteAny,
      user.id,
      { seqs, ts, values, flags },
      minSeq,
      maxSeq,
    );
    if (copied) {
      if (copied.state === 'stalled') await resumed(hub, user.id, captureId, n);
      if (watched)
        hub.publishReadings(
          captureId,
          seqs.map((seq, i) => ({ seq, t: ts[i], value: values[i], flags: flags[i] })),
        );
      return { accepted: n, duplicates: 0, highestSeq: copied.highestSeq };
    }
  }

  // Every other batch shares a statement with the small batches of other captures waiting at
  // the same moment (server/services/ingestGroup.ts): one round trip and one commit for all of
  // them, each answered as if alone. A batch that finds nothing in flight goes alone at once.
  const row = await ingestSmallBatch(
    pool,
    {
      captureId,
      userId: user.id,
      mayWriteAny,
      seqs,
      ts,
      values,
      flags,
      minSeq,
      maxSeq,
      increasing,
      watched,
    },
    ingestAlone,
  );
  // No row: the capture is missing, or has no DUT or study — assertCaptureWritable says which.
  if (!row) {
    await assertCaptureWritable(pool, captureId, 'adding readings');
    throw new NotFoundError('Capture');
  }
  if ((LOCKED_STATUSES as readonly string[]).includes(row.status))
    throw studyLockedError(
      { id: row.study_id, title: row.title, status: row.status, revision: row.revision },
      'adding readings',
    );
  if (!row.may_write)
    throw new ForbiddenError("Only the capture's operator, a lead or an admin may add readings.");
  if (row.state === 'aborted')
    throw new AppError(
      409,
      'capture-aborted',
      'This capture was aborted: it takes no more readings.',
    );
  if (!isRecording(row.state))
    throw new AppError(
      409,
      'capture-finished',
      'This capture is finished: it takes no more readings.',
    );
  const accepted = row.accepted;
  const highestSeq = row.highest_seq;
  const inserted = row.seqs;
  // A stalled capture that receives readings again is recording: the statement set it back to
  // 'open'; the return is audited (rare, so off the hot path's single round trip).
  if (row.state === 'stalled' && accepted > 0) await resumed(hub, user.id, captureId, accepted);

  if (watched && inserted && inserted.length) {
    // Watchers get what was stored, as stored (an implausible reading carries its flag).
    const fresh = new Set(inserted);
    const out: Array<{ seq: number; t: number; value: number; flags: number }> = [];
    for (let i = 0; i < n; i++)
      if (fresh.delete(seqs[i]))
        out.push({ seq: seqs[i], t: ts[i], value: values[i], flags: flags[i] });
    hub.publishReadings(captureId, out);
  }
  return { accepted, duplicates: n - accepted, highestSeq };
}
