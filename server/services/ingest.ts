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
import { assertCaptureWritable } from './studyLock.js';
import { float8Array, int2Array, int4Array } from '../db/binaryArrays.js';
import { decodeReadingsF64 } from '../../shared/protocol/readingsBinary.js';
import { audit } from './audit.js';
import { isRecording } from '../../shared/protocol/captureLifecycle.js';

interface IngestRow {
  state: string;
  may_write: boolean;
  fits: boolean;
  highest_seq: number;
  accepted: number;
  seqs: number[] | null;
}

/**
 * The ingest statement. `conflictSafe` inserts with ON CONFLICT DO NOTHING; otherwise the insert
 * runs only when every seq of the batch ($9 = lowest) lies above the capture's highest stored seq.
 */
function ingestSql(conflictSafe: boolean, returnSeqs: boolean): string {
  return `WITH cap AS (
       SELECT id, state, ($6::boolean OR operator_id = $7) AS may_write, highest_seq, highest_seq < $9 AS fits
       FROM captures WHERE id = $1 FOR NO KEY UPDATE),
     ins AS (
       INSERT INTO readings (capture_id, seq, t, value, flags)
       SELECT $1, u.s, u.t, u.v, u.f FROM unnest($2::int[], $3::float8[], $4::float8[], $5::int2[]) AS u(s, t, v, f)
       WHERE EXISTS (SELECT 1 FROM cap WHERE state IN ('open', 'stalled') AND may_write${conflictSafe ? '' : ' AND fits'})
       ${conflictSafe ? 'ON CONFLICT DO NOTHING ' : ''}RETURNING seq),
     counted AS (SELECT count(*)::int AS accepted FROM ins),
     upd AS (
       UPDATE captures c SET reading_count = c.reading_count + counted.accepted,
         highest_seq = GREATEST(c.highest_seq, $8), updated_at = now(), last_reading_at = now(), state = 'open'
       FROM counted WHERE c.id = $1 AND counted.accepted > 0
       RETURNING c.highest_seq)
     SELECT cap.state, cap.may_write, cap.fits, COALESCE((SELECT highest_seq FROM upd), cap.highest_seq) AS highest_seq,
       (SELECT accepted FROM counted) AS accepted,
       ${returnSeqs ? '(SELECT array_agg(seq) FROM ins)' : 'NULL::int[]'} AS seqs
     FROM cap`;
}

/** Running plausibility windows of the captures being recorded now (one server process). */
const windows = new Map<number, PlausibilityWindow>();
const MAX_WINDOWS = 256;

/** The plausibility window of a capture, seeded from its nominal and its latest accepted readings. */
async function plausibilityFor(pool: pg.Pool, captureId: number): Promise<PlausibilityWindow> {
  const hit = windows.get(captureId);
  if (hit) {
    windows.delete(captureId);
    windows.set(captureId, hit);
    return hit;
  }
  const res = await pool.query<{ nominal: number | null; recent: number[] | null }>(
    `SELECT c.nominal, (SELECT array_agg(v ORDER BY s) FROM (SELECT seq AS s, value AS v FROM readings
        WHERE capture_id = c.id AND flags = 0 ORDER BY seq DESC LIMIT $2) r) AS recent
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
  await assertCaptureWritable(pool, captureId, 'adding readings');
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
  if (
    !res ||
    (res.rows[0] && isRecording(res.rows[0].state) && res.rows[0].may_write && !res.rows[0].fits)
  ) {
    res = await pool.query<IngestRow>(ingestSql(true, watched), params);
  }
  if (res.rowCount === 0) throw new NotFoundError('Capture');
  const row = res.rows[0];
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
  if (row.state === 'stalled' && accepted > 0) {
    await audit(user.id, 'capture.resume', 'capture', captureId, {
      state: { from: 'stalled', to: 'open' },
      readings: accepted,
    });
    hub.publishState(captureId, 'open');
  }

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
