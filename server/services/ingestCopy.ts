import type pg from 'pg';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import { from as copyFrom } from 'pg-copy-streams';
import { COPY_BINARY_HEADER, COPY_BINARY_TRAILER, readingsCopyRows } from '../db/copyBinary.js';
import { mergeBatchTiles, tilesOfBatch, type BatchTiles } from './liveTiles.js';
import { TILE_MERGE_ON_CONFLICT } from '../db/tileMerge.js';
import { isRecording } from '../../shared/protocol/captureLifecycle.js';
import { LOCKED_STATUSES, studyLockedError } from './studyLock.js';

/**
 * The COPY path of the ingest (issue 15, one stream): long batches in increasing seq order lying
 * above everything a capture holds go into `readings` by binary COPY.
 *
 * Batches of one capture never wait on each other's row lock in PostgreSQL, each holding a pool
 * connection: they queue here, per capture, and one transaction at a time runs for a capture.
 * The batches that queued while it ran go together into the next one when they are contiguous
 * (each starts at the seq after the previous one's last) and of the same writer: one lock, one
 * COPY of all their rows in seq order, one tile merge, one commit — and each request is answered
 * after that commit with its own count. Whatever else queued (a gap, a resend, another writer)
 * goes in a transaction of its own afterwards.
 *
 * Each batch's COPY rows and tiles are made when it arrives, before it queues, so that work
 * overlaps the transaction in flight. A transaction costs three round trips: BEGIN with the lock
 * and checks (one simple query, the numbers in it checked integers), the COPY, and the tile merge
 * with the counters and COMMIT (again one simple query).
 */

/** The most readings one coalesced transaction takes (a design choice, no source). */
export const MAX_COALESCED_READINGS = 40_000;

/** What a COPY that went ahead answers: the capture's state before it, its highest seq after. */
export interface CopyOutcome {
  state: string;
  highestSeq: number;
}

/** The columns of one batch, strictly increasing in seq. */
export interface CopyColumns {
  seqs: number[];
  ts: number[];
  values: number[];
  flags: number[];
}

interface Waiting {
  userId: number;
  mayWriteAny: boolean;
  minSeq: number;
  maxSeq: number;
  n: number;
  rows: Buffer;
  tiles: BatchTiles;
  done: (r: CopyOutcome | null) => void;
  fail: (err: unknown) => void;
}

/** Per capture, the batches waiting for the transaction in flight (present while one runs). */
const queues = new Map<number, Waiting[]>();

/**
 * A capture's COPY queue now: whether a transaction of it runs (or waits for a connection) and
 * how many batches wait for the next one (for tests and logs).
 */
export function copyQueueOf(captureId: number): { running: boolean; waiting: number } {
  const queue = queues.get(captureId);
  return { running: queue !== undefined, waiting: queue?.length ?? 0 };
}

/** Counts since the process started: transactions of the COPY path and the batches they held. */
export const copyPathCounts = { transactions: 0, batches: 0 };

interface CopyLockRow {
  state: string;
  may_write: boolean;
  highest_seq: number;
  study_id: number;
  title: string;
  status: string;
  revision: number;
  rel: string | null;
}

function idLiteral(x: number): string {
  if (!Number.isSafeInteger(x)) throw new TypeError(`not an id: ${String(x)}`);
  return String(x);
}

/**
 * BEGIN, then lock the capture row and read what decides whether a COPY may go ahead: the study,
 * the state, who may write, and the highest stored seq. It also names the table that holds the
 * capture's readings (its partition once the capture has rows — a COPY into it skips the parent's
 * tile trigger; found by a primary-key look-up of the highest stored reading, never a scan) and
 * sets `driftbench.tiles` so the trigger steps aside for this transaction (migration 0230). One
 * simple-protocol query: the ids are checked integers, the flag a boolean.
 */
function lockSql(captureId: number, mayWriteAny: boolean, userId: number): string {
  return `BEGIN; SELECT c.state, (${mayWriteAny ? 'true' : 'false'} OR c.operator_id = ${idLiteral(userId)}) AS may_write, c.highest_seq,
     s.id AS study_id, s.title, s.status, s.revision,
     (SELECT r.tableoid::regclass::text FROM readings r WHERE r.capture_id = c.id AND r.seq = c.highest_seq) AS rel,
     set_config('driftbench.tiles', 'caller', true) AS tiles
   FROM captures c JOIN duts d ON d.id = c.dut_id JOIN studies s ON s.id = d.study_id
   WHERE c.id = ${idLiteral(captureId)} FOR NO KEY UPDATE OF c`;
}

/** A number as PostgreSQL reads it back to the same double (shortest round trip; −0 kept). */
const num = (x: number): string => (Object.is(x, -0) ? '-0' : String(x));
const arr = (xs: number[], type: string): string => `'{${xs.map(num).join(',')}}'::${type}[]`;

/**
 * The tile merge of the batches (computed in Node, merged by the trigger's rule: an unchanged
 * tile is not rewritten — server/db/tileMerge.ts), the capture's counters, and COMMIT — one simple-protocol query. Every number is finite
 * (the ingest refuses others) and printed in its shortest round-trip form, which PostgreSQL's
 * float8 input reads back to the same double.
 */
function mergeAndCommitSql(
  captureId: number,
  t: BatchTiles,
  count: number,
  maxSeq: number,
): string {
  const id = idLiteral(captureId);
  return `WITH tiles AS (
     INSERT INTO reading_tiles AS rt (capture_id, level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value)
     SELECT ${id}, u.* FROM unnest(${arr(t.level, 'int2')}, ${arr(t.bucket, 'int')}, ${arr(t.minSeq, 'int')}, ${arr(t.minT, 'float8')},
       ${arr(t.minValue, 'float8')}, ${arr(t.maxSeq, 'int')}, ${arr(t.maxT, 'float8')}, ${arr(t.maxValue, 'float8')})
       AS u(level, bucket, min_seq, min_t, min_value, max_seq, max_t, max_value)
     ${TILE_MERGE_ON_CONFLICT})
   UPDATE captures SET reading_count = reading_count + ${idLiteral(count)}, highest_seq = GREATEST(highest_seq, ${idLiteral(maxSeq)}),
     updated_at = now(), last_reading_at = now(), state = 'open'
   WHERE id = ${id} RETURNING highest_seq; COMMIT`;
}

/**
 * Stores a batch in strictly increasing seq order by COPY, alone or with other batches of the
 * capture that queue at the same time (see the top of this file). Answers null — having changed
 * nothing for this batch — when it must take the one-statement path instead: the capture is
 * missing, not recording, not the user's to write, or already holds a seq at or above the
 * batch's lowest (a resend, an overlap). Rejects, storing none of them, every batch of a
 * transaction that failed (the uploader sends them again).
 *
 * No duplicate can slip in: every writer of a capture's readings holds its row lock while it
 * inserts and moves `highest_seq` in the same transaction, so under the lock no stored seq of the
 * capture exceeds `highest_seq`, and every seq copied is above it and distinct (the batches of a
 * group are disjoint and ascending). Should that ever not hold, the primary key (capture_id, seq)
 * refuses the COPY as a whole, the transaction rolls back, and the batches go the ON CONFLICT DO
 * NOTHING way (null).
 */
export function ingestByCopy(
  pool: pg.Pool,
  captureId: number,
  mayWriteAny: boolean,
  userId: number,
  cols: CopyColumns,
  minSeq: number,
  maxSeq: number,
): Promise<CopyOutcome | null> {
  const { seqs, ts, values, flags } = cols;
  const rows = readingsCopyRows(captureId, seqs, ts, values, flags);
  const tiles = tilesOfBatch(seqs, ts, values);
  return new Promise((done, fail) => {
    const w: Waiting = {
      userId,
      mayWriteAny,
      minSeq,
      maxSeq,
      n: seqs.length,
      rows,
      tiles,
      done,
      fail,
    };
    const queue = queues.get(captureId);
    if (queue) queue.push(w);
    else {
      queues.set(captureId, [w]);
      void drain(pool, captureId);
    }
  });
}

/** Runs the capture's transactions one after another until nothing waits. Never rejects. */
async function drain(pool: pg.Pool, captureId: number): Promise<void> {
  const queue = queues.get(captureId)!;
  try {
    while (queue.length > 0) {
      let client: pg.PoolClient;
      try {
        client = await pool.connect();
      } catch (err) {
        for (const w of queue.splice(0)) w.fail(err);
        break;
      }
      // Taken once the connection is there, so what queued meanwhile joins the group.
      await copyGroup(client, captureId, takeGroup(queue));
    }
  } finally {
    // Synchronously after the last look at the queue: a batch arriving later starts a new drain.
    queues.delete(captureId);
  }
}

/**
 * The next group: the waiting batch with the lowest seq, and after it each one that starts at the
 * seq after the previous one's last, of the same writer, up to {@link MAX_COALESCED_READINGS}.
 */
function takeGroup(queue: Waiting[]): Waiting[] {
  queue.sort((a, b) => a.minSeq - b.minSeq);
  const head = queue[0];
  let k = 1;
  let total = head.n;
  while (
    k < queue.length &&
    queue[k].minSeq === queue[k - 1].maxSeq + 1 &&
    queue[k].userId === head.userId &&
    queue[k].mayWriteAny === head.mayWriteAny &&
    total + queue[k].n <= MAX_COALESCED_READINGS
  ) {
    total += queue[k].n;
    k++;
  }
  return queue.splice(0, k);
}

/** One transaction for a group of batches; answers every one of them. Never rejects. */
async function copyGroup(client: pg.PoolClient, captureId: number, group: Waiting[]) {
  let broken: Error | undefined;
  try {
    const head = group[0];
    const locked = (await client.query(
      lockSql(captureId, head.mayWriteAny, head.userId),
    )) as unknown as pg.QueryResult<CopyLockRow>[];
    const row = locked[1].rows[0];
    if (!row || !isRecording(row.state) || !row.may_write) {
      await client.query('ROLLBACK');
      for (const w of group) w.done(null);
      return;
    }
    if ((LOCKED_STATUSES as readonly string[]).includes(row.status)) {
      throw studyLockedError(
        { id: row.study_id, title: row.title, status: row.status, revision: row.revision },
        'adding readings',
      );
    }
    // The batches wholly above the highest stored seq (a suffix: the group is ascending); those
    // below or overlapping it take the conflict-safe path.
    const k = group.findIndex((w) => w.minSeq > row.highest_seq);
    const late = k < 0 ? group : group.slice(0, k);
    const go = k < 0 ? [] : group.slice(k);
    if (go.length === 0) {
      await client.query('ROLLBACK');
      for (const w of group) w.done(null);
      return;
    }
    try {
      await pipeline(
        Readable.from([COPY_BINARY_HEADER, ...go.map((w) => w.rows), COPY_BINARY_TRAILER]),
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
      for (const w of group) w.done(null);
      return;
    }
    let count = 0;
    for (const w of go) count += w.n;
    const merged = (await client.query(
      mergeAndCommitSql(
        captureId,
        mergeBatchTiles(go.map((w) => w.tiles)),
        count,
        go[go.length - 1].maxSeq,
      ),
    )) as unknown as pg.QueryResult<{ highest_seq: number }>[];
    const highestSeq = merged[0].rows[0].highest_seq;
    copyPathCounts.transactions += 1;
    copyPathCounts.batches += go.length;
    // In seq order, so watchers are told in seq order; a stalled capture's return is told once.
    go.forEach((w, i) => w.done({ state: i === 0 ? row.state : 'open', highestSeq }));
    for (const w of late) w.done(null);
  } catch (err) {
    // A connection that cannot even roll back is not given back to the pool.
    await client.query('ROLLBACK').catch((e: Error) => (broken = e));
    for (const w of group) w.fail(err);
  } finally {
    client.release(broken);
  }
}
