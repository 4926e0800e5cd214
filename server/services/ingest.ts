import type pg from 'pg';
import { AppError, ForbiddenError, NotFoundError, ValidationError } from '../errors.js';
import { findBadReading, type IngestResult, type ReadingIn } from '../../shared/protocol/captures.js';
import type { LiveHub } from '../ws/live.js';
import type { User } from '../models/index.js';

/** Who may add readings to a capture: its operator, or a lead or admin. Viewers never. */
export function canWriteCapture(user: Pick<User, 'id' | 'role'>, operatorId: number | null): boolean {
  if (user.role === 'viewer') return false;
  if (user.role === 'admin' || user.role === 'lead') return true;
  return operatorId === user.id;
}

/**
 * Stores one batch of readings in one transaction, idempotently by (capture, seq): a resent or
 * reordered batch never duplicates. Arrays travel as four parameters and are unnested by
 * PostgreSQL, so a batch of 20,000 readings is one statement.
 */
export async function ingestReadings(
  pool: pg.Pool,
  hub: LiveHub,
  user: Pick<User, 'id' | 'role'>,
  captureId: number,
  body: unknown,
): Promise<IngestResult> {
  const readings = (body as { readings?: unknown } | null)?.readings;
  const bad = findBadReading(readings);
  if (bad) {
    throw new ValidationError(
      bad.index >= 0 ? `readings[${bad.index}]: ${bad.reason}` : bad.reason,
      { index: bad.index, reason: bad.reason },
    );
  }
  const list = readings as ReadingIn[];
  const n = list.length;
  const seqs = new Array<number>(n);
  const ts = new Array<number>(n);
  const values = new Array<number>(n);
  const flags = new Array<number>(n);
  let maxSeq = -1;
  for (let i = 0; i < n; i++) {
    const r = list[i];
    seqs[i] = r.seq;
    ts[i] = r.t;
    values[i] = r.value;
    flags[i] = r.flags ?? 0;
    if (r.seq > maxSeq) maxSeq = r.seq;
  }
  const watched = hub.hasWatchers(captureId);

  const client = await pool.connect();
  let inserted: number[] | null = null;
  let accepted = 0;
  let highestSeq = -1;
  try {
    await client.query('BEGIN');
    const cap = await client.query<{ state: string; operator_id: number | null; highest_seq: number }>(
      'SELECT state, operator_id, highest_seq FROM captures WHERE id = $1 FOR NO KEY UPDATE',
      [captureId],
    );
    if (cap.rowCount === 0) throw new NotFoundError('Capture');
    const row = cap.rows[0];
    if (!canWriteCapture(user, row.operator_id)) throw new ForbiddenError('Only the capture\'s operator, a lead or an admin may add readings.');
    if (row.state !== 'open') throw new AppError(409, 'capture-finished', 'This capture is finished: it takes no more readings.');
    if (n > 0) {
      const res = await client.query<{ seq: number }>(
        `INSERT INTO readings (capture_id, seq, t, value, flags)
         SELECT $1, s, t, v, f FROM unnest($2::int[], $3::float8[], $4::float8[], $5::int2[]) AS u(s, t, v, f)
         ON CONFLICT DO NOTHING${watched ? ' RETURNING seq' : ''}`,
        [captureId, seqs, ts, values, flags],
      );
      accepted = res.rowCount ?? 0;
      if (watched) inserted = res.rows.map((r) => r.seq);
    }
    highestSeq = Math.max(row.highest_seq, maxSeq);
    if (accepted > 0) {
      await client.query('UPDATE captures SET reading_count = reading_count + $2, highest_seq = $3, updated_at = now() WHERE id = $1', [
        captureId,
        accepted,
        highestSeq,
      ]);
    }
    await client.query('COMMIT');
  } catch (err) {
    await client.query('ROLLBACK').catch(() => {});
    throw err;
  } finally {
    client.release();
  }

  if (watched && inserted && inserted.length) {
    const fresh = new Set(inserted);
    hub.publishReadings(
      captureId,
      list.filter((r) => fresh.delete(r.seq)).map((r) => ({ seq: r.seq, t: r.t, value: r.value, flags: r.flags ?? 0 })),
    );
  }
  return { accepted, duplicates: n - accepted, highestSeq };
}
