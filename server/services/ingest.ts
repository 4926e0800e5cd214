import type pg from 'pg';
import { AppError, ForbiddenError, NotFoundError, ValidationError } from '../errors.js';
import {
  findBadReading,
  type IngestResult,
  type ReadingIn,
} from '../../shared/protocol/captures.js';
import type { LiveHub } from './liveHub.js';
import type { AuthUser } from './auth.js';
import { PlausibilityWindow, PLAUSIBILITY } from '../../shared/protocol/plausibility.js';
import { ReadingFlag } from '../../shared/protocol/reading.js';
import { roleCan } from '../../shared/protocol/roles.js';
import { assertCaptureWritable, LOCKED_STATUSES, studyLockedError } from './studyLock.js';
import { float8Array, int2Array, int4Array } from '../db/binaryArrays.js';
import { decodeReadingsF64 } from '../../shared/protocol/readingsBinary.js';
import { audit } from './audit.js';
import { isRecording } from '../../shared/protocol/captureLifecycle.js';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import { from as copyFrom } from 'pg-copy-streams';
import { readingsCopyBinary } from '../db/copyBinary.js';
import { tilesOfBatch } from './liveTiles.js';

interface IngestRow {
  state: string;
  may_write: boolean;
  study_id: number;
  title: string;
  status: string;
  revision: number;
  fits: boolean;
  highest_seq: number;
  accepted: number;
  seqs: number[] | null;
}

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

/** Batches of at least this many readings go by COPY when they can (see {@link ingestByCopy}). */
export const COPY_MIN_BATCH = 256;

/** The tile merge of a batch computed in Node: the trigger's ON CONFLICT rule (migration 0110). */
const MERGE_TILES_AND_COUNT = `WITH tiles AS (
     INSERT INTO reading_tiles AS rt (capture_id, level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value)
     SELECT $1, u.* FROM unnest($2::int2[], $3::int[], $4::int[], $5::float8[], $6::float8[], $7::int[], $8::float8[], $9::float8[])
       AS u(level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value)
     ON CONFLICT (capture_id, level, bucket) DO UPDATE SET
       min_seq = CASE WHEN (EXCLUDED.min_value, EXCLUDED.min_seq) < (rt.min_value, rt.min_seq) THEN EXCLUDED.min_seq ELSE rt.min_seq END,
       min_t = CASE WHEN (EXCLUDED.min_value, EXCLUDED.min_seq) < (rt.min_value, rt.min_seq) THEN EXCLUDED.min_t ELSE rt.min_t END,
       min_value = LEAST(EXCLUDED.min_value, rt.min_value),
       max_seq = CASE WHEN EXCLUDED.max_value > rt.max_value OR (EXCLUDED.max_value = rt.max_value AND EXCLUDED.max_seq < rt.max_seq) THEN EXCLUDED.max_seq ELSE rt.max_seq END,
       max_t = CASE WHEN EXCLUDED.max_value > rt.max_value OR (EXCLUDED.max_value = rt.max_value AND EXCLUDED.max_seq < rt.max_seq) THEN EXCLUDED.max_t ELSE rt.max_t END,
       max_value = GREATEST(EXCLUDED.max_value, rt.max_value))
   UPDATE captures SET reading_count = reading_count + $10, highest_seq = GREATEST(highest_seq, $11),
     updated_at = now(), last_reading_at = now(), state = 'open'
   WHERE id = $1 RETURNING highest_seq`;

/**
 * Locks the capture row and says whether a COPY may go ahead: the study, the state, who may write,
 * and whether every seq of the batch lies above the highest stored one. It also names the table
 * that holds the capture's readings (its partition, once readings are partitioned and the capture
 * has rows: a COPY into the partition skips the parent's tile trigger and inserts in bulk; found
 * by a primary-key look-up of the highest stored reading, never a scan) and
 * sets `driftbench.tiles` so the trigger steps aside for this transaction (migration 0230).
 */
const LOCK_FOR_COPY = `SELECT c.state, ($2::boolean OR c.operator_id = $3) AS may_write, c.highest_seq < $4 AS fits,
     s.id AS study_id, s.title, s.status, s.revision,
     (SELECT r.tableoid::regclass::text FROM readings r WHERE r.capture_id = c.id AND r.seq = c.highest_seq) AS rel,
     set_config('driftbench.tiles', 'caller', true) AS tiles
   FROM captures c JOIN duts d ON d.id = c.dut_id JOIN studies s ON s.id = d.study_id
   WHERE c.id = $1 FOR NO KEY UPDATE OF c`;

interface CopyLockRow {
  state: string;
  may_write: boolean;
  fits: boolean;
  study_id: number;
  title: string;
  status: string;
  revision: number;
  rel: string | null;
}

/**
 * The bulk path for a batch in strictly increasing seq order: in one transaction, lock the
 * capture row, COPY the rows in PostgreSQL's binary format, merge the batch's tiles (computed
 * here) and move the capture's counters. Answers null — having changed nothing — when the batch
 * must take the one-statement path instead: the capture is missing, not recording, not the user's
 * to write, or already holds a seq at or above the batch's lowest (a resend, an overlap).
 *
 * No duplicate can slip in: every writer of a capture's readings holds this row lock while it
 * inserts and moves `highest_seq` in the same transaction, so under the lock no stored seq of the
 * capture exceeds `highest_seq`, and every seq of the batch is above it and distinct. Should that
 * ever not hold, the primary key (capture_id, seq) refuses the COPY as a whole, the transaction
 * rolls back, and the batch goes the ON CONFLICT DO NOTHING way (also null).
 */
async function ingestByCopy(
  pool: pg.Pool,
  captureId: number,
  mayWriteAny: boolean,
  userId: number,
  cols: { seqs: number[]; ts: number[]; values: number[]; flags: number[] },
  minSeq: number,
  maxSeq: number,
): Promise<{ state: string; highestSeq: number } | null> {
  const client = await pool.connect();
  let broken: Error | undefined;
  try {
    await client.query('BEGIN');
    const lock = await client.query<CopyLockRow>(LOCK_FOR_COPY, [
      captureId,
      mayWriteAny,
      userId,
      minSeq,
    ]);
    const row = lock.rows[0];
    if (!row || !isRecording(row.state) || !row.may_write || !row.fits) {
      await client.query('ROLLBACK');
      return null;
    }
    if ((LOCKED_STATUSES as readonly string[]).includes(row.status)) {
      throw studyLockedError(
        { id: row.study_id, title: row.title, status: row.status, revision: row.revision },
        'adding readings',
      );
    }
    const { seqs, ts, values, flags } = cols;
    const body = readingsCopyBinary(captureId, seqs, ts, values, flags);
    try {
      await pipeline(
        Readable.from([body]),
        client.query(
          copyFrom(
            `COPY ${row.rel ?? 'readings'} (capture_id, seq, t, value, flags) FROM STDIN (FORMAT binary)`,
          ),
        ),
      );
    } catch (err) {
      // A seq already stored (the invariant above broken): the conflict-safe path sorts it out.
      if ((err as { code?: string }).code !== '23505') throw err;
      await client.query('ROLLBACK');
      return null;
    }
    const tiles = tilesOfBatch(seqs, ts, values);
    const upd = await client.query<{ highest_seq: number }>(MERGE_TILES_AND_COUNT, [
      captureId,
      int2Array(tiles.level),
      int4Array(tiles.bucket),
      int4Array(tiles.minSeq),
      float8Array(tiles.minT),
      float8Array(tiles.minValue),
      int4Array(tiles.maxSeq),
      float8Array(tiles.maxT),
      float8Array(tiles.maxValue),
      seqs.length,
      maxSeq,
    ]);
    await client.query('COMMIT');
    return { state: row.state, highestSeq: upd.rows[0].highest_seq };
  } catch (err) {
    // A connection that cannot even roll back is not given back to the pool.
    await client.query('ROLLBACK').catch((e: Error) => (broken = e));
    throw err;
  } finally {
    client.release(broken);
  }
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
  // The batch as four columns: from the JSON body ({ readings: [...] }) or the compact binary one
  // (shared/protocol/readingsBinary.ts, a Buffer from the raw body parser).
  let seqs: number[];
  let ts: number[];
  let values: number[];
  let flags: number[];
  if (Buffer.isBuffer(body)) {
    const cols = decodeReadingsF64(body);
    if ('reason' in cols) {
      throw new ValidationError(
        cols.index >= 0 ? `reading ${cols.index}: ${cols.reason}` : cols.reason,
        { index: cols.index, reason: cols.reason },
      );
    }
    ({ seq: seqs, t: ts, value: values, flags } = cols);
  } else {
    const readings = (body as { readings?: unknown } | null)?.readings;
    const bad = findBadReading(readings);
    if (bad) {
      throw new ValidationError(
        bad.index >= 0 ? `readings[${bad.index}]: ${bad.reason}` : bad.reason,
        { index: bad.index, reason: bad.reason },
      );
    }
    const list = readings as ReadingIn[];
    const k = list.length;
    seqs = new Array<number>(k);
    ts = new Array<number>(k);
    values = new Array<number>(k);
    flags = new Array<number>(k);
    for (let i = 0; i < k; i++) {
      const r = list[i];
      seqs[i] = r.seq;
      ts[i] = r.t;
      values[i] = r.value;
      flags[i] = r.flags ?? 0;
    }
  }
  const n = seqs.length;
  let maxSeq = -1;
  let minSeq = n > 0 ? Number.MAX_SAFE_INTEGER : -1;
  let increasing = true;
  for (let i = 0; i < n; i++) {
    const seq = seqs[i];
    if (i > 0 && seq <= seqs[i - 1]) increasing = false;
    if (seq < minSeq) minSeq = seq;
    if (seq > maxSeq) maxSeq = seq;
  }
  // Implausible values (shared/protocol/plausibility.ts) are stored with their flag bit set, so
  // one absurd number never blocks the analysis or the finish.
  const judge = await plausibilityFor(pool, captureId);
  for (let i = 0; i < n; i++)
    if (flags[i] === 0 && !judge.check(values[i])) flags[i] |= ReadingFlag.implausible;
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

  // One statement, so one round trip and one commit: lock the capture row, insert only if it is
  // open and the user may write it, count what was new, and move the capture's counters.
  // Numbers go as binary arrays (server/db/binaryArrays.ts): none is printed here or parsed by
  // PostgreSQL, and every double arrives bit for bit.
  const params = [
    captureId,
    int4Array(seqs),
    float8Array(ts),
    float8Array(values),
    int2Array(flags),
    mayWriteAny,
    user.id,
    maxSeq,
    minSeq,
  ];
  // Fast path: a batch in strictly increasing order lying wholly above the highest stored seq
  // cannot conflict, so it skips the per-row conflict check (about 1.5× faster in PostgreSQL).
  // When the capture already holds higher readings, the statement inserts nothing and says so,
  // and the batch goes again through the conflict-safe path.
  let res =
    increasing && n > 0 ? await pool.query<IngestRow>(ingestSql(false, watched), params) : null;
  const first = res?.rows[0];
  if (!res || (first && isRecording(first.state) && first.may_write && !first.fits)) {
    res = await pool.query<IngestRow>(ingestSql(true, watched), params);
  }
  // No row: the capture is missing, or has no DUT or study — assertCaptureWritable says which.
  if (res.rowCount === 0) {
    await assertCaptureWritable(pool, captureId, 'adding readings');
    throw new NotFoundError('Capture');
  }
  const row = res.rows[0];
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
